package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;

import org.apache.commons.math3.distribution.NormalDistribution;
import org.junit.jupiter.api.Test;

/** The inverse normal CDF against Apache Commons Math NormalDistribution as reference. */
class NormalQuantileTest {

  private final NormalDistribution reference = new NormalDistribution(0.0, 1.0);

  @Test
  void inverseCdfAgreesWithCommonsMath() {
    // Commons Math computes the quantile as sqrt(2) erfInv(2p - 1), which loses digits of p in the
    // tails (2p - 1 rounds), so the direct comparison stays within [0.001, 0.999] ...
    for (int i = 1; i < 1000; i++) {
      double p = i / 1000.0;
      double expected = reference.inverseCumulativeProbability(p);
      assertEquals(expected, NormalQuantile.inverseCdf(p), 1e-12 * Math.max(1.0, Math.abs(expected)), "p = " + p);
    }
    // ... and the tails are checked by the round trip through Commons Math's CDF (erfc based).
    double[] tails = {1e-300, 1e-100, 1e-12, 1e-8, 1e-5, 1e-4, 0.02425, 1 - 1e-6, 1 - 1e-9};
    for (double p : tails) {
      double x = NormalQuantile.inverseCdf(p);
      double back = p < 0.5 ? reference.cumulativeProbability(x) : 1 - reference.cumulativeProbability(-x);
      double q = p < 0.5 ? p : 1 - p;
      double qBack = p < 0.5 ? back : reference.cumulativeProbability(-x);
      assertEquals(q, qBack, 1e-12 * q, "p = " + p + ", x = " + x);
      assertEquals(p, back, 1e-12 * p, "p = " + p);
    }
  }

  @Test
  void cdfAgreesWithCommonsMath() {
    for (double x = -8; x <= 8; x += 0.137) {
      double expected = reference.cumulativeProbability(x);
      assertEquals(expected, NormalQuantile.cdf(x), 1e-14 * Math.max(expected, 1e-3), "x = " + x);
    }
  }

  @Test
  void zForLevel() {
    // 1.6448536269514722 and 1.959963984540054: the familiar two-sided 90 % and 95 % z-values (common practice)
    assertEquals(1.6448536269514722, ModelSettings.zForLevel(0.90), 1e-14);
    assertEquals(1.959963984540054, ModelSettings.zForLevel(0.95), 1e-14);
    assertThrows(IllegalArgumentException.class, () -> ModelSettings.zForLevel(1.0));
    assertThrows(IllegalArgumentException.class, () -> NormalQuantile.inverseCdf(Double.NaN));
  }
}
