package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Random;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;

/**
 * At every step of a seeded stream with forgetting, added and removed columns and re-basings,
 * the model's weights equal the exponentially weighted ridge solution solved from scratch by
 * EJML's QR least squares (EJML as reference), over every row ever added.
 */
class ReferenceSolutionTest extends LeastSquaresReference {

  private static final double LAMBDA = 0.99;
  private static final double PRIOR_VARIANCE = 10.0;
  /**
   * Rows whose weight fell below this are left out of the reference: each adds at most 1e-13 of
   * its own (unit-scale) information, so leaving it out moves the solution by at most about
   * 1e-13 times the condition number of the information (below 1e3 here), far below the 1e-8
   * tolerance.
   */
  private static final double DROP_WEIGHT = 1e-13;


  // "slow" (6 s): mutation runs leave it out; RebaseLayoutReferenceTest checks the same in a short stream
  @Tag("slow")
  @ParameterizedTest(name = "windup guard {0}")
  @ValueSource(booleans = {true, false})
  void weightsEqualWeightedRidgeSolutionAtEveryStep(boolean guard) {
    Random rnd = new Random(20261201L);
    ModelSettings s = ModelSettings.defaults().withPriorVariance(PRIOR_VARIANCE).withWindupGuard(guard);
    int p0 = 3;
    RlsModel model = new RlsModel(p0, s);
    for (int j = 0; j < p0; j++) {
      live.add(ids++);
    }
    priorRows(model, p0, PRIOR_VARIANCE);
    double[] x = new double[16];
    double[] theta = new double[16];
    int adds = 0;
    int removes = 0;
    int rebases = 0;
    for (int step = 0; step < 5000; step++) {
      double u = rnd.nextDouble();
      if (u < 0.004 && model.dimension() < 7) {
        live.add(ids++);
        model.columnAdded(model.dimension(), "c" + ids);
        adds++;
      } else if (u < 0.008 && model.dimension() > 2) {
        int k = 1 + rnd.nextInt(model.dimension() - 1);
        live.remove(k);
        model.columnRemoved(k);
        removes++;
      } else if (u < 0.06) {
        int k = 1 + rnd.nextInt(model.dimension() - 1);
        double scale = Math.exp(rnd.nextGaussian() * 0.5);
        double shift = rnd.nextGaussian();
        rebase(k, scale, shift);
        model.columnRebased(k, scale, shift);
        rebases++;
      }
      int p = model.dimension();
      x[0] = 1.0;
      double y = 0.5;
      for (int j = 1; j < p; j++) {
        x[j] = rnd.nextDouble() < 0.3 ? 0.0 : rnd.nextGaussian();
        y += (j % 3 - 1) * x[j];
      }
      y += 0.1 * rnd.nextGaussian();
      for (Row r : rows) {
        r.weight *= LAMBDA;
      }
      rows.removeIf(r -> r.weight < DROP_WEIGHT);
      Row data = newRow(y, true);
      double[] a = entries(data);
      for (int j = 0; j < p; j++) {
        a[live.get(j)] = x[j];
      }
      assertTrue(model.update(x, y, LAMBDA));
      double[] ref = new double[ids];
      referenceSolution(ref);
      model.weights(theta);
      double norm = 0.0;
      double diff = 0.0;
      for (int j = 0; j < p; j++) {
        double rj = ref[live.get(j)];
        norm = Math.max(norm, Math.abs(rj));
        diff = Math.max(diff, Math.abs(theta[j] - rj));
      }
      assertTrue(diff <= 1e-8 * norm, "step " + step + ": max |theta - reference| " + diff + " vs max |ref| " + norm);
    }
    assertTrue(adds >= 5 && removes >= 5 && rebases >= 100, "the stream exercised the layout: " + adds + " adds, "
        + removes + " removes, " + rebases + " rebases");
  }

  /**
   * Re-expresses every stored row in the new basis. With theta' = T theta
   * (T_kk = scale, T_0k = shift), a prediction x^T theta is kept when x'^T = x^T T^-1, i.e.
   * row' = row T^-1 with (T^-1)_kk = 1/scale and (T^-1)_0k = -shift/scale: only entry k changes,
   * a'_k = (a_k - shift a_0) / scale. (As a map on column vectors, row' = A row with
   * A = T^-T; the same map the model applies to its factor, R' = R T^-1.)
   */
  void rebase(int k, double scale, double shift) {
    int idK = live.get(k);
    int id0 = live.get(0);
    for (Row r : rows) {
      double[] a = entries(r);
      a[idK] = (a[idK] - shift * a[id0]) / scale;
    }
  }}
