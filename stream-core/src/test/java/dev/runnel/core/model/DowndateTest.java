package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayOutputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * {@link RlsModel#downdate} removes one earlier data row exactly: in a seeded stream with
 * forgetting, one-hot style (leading-block) and re-based columns added, columns removed and
 * re-basings, rows learned earlier are removed again at their decayed weight and in today's basis,
 * and the weights and the weighted residual sum of squares equal the from-scratch weighted
 * least-squares solution without those rows, solved by EJML's Householder QR (EJML as reference).
 */
class DowndateTest extends LeastSquaresReference {

  private static final double LAMBDA = 0.995;
  private static final double PRIOR_VARIANCE = 10.0;

  final List<Boolean> rebasable = new ArrayList<>();

  @Test
  void removingEarlierRowsMatchesTheFromScratchSolutionWithoutThem() {
    int[] done = run(true, false);
    assertTrue(done[0] >= 40, "downdates checked: " + done[0]);
    assertTrue(done[1] >= 3 && done[2] >= 3 && done[3] >= 50, "the layout moved: adds " + done[1] + ", removes " + done[2] + ", rebases " + done[3]);
  }

  @Test
  void withTheGuardOnToo() {
    int[] done = run(true, true);
    assertTrue(done[0] >= 40, "downdates checked: " + done[0]);
  }

  /**
   * The check can fail: removing the row at its weight when learned (1), ignoring what forgetting
   * has taken since, leaves the solution measurably off the reference.
   */
  @Test
  void ignoringTheDecayIsCaught() {
    int[] done = run(false, false);
    assertTrue(done[4] >= 10, "downdates with the undecayed weight that missed the reference: " + done[4] + " of " + done[0]);
  }

  /** @return downdates checked, adds, removes, rebases, downdates off the reference */
  int[] run(boolean decayedWeight, boolean guard) {
    rows.clear();
    live.clear();
    rebasable.clear();
    ids = 0;
    Random rnd = new Random(20261205L);
    ModelSettings s = ModelSettings.defaults().withPriorVariance(PRIOR_VARIANCE).withWindupGuard(guard);
    int p0 = 3;
    RlsModel model = new RlsModel(p0, s);
    for (int j = 0; j < p0; j++) {
      live.add(ids++);
      rebasable.add(j > 0);
    }
    priorRows(model, p0, PRIOR_VARIANCE);
    double[] x = new double[16];
    int[] out = new int[5];
    for (int step = 0; step < 1500; step++) {
      double u = rnd.nextDouble();
      if (u < 0.006 && model.dimension() < 8) {
        boolean level = rnd.nextBoolean();
        live.add(ids++);
        rebasable.add(!level);
        model.columnAdded(model.dimension(), "c" + ids, level);
        out[1]++;
      } else if (u < 0.012 && model.dimension() > 2) {
        int k = 1 + rnd.nextInt(model.dimension() - 1);
        live.remove(k);
        rebasable.remove(k);
        model.columnRemoved(k);
        out[2]++;
      } else if (u < 0.08) {
        int k = 1 + rnd.nextInt(model.dimension() - 1);
        if (rebasable.get(k)) {
          double scale = Math.exp(rnd.nextGaussian() * 0.3);
          double shift = rnd.nextGaussian() * 0.5;
          int idK = live.get(k);
          int id0 = live.get(0);
          for (Row r : rows) {
            double[] a = entries(r);
            a[idK] = (a[idK] - shift * a[id0]) / scale;
          }
          model.columnRebased(k, scale, shift);
          out[3]++;
        }
      }
      int p = model.dimension();
      x[0] = 1.0;
      double y = 0.5;
      for (int j = 1; j < p; j++) {
        x[j] = rebasable.get(j) ? (rnd.nextDouble() < 0.3 ? 0.0 : rnd.nextGaussian()) : (rnd.nextDouble() < 0.5 ? 1.0 : 0.0);
        y += (j % 3 - 1) * x[j];
      }
      y += 0.1 * rnd.nextGaussian();
      for (Row r : rows) {
        r.weight *= LAMBDA;
      }
      Row data = newRow(y, true);
      double[] a = entries(data);
      for (int j = 0; j < p; j++) {
        a[live.get(j)] = x[j];
      }
      assertTrue(model.update(x, y, LAMBDA));
      if (step > 50 && step % 25 == 0) {
        // remove a data row learned earlier (up to about 300 records back), written in today's layout
        Row victim = pickRemovable(rnd);
        if (victim == null) {
          continue;
        }
        double[] xv = new double[p];
        for (int j = 0; j < p; j++) {
          xv[j] = entries(victim)[live.get(j)];
        }
        assertTrue(model.downdate(xv, victim.y, decayedWeight ? victim.weight : 1.0), "downdate at step " + step);
        rows.remove(victim);
        out[0]++;
        double[] ref = new double[ids];
        double refRss = referenceSolution(ref);
        double[] theta = new double[p];
        model.weights(theta);
        double norm = 0.0;
        double diff = 0.0;
        for (int j = 0; j < p; j++) {
          double rj = ref[live.get(j)];
          norm = Math.max(norm, Math.abs(rj));
          diff = Math.max(diff, Math.abs(theta[j] - rj));
        }
        double rssDiff = Math.abs(model.weightedResidualSumOfSquares() - refRss);
        if (decayedWeight) {
          assertTrue(diff <= 1e-9 * norm, "step " + step + ": max |theta - reference| " + diff + " vs max |ref| " + norm);
          assertTrue(rssDiff <= 1e-9 * refRss, "step " + step + ": residual sum of squares " + model.weightedResidualSumOfSquares() + " vs reference " + refRss);
        } else if (diff > 1e-6 * norm) {
          out[4]++;
        }
      }
    }
    return out;
  }

  /** A data row between 20 and 300 records old whose columns all still exist. */
  Row pickRemovable(Random rnd) {
    List<Row> data = new ArrayList<>();
    for (Row r : rows) {
      if (r.data) {
        data.add(r);
      }
    }
    for (int tries = 0; tries < 20; tries++) {
      int back = 20 + rnd.nextInt(280);
      if (back >= data.size()) {
        continue;
      }
      Row r = data.get(data.size() - 1 - back);
      boolean ok = true;
      double[] a = entries(r);
      for (int id = 0; id < ids; id++) {
        ok &= a[id] == 0.0 || live.contains(id);
      }
      if (ok) {
        return r;
      }
    }
    return null;
  }

  /** A row that was never learned (its removal would leave the information indefinite) is refused, and the state is unchanged. */
  @Test
  void aRowThatIsNotInTheModelIsRefusedAndChangesNothing() throws IOException {
    RlsModel m = new RlsModel(2, ModelSettings.defaults().withPriorVariance(1.0));
    double[] x = {1.0, 0.5};
    assertTrue(m.update(x, 2.0, 1.0));
    byte[] before = bytes(m);
    assertFalse(m.downdate(new double[] {1.0, 40.0}, 3.0, 1.0), "far more information than the model holds");
    assertEquals(Arrays.toString(before), Arrays.toString(bytes(m)));
    assertTrue(m.downdate(x, 2.0, 1.0), "the row it learned can be removed");
    // back to the prior: weights 0
    double[] theta = new double[2];
    m.weights(theta);
    assertEquals(0.0, theta[0], 1e-12);
    assertEquals(0.0, theta[1], 1e-12);
  }

  static byte[] bytes(RlsModel m) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    m.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }
}
