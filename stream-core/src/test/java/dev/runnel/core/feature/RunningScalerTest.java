package dev.runnel.core.feature;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.Scaling;
import dev.runnel.core.config.Transform;
import java.util.Random;
import org.apache.commons.math3.stat.descriptive.SummaryStatistics;
import org.junit.jupiter.api.Test;

class RunningScalerTest {

  private static void assertRel(double expected, double actual, double rel, String what) {
    double err = Math.abs(actual - expected) / Math.max(Math.abs(expected), Double.MIN_NORMAL);
    assertTrue(err <= rel, what + ": expected " + expected + ", got " + actual + " (relative error " + err + ")");
  }

  @Test void meanAndVariance_equalCommonsMathSummaryStatistics_onSeededValues() {
    // Apache Commons Math SummaryStatistics as reference (n-1 variance).
    Random rnd = new Random(20260329L);
    RunningScaler s = new RunningScaler();
    SummaryStatistics ref = new SummaryStatistics();
    for (int i = 0; i < 100_000; i++) {
      double x = 50.0 + 12.0 * rnd.nextGaussian() + (i % 7) * 0.25;
      s.observe(x);
      ref.addValue(x);
      if (i == 1 || i == 99 || i == 9_999) {
        assertRel(ref.getMean(), s.mean(), 1e-12, "mean at " + i);
        assertRel(ref.getVariance(), s.variance(), 1e-12, "variance at " + i);
      }
    }
    assertRel(ref.getMean(), s.mean(), 1e-12, "mean");
    assertRel(ref.getVariance(), s.variance(), 1e-12, "variance");
    assertRel(ref.getStandardDeviation(), s.sd(), 1e-12, "sd");
    assertEquals(ref.getMean(), s.centre(), Math.abs(ref.getMean()) * 1e-12);
    assertRel(ref.getStandardDeviation(), s.scale(), 1e-12, "scale");
  }

  @Test void weightedMeanAndVariance_equalDirectWeightedSums() {
    // Reference: the definition, computed directly in the test: weights w_i = a^(n-i) with
    // a = 2^(-1/h); mean = sum w x / sum w; var = sum w (x - mean)^2 / (W - W2 / W) (reliability weights).
    double h = 50.0;
    double a = Math.pow(2.0, -1.0 / h);
    Random rnd = new Random(7L);
    int n = 2_000;
    double[] xs = new double[n];
    RunningScaler s = new RunningScaler(Scaling.STANDARDIZE, Transform.NONE, 1.0, h, 0);
    for (int i = 0; i < n; i++) {
      xs[i] = 1000.0 + 3.0 * rnd.nextGaussian() + (i > 1000 ? 5.0 : 0.0);
      s.observe(xs[i]);
    }
    double w = 0, w2 = 0, sx = 0;
    for (int i = 0; i < n; i++) {
      double wi = Math.pow(a, n - 1 - i);
      w += wi;
      w2 += wi * wi;
      sx += wi * xs[i];
    }
    double mean = sx / w;
    double ss = 0;
    for (int i = 0; i < n; i++) ss += Math.pow(a, n - 1 - i) * (xs[i] - mean) * (xs[i] - mean);
    double var = ss / (w - w2 / w);
    assertRel(w, s.weightSum(), 1e-12, "weight sum");
    assertRel(mean, s.mean(), 1e-12, "weighted mean");
    assertRel(var, s.variance(), 1e-10, "weighted variance");
  }

  /** A tiny linear model kept in the test: prediction w . z over (constant, column). */
  private static final class TinyModel {
    double w0;
    double w1;
    void rebase(double scale, double shift) {
      // As LayoutListener specifies: w -> w * scale; constant's weight += w * shift.
      w0 += w1 * shift;
      w1 *= scale;
    }
    double predict(double z) { return w0 + w1 * z; }
  }

  @Test void applyingEachRebase_keepsLinearPredictionUnchanged() {
    // Property from the layout contract: re-basing must not move any prediction. Reference: the
    // prediction before the re-basing, computed from the old encoding.
    Random rnd = new Random(11L);
    RunningScaler s = new RunningScaler(Scaling.STANDARDIZE, Transform.NONE, 1.0, 0, 0);
    TinyModel m = new TinyModel();
    m.w0 = 0.7;
    m.w1 = -1.3;
    double[] probes = {-50, 0, 3.5, 17, 1234.5};
    int events = 0;
    for (int i = 0; i < 5_000; i++) {
      double x = 20 + 8 * rnd.nextGaussian() * (1 + i / 1000.0);
      double[] before = new double[probes.length];
      for (int k = 0; k < probes.length; k++) before[k] = m.predict(s.encode(probes[k]));
      if (s.observe(x)) {
        events++;
        m.rebase(s.lastScale(), s.lastShift());
      }
      for (int k = 0; k < probes.length; k++) {
        double after = m.predict(s.encode(probes[k]));
        assertEquals(before[k], after, 1e-12 * Math.max(1.0, Math.abs(before[k])), "probe " + probes[k] + " at " + i);
      }
    }
    assertTrue(events > 4_000, "re-basings: " + events);
  }

  @Test void constantColumn_keepsEffectiveScaleOne() {
    RunningScaler s = new RunningScaler();
    for (int i = 0; i < 100; i++) s.observe(42.0);
    assertEquals(1.0, s.scale());
    assertEquals(42.0, s.centre());
    assertEquals(0.0, s.encode(42.0));
    // sd far below |mean| * 1e-10 (rounding noise) still keeps the guard
    RunningScaler t = new RunningScaler();
    t.observe(1.0e6);
    t.observe(1.0e6 + 1.0e-6);
    assertEquals(1.0, t.scale());
    t.observe(1.0e6 + 1.0);
    assertTrue(t.scale() > 0.5 && t.scale() < 1.0, "scale " + t.scale());
  }

  @Test void scaleMode_usesRootMeanSquareAndNeverShifts() {
    RunningScaler s = new RunningScaler(Scaling.SCALE, Transform.NONE, 1.0, 0, 0);
    double[] xs = {3, 4, -5, 12};
    double sum = 0;
    for (int i = 0; i < xs.length; i++) {
      s.observe(xs[i]);
      sum += xs[i] * xs[i];
      assertEquals(0.0, s.lastShift());
      assertEquals(0.0, s.centre());
      assertEquals(Math.sqrt(sum / (i + 1)), s.scale(), 1e-12);
    }
    assertEquals(12.0 / Math.sqrt(sum / 4), s.encode(12.0), 1e-12);
  }

  @Test void transforms_rejectValuesOutsideTheirDomain() {
    RunningScaler log = new RunningScaler(Scaling.NONE, Transform.LOG1P, 1.0, 0, 0);
    assertFalse(log.accepts(-2.0));
    assertFalse(log.accepts(-1.0));
    assertTrue(log.accepts(-0.5));
    assertEquals(Math.log(3.0), log.transformed(2.0), 1e-15);
    RunningScaler sqrt = new RunningScaler(Scaling.NONE, Transform.SQRT, 1.0, 0, 0);
    assertFalse(sqrt.accepts(-1e-300));
    assertEquals(3.0, sqrt.transformed(9.0));
    RunningScaler pow = new RunningScaler(Scaling.NONE, Transform.POWER, 0.5, 0, 0);
    assertFalse(pow.accepts(-4));
    RunningScaler inv = new RunningScaler(Scaling.NONE, Transform.POWER, -1, 0, 0);
    assertFalse(inv.accepts(0));
    assertEquals(-0.25, inv.transformed(-4), 0);
    RunningScaler big = new RunningScaler(Scaling.NONE, Transform.POWER, 3, 0, 0);
    assertFalse(big.accepts(1e200));
  }

  @Test void clipping_boundsZ() {
    RunningScaler s = new RunningScaler(Scaling.STANDARDIZE, Transform.NONE, 1.0, 0, 2.0);
    for (int i = 0; i < 100; i++) s.observe(i % 2 == 0 ? -1 : 1);
    assertEquals(2.0, s.encode(1e9));
    assertEquals(-2.0, s.encode(-1e9));
    assertEquals((0.5 - s.centre()) / s.scale(), s.encode(0.5), 0);
  }
}
