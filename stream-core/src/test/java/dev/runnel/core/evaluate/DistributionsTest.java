package dev.runnel.core.evaluate;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import org.apache.commons.math3.distribution.NormalDistribution;
import org.apache.commons.math3.distribution.TDistribution;
import org.junit.jupiter.api.Test;

/** Normal and Student t tails against Apache Commons Math 3.6.1 as the reference. */
class DistributionsTest {

  @Test
  void normalCdf_matchesCommonsMath() {
    // Apache Commons Math NormalDistribution(0, 1) as reference
    NormalDistribution ref = new NormalDistribution(null, 0, 1);
    for (double x = -9; x <= 9; x += 0.0625) {
      double want = ref.cumulativeProbability(x);
      double got = Distributions.normalCdf(x);
      assertEquals(want, got, 1e-15 + 1e-12 * want, "normal cdf at " + x);
    }
  }

  @Test
  void normalLowerTail_isAccurateFarOut() {
    // Apache Commons Math NormalDistribution(0, 1) as reference (it computes erfc, accurate in the lower tail)
    NormalDistribution ref = new NormalDistribution(null, 0, 1);
    for (double x = 1; x <= 30; x += 0.5) {
      double want = ref.cumulativeProbability(-x);
      assertEquals(want, Distributions.normalUpperTail(x), 1e-11 * want, "upper tail at " + x);
      assertEquals(want, Distributions.normalCdf(-x), 1e-11 * want, "lower tail at " + -x);
    }
    assertEquals(1.0, Distributions.normalTwoSided(0.0), 0.0);
  }

  @Test
  void studentT_matchesCommonsMath() {
    // Apache Commons Math TDistribution as reference
    double[] dfs = {1, 2, 3, 5, 10, 29, 100, 1000, 1e5, 1e6};
    double[] ts = {0, 0.1, 0.5, 1, 1.5, 2, 2.5, 3, 4, 6, 10, 25};
    for (double df : dfs) {
      TDistribution ref = new TDistribution(null, df, 1e-14);
      for (double t : ts) {
        double wantLower = ref.cumulativeProbability(-t);
        double got = Distributions.studentTCdf(-t, df);
        // lower tail, relative 1e-8 (ample for p-values; both sides differ by up to ~1e-11 absolute at df ≥ 1e5)
        assertEquals(wantLower, got, 1e-11 + 1e-8 * wantLower, "t cdf df=" + df + " at " + -t);
        assertEquals(1.0 - wantLower, Distributions.studentTCdf(t, df), 1e-10, "t cdf df=" + df + " at " + t);
        assertEquals(Math.min(1, 2 * wantLower), Distributions.studentTTwoSided(t, df), 2e-11 + 2e-8 * wantLower,
            "two-sided df=" + df + " at " + t);
      }
    }
  }

  @Test
  void studentT_withManyDegreesOfFreedom_approachesNormal() {
    // first-order expansion of the t tail for large df (from memory; common practice):
    // P(T > t) = Q(t) + φ(t) (t³ + t) / (4 df) + O(df⁻²); at df = 1e7 the remainder is below 1e-12
    for (double t = 0.5; t <= 4; t += 0.5) {
      double q = Distributions.normalUpperTail(t);
      double phi = Math.exp(-0.5 * t * t) / Math.sqrt(2 * Math.PI);
      double want = q + phi * (t * t * t + t) / (4 * 1e7);
      double got = Distributions.studentTCdf(-t, 1e7);
      assertEquals(want, got, 1e-10, "at " + t);
      assertTrue(got > q, "the t tail is heavier than the normal one at " + t);
    }
  }

  @Test
  void studentT_rejectsBadDegreesOfFreedom() {
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> Distributions.studentTCdf(1, 0));
    assertEquals("degrees of freedom must be positive, got 0.0", e.getMessage());
  }
}
