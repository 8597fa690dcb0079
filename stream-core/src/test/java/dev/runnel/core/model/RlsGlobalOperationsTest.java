package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayOutputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Random;
import org.apache.commons.math3.linear.Array2DRowRealMatrix;
import org.apache.commons.math3.linear.ArrayRealVector;
import org.apache.commons.math3.linear.LUDecomposition;
import org.apache.commons.math3.linear.RealMatrix;
import org.apache.commons.math3.linear.RealVector;
import org.junit.jupiter.api.Test;

/**
 * The operations of {@link RlsModel} that the global model uses ({@link RlsModel#addRows},
 * {@link RlsModel#downdate}, {@link RlsModel#sqrtInformation}), on a model without prior, against
 * weighted least squares over the rows it holds, solved with Commons Math's
 * {@link LUDecomposition}: the weights, the minimum of the objective ({@code rho^2}, plus the
 * added rows' own residual sum at their weight) and the effective sample size. Each is asked with a
 * re-basing still pending, so the rows given are in the new basis; and their arguments are
 * checked at the ends of their ranges.
 */
class RlsGlobalOperationsTest {

  static final ModelSettings PLAIN =
      ModelSettings.defaults().withPriorVariance(ModelSettings.DIFFUSE).withWindupGuard(false);

  /** Rows with weights, moved to a new basis with {@link #rebase} as {@link RlsModel#columnRebased} says. */
  static final class Ref {
    final List<double[]> x = new ArrayList<>();
    final List<Double> y = new ArrayList<>();
    final List<Double> w = new ArrayList<>();
    double extra; // residual sums added from outside, at their weight

    void add(double[] row, double target, double weight) {
      x.add(row.clone());
      y.add(target);
      w.add(weight);
    }

    void rebase(int k, double sc, double shift) {
      for (double[] r : x) {
        r[k] = (r[k] - shift * r[0]) / sc;
      }
    }

    RealVector theta() {
      int p = x.get(0).length;
      RealMatrix a = new Array2DRowRealMatrix(p, p);
      RealVector b = new ArrayRealVector(p);
      for (int i = 0; i < x.size(); i++) {
        for (int r = 0; r < p; r++) {
          b.addToEntry(r, w.get(i) * x.get(i)[r] * y.get(i));
          for (int c = 0; c < p; c++) {
            a.addToEntry(r, c, w.get(i) * x.get(i)[r] * x.get(i)[c]);
          }
        }
      }
      return new LUDecomposition(a).getSolver().solve(b);
    }

    double rho2() {
      RealVector t = theta();
      double s = extra;
      for (int i = 0; i < x.size(); i++) {
        double e = y.get(i) - t.dotProduct(new ArrayRealVector(x.get(i)));
        s += w.get(i) * e * e;
      }
      return s;
    }
  }

  static void agree(RlsModel m, Ref ref, double n, String where) {
    double[] w = new double[m.dimension()];
    m.weights(w);
    RealVector t = ref.theta();
    for (int j = 0; j < w.length; j++) {
      assertEquals(t.getEntry(j), w[j], 1e-9 * (1 + Math.abs(t.getEntry(j))), where + ": weight " + j);
    }
    double rho2 = ref.rho2();
    assertEquals(rho2, m.weightedResidualSumOfSquares(), 1e-9 * rho2, where + ": rho^2");
    assertEquals(n, m.effectiveSampleSize(), 1e-12 * n, where + ": n_eff");
  }

  static byte[] bytes(RlsModel m) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    m.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  /** A model without prior and its reference after {@code n} rows of weight 1. */
  static RlsModel learned(Ref ref, Random rnd, int n) {
    RlsModel m = new RlsModel(3, PLAIN);
    for (int i = 0; i < n; i++) {
      double[] x = {1, 5 + 2 * rnd.nextGaussian(), rnd.nextGaussian()};
      double y = 1 + 0.5 * x[1] - x[2] + 0.3 * rnd.nextGaussian();
      assertTrue(m.update(x, y, 1.0));
      ref.add(x, y, 1.0);
    }
    return m;
  }

  @Test
  void addedRowsCountAtTheirWeightInTheBasisOfAPendingReBasing() {
    Random rnd = new Random(1);
    Ref ref = new Ref();
    RlsModel m = learned(ref, rnd, 2); // two rows: three columns are not determined yet
    assertFalse(m.ready());
    m.columnRebased(1, 2.0, 2.5); // pending: the added rows are in the new basis
    ref.rebase(1, 2.0, 2.5);
    double[][] rows = new double[4][];
    double[] targets = new double[4];
    for (int k = 0; k < 4; k++) {
      rows[k] = new double[] {1 + k % 2, rnd.nextGaussian(), rnd.nextGaussian()};
      targets[k] = rnd.nextGaussian();
      ref.add(rows[k], targets[k], 0.7);
    }
    ref.extra = 0.7 * 1.5;
    assertTrue(m.addRows(rows, targets, 4, 0.7, 1.5, 6.0));
    assertTrue(m.ready(), "without prior, rows that determine every column make the model ready");
    agree(m, ref, 2 + 0.7 * 6.0, "after addRows");
    // only the first count rows are added
    double[][] more = {{1, 0.5, -1}, {Double.NaN, 0, 0}};
    assertTrue(m.addRows(more, new double[] {2.0, Double.NaN}, 1, 2.0, 0.0, 0.0));
    ref.add(more[0], 2.0, 2.0);
    agree(m, ref, 2 + 0.7 * 6.0, "one of two rows");
  }

  @Test
  void addRowsRefusesItsArgumentsAndRowsOutOfRange() throws IOException {
    Random rnd = new Random(2);
    RlsModel m = learned(new Ref(), rnd, 10);
    double[][] one = {{1, 2, 3}};
    double[] t = {1};
    for (double w : new double[] {0.0, -1.0, Double.POSITIVE_INFINITY, Double.NaN}) {
      IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> m.addRows(one, t, 1, w, 0, 0));
      assertTrue(e.getMessage().contains("weight"), e.getMessage());
    }
    for (double r : new double[] {-1e-300, Double.POSITIVE_INFINITY, Double.NaN}) {
      IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> m.addRows(one, t, 1, 1, r, 0));
      assertTrue(e.getMessage().contains("residualSumOfSquares"), e.getMessage());
      IllegalArgumentException f = assertThrows(IllegalArgumentException.class, () -> m.addRows(one, t, 1, 1, 0, r));
      assertTrue(f.getMessage().contains("sampleSize"), f.getMessage());
    }
    IllegalArgumentException s = assertThrows(IllegalArgumentException.class,
        () -> m.addRows(new double[][] {{1, 2}}, t, 1, 1, 0, 0));
    assertTrue(s.getMessage().contains("vector length"), s.getMessage());
    byte[] before = bytes(m);
    // a NaN, and entries within 1e100 that exceed it at their weight (2^14: sqrt 128)
    assertFalse(m.addRows(new double[][] {{1, Double.NaN, 0}}, t, 1, 1, 0, 0));
    assertFalse(m.addRows(new double[][] {{1, 0, 0}, {1, 1e99, 0}}, new double[] {1, 1}, 2, 0x1p14, 0, 0));
    assertFalse(m.addRows(new double[][] {{1, 0, 0}}, new double[] {1e99}, 1, 0x1p14, 0, 0));
    assertArrayEquals(before, bytes(m), "a refused call changed the model");
    // the ends that are accepted: a residual sum and a sample size of 0, the entries at weight 1
    assertTrue(m.addRows(new double[][] {{1, 1e99, 0}}, new double[] {1e99}, 1, 1.0, 0.0, 0.0));
  }

  @Test
  void downdateRemovesARowGivenInTheBasisOfAPendingReBasing() {
    Random rnd = new Random(3);
    Ref ref = new Ref();
    RlsModel m = learned(ref, rnd, 12);
    m.columnRebased(1, 0.5, 4.0);
    ref.rebase(1, 0.5, 4.0);
    double[] gone = ref.x.get(5).clone();
    double y = ref.y.get(5);
    assertTrue(m.downdate(gone, y, 1.0)); // weight 1: the end of the range
    ref.x.remove(5);
    ref.y.remove(5);
    ref.w.remove(5);
    agree(m, ref, 11, "after downdate");
  }

  @Test
  void rowsWhoseSquaresUnderflowAreStillAdded() {
    // entries of 1e-170: their squares (1e-340) underflow to 0, so a rotation's length must be
    // found without squaring; the weights are still the targets over the entries: 2 and -3
    RlsModel m = new RlsModel(2, PLAIN);
    double[][] rows = {{1e-170, 0}, {0, 1e-170}};
    assertTrue(m.addRows(rows, new double[] {2e-170, -3e-170}, 2, 1.0, 0.0, 2.0));
    assertTrue(m.ready());
    double[] w = new double[2];
    m.weights(w);
    assertEquals(2.0, w[0], 1e-12);
    assertEquals(-3.0, w[1], 1e-12);
  }

  @Test
  void downdateRefusesItsArguments() throws IOException {
    Random rnd = new Random(4);
    Ref ref = new Ref();
    RlsModel m = learned(ref, rnd, 4);
    for (double w : new double[] {0.0, -0.5, 1.0 + 1e-12, Double.NaN}) {
      IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
          () -> m.downdate(ref.x.get(0), ref.y.get(0), w));
      assertTrue(e.getMessage().contains("weight must be in (0, 1]"), e.getMessage());
    }
    IllegalArgumentException s = assertThrows(IllegalArgumentException.class, () -> m.downdate(new double[2], 0, 1));
    assertTrue(s.getMessage().contains("vector length"), s.getMessage());
    assertTrue(m.downdate(ref.x.get(3), ref.y.get(3), 1.0));
    assertEquals(3.0, m.effectiveSampleSize(), 1e-12);
    // each of three rows over three columns now has leverage 1: removing one whole would leave
    // the information singular, which is refused (to the margin of 1e-12), the model unchanged
    byte[] before = bytes(m);
    assertFalse(m.downdate(ref.x.get(2), ref.y.get(2), 1.0));
    assertArrayEquals(before, bytes(m));
    assertTrue(m.downdate(ref.x.get(2), ref.y.get(2), 0.5));
    assertEquals(2.5, m.effectiveSampleSize(), 1e-12);
  }

  @Test
  void downdateAndAColumnWithoutInformation() throws IOException {
    Random rnd = new Random(6);
    Ref ref = new Ref();
    RlsModel m = learned(ref, rnd, 8);
    m.columnAdded(3, "level", true); // no prior: the new column has no information
    byte[] before = bytes(m);
    // a row that has the column cannot have been learned: refused, nothing changed
    assertFalse(m.downdate(new double[] {1, 5, 0, 1}, 1.0, 1.0));
    assertFalse(m.downdate(new double[] {1, Double.NaN, 0, 0}, 1.0, 1.0));
    assertArrayEquals(before, bytes(m));
    // a row without it is removed; the information is X^T X of the other rows, 0 in the new column
    double[] gone = Arrays.copyOf(ref.x.get(4), 4);
    assertTrue(m.downdate(gone, ref.y.get(4), 1.0));
    ref.x.remove(4);
    ref.y.remove(4);
    double[] info = m.informationMatrix();
    for (int a = 0; a < 4; a++) {
      for (int b = 0; b < 4; b++) {
        double want = 0;
        for (double[] x : ref.x) {
          want += (a < 3 ? x[a] : 0) * (b < 3 ? x[b] : 0);
        }
        assertEquals(want, info[a * 4 + b], 1e-9 * (1 + Math.abs(want)), "(" + a + ", " + b + ")");
      }
    }
    assertEquals(7.0, m.effectiveSampleSize(), 1e-12);
  }

  @Test
  void aModelWithoutPriorIsNoLongerReadyWhenADowndateLeavesADirectionBelowTheTolerance() {
    // pivots 1e4 and 1e-4 (ratio 1e-8, above READY_TOLERANCE 1e-13); removing all but 1e-11 of
    // the second row leaves a pivot of about 1e-4 * sqrt(1e-11), a ratio of about 3e-14
    RlsModel m = new RlsModel(2, PLAIN);
    assertTrue(m.update(new double[] {1e4, 0}, 1.0, 1.0));
    assertTrue(m.update(new double[] {0, 1e-4}, 1.0, 1.0));
    assertTrue(m.ready());
    assertTrue(m.downdate(new double[] {0, 1e-4}, 1.0, 1.0 - 1e-11));
    assertFalse(m.ready(), "a direction with 1e-11 of its information left is not determined");
    assertTrue(Double.isNaN(m.predict(new double[] {1, 1})));
  }

  @Test
  void theSquareRootInformationIsTheInformationInTheNewBasis() {
    Random rnd = new Random(5);
    Ref ref = new Ref();
    RlsModel m = learned(ref, rnd, 15);
    m.columnRebased(2, 3.0, -1.0);
    ref.rebase(2, 3.0, -1.0);
    double[][] rows = new double[3][4];
    for (double[] r : rows) {
      Arrays.fill(r, Double.NaN);
    }
    double[] u = new double[3];
    int[] cols = new int[3];
    assertEquals(3, m.sqrtInformation(rows, u, cols));
    // sum_i row_i row_i^T against X^T X over the rows in the new basis, in layout order
    for (int a = 0; a < 3; a++) {
      for (int b = 0; b < 3; b++) {
        double want = 0;
        for (double[] x : ref.x) {
          want += x[a] * x[b];
        }
        double got = 0;
        double gotEta = 0;
        for (int i = 0; i < 3; i++) {
          double ra = 0;
          double rb = 0;
          for (int q = 0; q < 3; q++) {
            if (cols[q] == a) {
              ra = rows[i][q];
            }
            if (cols[q] == b) {
              rb = rows[i][q];
            }
          }
          got += ra * rb;
          gotEta += ra * u[i];
        }
        assertEquals(want, got, 1e-9 * Math.abs(want) + 1e-9, "(" + a + ", " + b + ")");
        double eta = 0;
        for (int k = 0; k < ref.x.size(); k++) {
          eta += ref.x.get(k)[a] * ref.y.get(k);
        }
        assertEquals(eta, gotEta, 1e-9 * (1 + Math.abs(eta)), "eta " + a);
      }
    }
  }
}
