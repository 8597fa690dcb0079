package dev.runnel.core.evaluate;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Random;
import org.apache.commons.math3.distribution.NormalDistribution;
import org.apache.commons.math3.distribution.TDistribution;
import org.apache.commons.math3.stat.inference.TTest;
import org.junit.jupiter.api.Test;

/**
 * The Diebold–Mariano test (Diebold &amp; Mariano, 1995, "Comparing Predictive Accuracy", Journal of
 * Business &amp; Economic Statistics 13(3)) with the Newey &amp; West (1987) Bartlett-kernel HAC variance
 * and the Harvey, Leybourne &amp; Newbold (1997) correction, against hand computations.
 */
class DieboldMarianoTest {

  // a small series worked by hand below
  private static final double[] A = {1, -2, 3, 0.5, -1, 2};
  private static final double[] B = {0.5, -1, 1, 1, -0.5, 1};

  /*
   * Hand computation, squared loss: L(a) = 1, 4, 9, 0.25, 1, 4; L(b) = 0.25, 1, 1, 1, 0.25, 1;
   * d = 0.75, 3, 8, -0.75, 0.75, 3 = (18, 72, 192, -18, 18, 72)/24; mean d = 59/24.
   * d - mean = (-41, 13, 133, -77, -41, 13)/24.
   * n γ0 = (1681 + 169 + 17689 + 5929 + 1681 + 169)/576 = 27318/576
   * n γ1 = (13·-41 + 133·13 + -77·133 + -41·-77 + 13·-41)/576 = -6421/576
   * n γ2 = (133·-41 + -77·13 + -41·133 + 13·-77)/576 = -12908/576
   * lag 0: S = 27318/3456, DM = (59/24)/√(S/6) = 354/√27318
   * lag 1: S = γ0 + γ1 = 20897/3456, DM = 354/√20897
   * lag 2: S = γ0 + (4/3)γ1 + (2/3)γ2 = 30454/10368, DM = √(375948/30454)
   */
  @Test
  void squaredLoss_matchesHandComputation() {
    DieboldMariano.Result r0 = DieboldMariano.test(A, B, 6, Loss.SQUARED, 0, 1);
    assertEquals(59.0 / 24, r0.meanDifference(), 1e-15);
    assertEquals(27318.0 / 3456, r0.longRunVariance(), 1e-13);
    assertEquals(354 / Math.sqrt(27318), r0.statistic(), 1e-13);
    DieboldMariano.Result r1 = DieboldMariano.test(A, B, 6, Loss.SQUARED, 1, 1);
    assertEquals(20897.0 / 3456, r1.longRunVariance(), 1e-13);
    assertEquals(354 / Math.sqrt(20897), r1.statistic(), 1e-13);
    DieboldMariano.Result r2 = DieboldMariano.test(A, B, 6, Loss.SQUARED, 2, 1);
    assertEquals(30454.0 / 10368, r2.longRunVariance(), 1e-13);
    assertEquals(Math.sqrt(375948.0 / 30454), r2.statistic(), 1e-13);
    assertEquals(2, r2.lag());
    assertEquals(19.25 / 6, r2.meanLossA(), 1e-15);
    assertEquals(4.5 / 6, r2.meanLossB(), 1e-15);

    // p-values: Apache Commons Math NormalDistribution and TDistribution as reference
    NormalDistribution z = new NormalDistribution(null, 0, 1);
    assertEquals(2 * z.cumulativeProbability(-354 / Math.sqrt(20897)), r1.pValue(), 1e-14);
    // Harvey, Leybourne & Newbold (1997): DM* = DM √((n + 1 − 2h + h(h−1)/n)/n), t with n − 1 df; h = 1, n = 6
    double corrected = 354 / Math.sqrt(20897) * Math.sqrt(5.0 / 6);
    assertEquals(corrected, r1.correctedStatistic(), 1e-13);
    TDistribution t5 = new TDistribution(null, 5, 1e-14);
    assertEquals(2 * t5.cumulativeProbability(-corrected), r1.correctedPValue(), 1e-10);
  }

  /*
   * Hand computation, absolute loss: |a| = 1, 2, 3, 0.5, 1, 2; |b| = 0.5, 1, 1, 1, 0.5, 1;
   * d = 0.5, 1, 2, -0.5, 0.5, 1; mean 0.75; deviations ±0.25 (four) and ±1.25 (two);
   * γ0 = 3.375/6 = 0.5625; lag 0: DM = 0.75/√(0.5625/6) = √6.
   * With h = 3: DM* = √6 · √((6 + 1 − 6 + 6/6)/6) = √6 · √(2/6) = √2.
   */
  @Test
  void absoluteLoss_matchesHandComputation() {
    DieboldMariano.Result r = DieboldMariano.test(A, B, 6, Loss.ABSOLUTE, 0, 1);
    assertEquals(0.75, r.meanDifference(), 1e-15);
    assertEquals(0.5625, r.longRunVariance(), 1e-15);
    assertEquals(Math.sqrt(6), r.statistic(), 1e-14);
    DieboldMariano.Result h3 = DieboldMariano.test(A, B, 6, Loss.ABSOLUTE, 0, 3);
    assertEquals(Math.sqrt(2), h3.correctedStatistic(), 1e-14);
  }

  @Test
  void lagZero_isThePairedTTestRescaled() {
    // Apache Commons Math TTest.pairedT as reference: with lag 0 the HAC variance is the variance of
    // d with divisor n, so DM = t_paired · √(n/(n−1))
    Random rnd = new Random(345);
    int n = 500;
    double[] a = new double[n];
    double[] b = new double[n];
    double[] la = new double[n];
    double[] lb = new double[n];
    for (int i = 0; i < n; i++) {
      a[i] = rnd.nextGaussian() * 1.2;
      b[i] = rnd.nextGaussian();
      la[i] = a[i] * a[i];
      lb[i] = b[i] * b[i];
    }
    double t = new TTest().pairedT(la, lb);
    DieboldMariano.Result r = DieboldMariano.test(a, b, n, Loss.SQUARED, 0, 1);
    assertEquals(t * Math.sqrt(n / (n - 1.0)), r.statistic(), 1e-12 * Math.abs(t));
  }

  @Test
  void identicalErrors_giveZeroStatisticAndPValueOne() {
    DieboldMariano.Result r = DieboldMariano.test(A, A.clone(), 6, Loss.SQUARED, 2, 1);
    assertEquals(0.0, r.statistic(), 0.0);
    assertEquals(0.0, r.correctedStatistic(), 0.0);
    assertEquals(1.0, r.pValue(), 0.0);
    assertEquals(1.0, r.correctedPValue(), 0.0);
    assertEquals("a and b made identical errors", r.verdict("a", "b", 0.05));
  }

  @Test
  void swappingTheForecasts_flipsTheSign() {
    DieboldMariano.Result ab = DieboldMariano.test(A, B, 6, Loss.SQUARED, 1, 1);
    DieboldMariano.Result ba = DieboldMariano.test(B, A, 6, Loss.SQUARED, 1, 1);
    assertEquals(-ab.statistic(), ba.statistic(), 0.0);
    assertEquals(ab.pValue(), ba.pValue(), 0.0);
  }

  @Test
  void verdict_namesTheBetterForecastAndTheLevel() {
    Random rnd = new Random(7);
    int n = 2000;
    double[] a = new double[n];
    double[] b = new double[n];
    for (int i = 0; i < n; i++) {
      double common = rnd.nextGaussian();
      a[i] = common + 0.8 * rnd.nextGaussian();
      b[i] = common + 0.2 * rnd.nextGaussian();
    }
    DieboldMariano.Result r = DieboldMariano.test(a, b, n, Loss.SQUARED, DieboldMariano.defaultLag(n, 1), 1);
    assertTrue(r.statistic() > 5, "a is worse: " + r.statistic());
    assertTrue(r.verdict("a", "b", 0.05).startsWith("b has lower squared error than a (p < 1e-12)"),
        r.verdict("a", "b", 0.05));
    assertTrue(r.verdict("a", "b", 0.05).endsWith("significant at the 5% level"));
  }

  @Test
  void defaultLag_followsTheNeweyWestRuleOfThumb() {
    // floor(4 (n/100)^(2/9)): n = 100 → 4; 1000 → floor(6.67) = 6; 10^6 → floor(30.97) = 30 (worked by hand)
    assertEquals(4, DieboldMariano.defaultLag(100, 1));
    assertEquals(6, DieboldMariano.defaultLag(1000, 1));
    assertEquals(30, DieboldMariano.defaultLag(1_000_000, 1));
    // at least h − 1 for h-step forecasts: n = 2 gives floor(1.68) = 1 < 2
    assertEquals(2, DieboldMariano.defaultLag(2, 3));
  }

  @Test
  void badArguments_throwWithTheValue() {
    assertEquals("lag must not be negative, got -1", assertThrows(IllegalArgumentException.class,
        () -> DieboldMariano.test(A, B, 6, Loss.SQUARED, -1, 1)).getMessage());
    assertEquals("n must be in 0..6, got 7", assertThrows(IllegalArgumentException.class,
        () -> DieboldMariano.test(A, B, 7, Loss.SQUARED, 0, 1)).getMessage());
    assertEquals("horizon must be at least 1, got 0", assertThrows(IllegalArgumentException.class,
        () -> DieboldMariano.defaultLag(10, 0)).getMessage());
  }
}
