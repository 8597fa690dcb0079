package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayOutputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.function.Consumer;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.factory.LinearSolverFactory_DDRM;
import org.ejml.interfaces.linsol.LinearSolverDense;
import org.junit.jupiter.api.Test;

/**
 * The model at its edges: diffuse readiness through layout changes (against an EJML least-squares
 * solve once ready), the rare path for squares that underflow, the limits of every argument and
 * input, and the residual sd at zero degrees of freedom.
 */
class ModelEdgesTest {

  static final ModelSettings DIFFUSE = ModelSettings.defaults().withPriorVariance(ModelSettings.DIFFUSE);

  static byte[] bytes(RlsModel m) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    m.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  /** Ordinary least squares of y on the rows' first p entries (EJML's QR, as reference). */
  static double[] ols(double[][] rows, double[] y, int n, int p) {
    DMatrixRMaj a = new DMatrixRMaj(n, p);
    DMatrixRMaj b = new DMatrixRMaj(n, 1);
    for (int i = 0; i < n; i++) {
      for (int j = 0; j < p; j++) {
        a.set(i, j, rows[i][j]);
      }
      b.set(i, 0, y[i]);
    }
    LinearSolverDense<DMatrixRMaj> s = LinearSolverFactory_DDRM.leastSquares(n, p);
    assertTrue(s.setA(a));
    DMatrixRMaj x = new DMatrixRMaj(p, 1);
    s.solve(b, x);
    return x.data.clone();
  }

  static void assertNotReady(RlsModel m, String when) {
    assertFalse(m.ready(), when);
    double[] x = new double[8];
    double[] out = {0, 0};
    m.forecast(x, out);
    assertTrue(Double.isNaN(out[0]) && Double.isNaN(out[1]), when + ": forecast NaN");
    assertTrue(Double.isNaN(m.predict(x)) && Double.isNaN(m.leverage(x)), when + ": predict and leverage NaN");
    double[] w = new double[8];
    m.weights(w);
    assertTrue(Double.isNaN(w[0]), when + ": weights NaN");
    assertTrue(Double.isNaN(m.unscaledCovariance()[0]), when + ": covariance NaN");
    double[] se = new double[8];
    m.standardErrors(se);
    assertTrue(Double.isNaN(se[0]), when + ": standard errors NaN");
  }

  @Test
  void settingsAtTheirLimits() {
    ModelSettings d = ModelSettings.defaults();
    for (double bad : new double[] {0.0, -1.0, Double.NaN}) {
      assertThrows(IllegalArgumentException.class, () -> d.withPriorVariance(bad));
      assertThrows(IllegalArgumentException.class, () -> d.withNoiseHalfLifeRecords(bad));
      IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> d.withIntervalZ(bad));
      assertTrue(e.getMessage().startsWith("intervalZ: " + bad + " is not allowed"), e.getMessage());
    }
    assertThrows(IllegalArgumentException.class, () -> d.withIntervalZ(Double.POSITIVE_INFINITY));
    assertEquals(Double.POSITIVE_INFINITY, d.withNoiseHalfLifeRecords(Double.POSITIVE_INFINITY).noiseHalfLifeRecords());
    assertEquals(Double.MIN_VALUE, d.withIntervalZ(Double.MIN_VALUE).intervalZ());
    for (double bad : new double[] {0.0, 1.0, -0.1, Double.NaN}) {
      IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> ModelSettings.zForLevel(bad));
      assertTrue(e.getMessage().contains("model.interval_level"), e.getMessage());
    }
    for (double bad : new double[] {0.0, 1.0, Double.NaN}) {
      assertThrows(IllegalArgumentException.class, () -> NormalQuantile.inverseCdf(bad));
    }
    assertEquals(0.0, NormalQuantile.inverseCdf(0.5), "the median is +0.0, not -0.0");
    assertEquals(Double.doubleToRawLongBits(0.0), Double.doubleToRawLongBits(NormalQuantile.inverseCdf(0.5)));
  }

  @Test
  void noColumnsAtAll_updatesWithTheGuardAndStaysReadyDiffuse() {
    RlsModel guarded = new RlsModel(0, ModelSettings.defaults().withConstantTerm(false));
    assertTrue(guarded.update(new double[0], 1.0, 0.99), "no column to refresh");
    RlsModel diffuse = new RlsModel(0, DIFFUSE.withConstantTerm(false));
    assertTrue(diffuse.update(new double[0], 1.0, 1.0));
    assertTrue(diffuse.ready(), "nothing to identify");
  }

  @Test
  void aPivotBelowTheReadyTolerance_isRankDeficient() {
    // pivots 1e6 and 1e-8: 1e-8 < READY_TOLERANCE (1e-13) x 1e6 = 1e-7, numerically rank deficient
    RlsModel m = new RlsModel(2, DIFFUSE.withConstantTerm(false));
    assertTrue(m.update(new double[] {1e6, 0}, 1.0, 1.0));
    assertTrue(m.update(new double[] {0, 1e-8}, 1.0, 1.0));
    assertNotReady(m, "a pivot of 1e-14 of the largest");
    m.columnAdded(2, "c", false);
    m.columnRemoved(2);
    assertNotReady(m, "still, after a removal");
    assertTrue(m.update(new double[] {0, 1.0}, 1.0, 1.0));
    assertTrue(m.ready(), "a pivot of 1e-6 of the largest");
  }

  /**
   * Without a constant term the first column after the leading block can be removed: the model
   * with a level in the leading block and the model with it in layout order agree afterwards.
   */
  @Test
  void withoutAConstant_removingTheFirstColumnAfterTheLeadingBlock() {
    ModelSettings s = ModelSettings.defaults().withConstantTerm(false);
    RlsModel front = new RlsModel(2, s);
    RlsModel plain = new RlsModel(2, s);
    front.columnAdded(2, "level", true);
    plain.columnAdded(2, "level", false);
    java.util.Random rnd = new java.util.Random(9);
    double[] x = new double[4];
    for (int i = 0; i < 60; i++) {
      if (i == 30) {
        front.columnRemoved(0);
        plain.columnRemoved(0);
      }
      if (i == 35) { // after some updates with one column fewer
        front.columnAdded(2, "level2", true);
        plain.columnAdded(2, "level2", false);
      }
      x[0] = rnd.nextGaussian();
      x[1] = rnd.nextInt(2);
      x[2] = 1 - x[1];
      double y = 2 * x[0] + x[1] + rnd.nextGaussian() * 0.1;
      assertTrue(front.update(x, y, 0.99));
      assertTrue(plain.update(x, y, 0.99));
      double[] probe = {0.5, 1, 0, 0};
      assertEquals(plain.predict(probe), front.predict(probe), 1e-9, "record " + i);
      assertEquals(plain.leverage(probe), front.leverage(probe), 1e-9, "record " + i);
    }
  }

  @Test
  void diffuseReadiness_followsTheRankThroughAddsAndRemovals() {
    assertTrue(new RlsModel(0, DIFFUSE.withConstantTerm(false)).ready(), "no column: nothing to identify");
    RlsModel m = new RlsModel(2, DIFFUSE);
    assertNotReady(m, "fresh");
    double[][] rows = new double[40][];
    double[] ys = new double[40];
    int n = 0;
    // (1, t): rank 1 after one row, 2 after two
    for (int t = 0; t < 2; t++) {
      rows[n] = new double[] {1, t, 0, 0, 0, 0, 0, 0};
      ys[n] = 1 + 2 * t;
      assertTrue(m.update(rows[n], ys[n], 1.0));
      n++;
      if (t == 0) {
        assertNotReady(m, "one row");
      }
    }
    assertTrue(m.ready());
    // a plain column: not identified until a row has it
    m.columnAdded(2, "c", false);
    assertNotReady(m, "after an add");
    for (int t = 2; t < 5; t++) {
      rows[n] = new double[] {1, t, 0, 0, 0, 0, 0, 0};
      ys[n] = 1 + 2 * t;
      assertTrue(m.update(rows[n], ys[n], 1.0));
      n++;
      assertNotReady(m, "rows without the new column");
    }
    rows[n] = new double[] {1, 1, 2, 0, 0, 0, 0, 0};
    ys[n] = 7.5;
    assertTrue(m.update(rows[n], ys[n], 1.0));
    n++;
    assertTrue(m.ready(), "identified");
    double[] want = ols(rows, ys, n, 3);
    double[] w = new double[8];
    m.weights(w);
    for (int j = 0; j < 3; j++) {
      assertEquals(want[j], w[j], 1e-9 * (1 + Math.abs(want[j])), "weight " + j);
    }
    double[] probe = {1, 3, -1, 0, 0, 0, 0, 0};
    double before = m.predict(probe);
    // a level in the leading block, never seen: not ready; removing it gives the model back
    m.columnAdded(3, "level", true);
    assertNotReady(m, "after a level");
    m.columnRemoved(3);
    assertTrue(m.ready(), "the unidentified column removed");
    assertEquals(before, m.predict(probe), 1e-12 * Math.abs(before));
    // two new columns, one identified: removing the identified one leaves the model not ready
    m.columnAdded(3, "d", false);
    m.columnAdded(4, "e", false);
    assertTrue(m.update(new double[] {1, 0, 0, 1, 0, 0, 0, 0}, 2.0, 1.0));
    assertTrue(m.update(new double[] {1, 2, 1, 3, 0, 0, 0, 0}, 4.0, 1.0));
    assertNotReady(m, "e never seen");
    m.columnRemoved(3);
    assertNotReady(m, "d removed, e still unidentified");
    double[] info = m.informationMatrix();
    m.columnRemoved(3);
    assertTrue(m.ready(), "e removed");
    assertLeadingBlock(info, 4, m.informationMatrix(), 3, "removing e, which has no information");
    // the plain case: a column appended and removed before any row has it changes nothing
    info = m.informationMatrix();
    before = m.predict(probe);
    m.columnAdded(3, "f", false);
    m.columnRemoved(3);
    assertTrue(m.ready());
    assertLeadingBlock(info, 3, m.informationMatrix(), 3, "f added and removed");
    assertEquals(before, m.predict(probe), 1e-12 * Math.abs(before));
  }

  /** {@code after} (q x q) is the leading q x q block of {@code before} (p x p), to rounding. */
  static void assertLeadingBlock(double[] before, int p, double[] after, int q, String what) {
    assertEquals(q * q, after.length, what);
    double scale = 0;
    for (double v : before) {
      scale = Math.max(scale, Math.abs(v));
    }
    for (int i = 0; i < q; i++) {
      for (int j = 0; j < q; j++) {
        assertEquals(before[i * p + j], after[i * q + j], 1e-12 * scale, what + ": information (" + i + ", " + j + ")");
      }
    }
  }

  @Test
  void squaresThatUnderflow_takeTheHypotPath() {
    // diffuse, one column: the first pivot is 0 and x = 1e-170, so a^2 + x^2 underflows to 0;
    // hypot gives 1e-170 and the update is exact (without it: 0/0 and a refused update)
    RlsModel m = new RlsModel(1, DIFFUSE);
    assertTrue(m.update(new double[] {1e-170}, 3e-170, 1.0));
    assertTrue(m.ready());
    assertEquals(3.0, m.predict(new double[] {1.0}), 1e-15);
    assertTrue(m.update(new double[] {2e-170}, 6e-170, 1.0), "the pivot (1e-170) and x both tiny again");
    assertEquals(3.0, m.predict(new double[] {1.0}), 1e-15);
    assertEquals(2, m.updates());
  }

  @Test
  void everyVectorShorterThanTheDimension_isRefusedByName() {
    RlsModel m = new RlsModel(3, ModelSettings.defaults());
    double[] shortX = new double[2];
    double[] out = new double[2];
    for (Consumer<double[]> call : java.util.List.<Consumer<double[]>>of(m::predict, m::leverage, x -> m.forecast(x, out),
        m::weights, m::standardErrors, m::intervalHalfWidth, x -> m.update(x, 1.0, 1.0))) {
      IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> call.accept(shortX));
      assertTrue(e.getMessage().contains("dimension 3") && e.getMessage().contains("got 2"), e.getMessage());
    }
  }

  @Test
  void inputsUpToTheLimitAreTaken_beyondItRefusedWithoutAChange() throws IOException {
    RlsModel m = new RlsModel(2, ModelSettings.defaults());
    double big = RlsModel.MAX_ABS_INPUT;
    double over = Math.nextUp(big);
    byte[] start = bytes(m);
    assertFalse(m.update(new double[] {1, over}, 0.0, 0.99));
    assertFalse(m.update(new double[] {1, -over}, 0.0, 0.99));
    assertFalse(m.update(new double[] {1, 0}, over, 0.99));
    assertFalse(m.update(new double[] {1, 0}, -over, 0.99));
    assertFalse(m.update(new double[] {Double.NaN, 0}, 0.0, 0.99));
    assertArrayEquals(start, bytes(m), "refused updates leave the state as it was");
    assertEquals(0, m.updates());
    assertTrue(m.update(new double[] {1, -big}, big, 0.99));
    assertTrue(m.update(new double[] {1, 0}, -big, 0.99));
    assertEquals(2, m.updates());
    for (double lambda : new double[] {0.0, -0.5, 1.0000001, Double.NaN}) {
      IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> m.update(new double[] {1, 0}, 0, lambda));
      assertTrue(e.getMessage().contains("lambda"), e.getMessage());
    }
  }

  @Test
  void layoutArgumentsAtTheirLimits() {
    RlsModel m = new RlsModel(3, ModelSettings.defaults());
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> new RlsModel(0, ModelSettings.defaults()));
    assertTrue(e.getMessage().contains("at least 1") && e.getMessage().contains("constant term"), e.getMessage());
    e = assertThrows(IllegalArgumentException.class, () -> new RlsModel(-1, ModelSettings.defaults().withConstantTerm(false)));
    assertTrue(e.getMessage().contains("at least 0, got -1"), e.getMessage());
    // re-basing: columns 1..p-1, scale positive and finite, shift finite
    for (int bad : new int[] {0, 3}) {
      e = assertThrows(IllegalArgumentException.class, () -> m.columnRebased(bad, 2.0, 0.0));
      assertTrue(e.getMessage().contains("[1, 2]") && e.getMessage().contains("got " + bad), e.getMessage());
    }
    for (double bad : new double[] {0.0, -1.0, Double.POSITIVE_INFINITY, Double.NaN}) {
      e = assertThrows(IllegalArgumentException.class, () -> m.columnRebased(2, bad, 0.0));
      assertTrue(e.getMessage().contains("scale"), e.getMessage());
    }
    for (double bad : new double[] {Double.POSITIVE_INFINITY, Double.NEGATIVE_INFINITY, Double.NaN}) {
      e = assertThrows(IllegalArgumentException.class, () -> m.columnRebased(2, 1.0, bad));
      assertTrue(e.getMessage().contains("shift"), e.getMessage());
    }
    RlsModel noConstant = new RlsModel(2, ModelSettings.defaults().withConstantTerm(false));
    e = assertThrows(IllegalArgumentException.class, () -> noConstant.columnRebased(0, 1.0, 0.5));
    assertTrue(e.getMessage().contains("0 without a constant term"), e.getMessage());
    noConstant.columnRebased(0, 2.0, 0.0); // column 0 is an ordinary column there
    noConstant.columnRemoved(0);
    assertEquals(1, noConstant.dimension());
    m.columnRebased(1, 2.0, 0.5);
    m.columnRebased(2, 0.5, -0.5);
    // removal: columns 1..p-1
    for (int bad : new int[] {0, 3, -1}) {
      e = assertThrows(IllegalArgumentException.class, () -> m.columnRemoved(bad));
      assertTrue(e.getMessage().contains("[1, 2]") && e.getMessage().contains("constant term") && e.getMessage().contains("got " + bad),
          e.getMessage());
    }
    m.columnRemoved(2);
    assertEquals(2, m.dimension());
    e = assertThrows(IllegalArgumentException.class, () -> m.columnAdded(3, "x"));
    assertTrue(e.getMessage().contains("dimension 2") && e.getMessage().contains("got 3"), e.getMessage());
    m.columnAdded(2, "level", true);
    IllegalStateException s = assertThrows(IllegalStateException.class, () -> m.columnRebased(2, 2.0, 0.0));
    assertTrue(s.getMessage().contains("never re-based"), s.getMessage());
    assertEquals(ModelSettings.defaults(), m.settings());
  }

  @Test
  void residualSd_isUndefinedAtZeroDegreesOfFreedom() {
    RlsModel m = new RlsModel(2, ModelSettings.defaults().withWindupGuard(false));
    assertTrue(m.update(new double[] {1, 1}, 1.0, 1.0));
    assertTrue(Double.isNaN(m.residualSd()), "n_eff 1 < p 2");
    assertTrue(m.update(new double[] {1, 2}, 3.0, 1.0));
    assertEquals(2.0, m.effectiveSampleSize());
    assertTrue(Double.isNaN(m.residualSd()), "n_eff = p exactly: no degree of freedom");
    assertTrue(m.update(new double[] {1, 3}, 2.0, 1.0));
    assertEquals(Math.sqrt(m.weightedResidualSumOfSquares()), m.residualSd(), 1e-15, "one degree of freedom");
    assertTrue(m.weightedResidualSumOfSquares() > 0.1);
  }
}
