package dev.runnel.core.drift;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.Random;
import org.apache.commons.math3.linear.Array2DRowRealMatrix;
import org.apache.commons.math3.linear.LUDecomposition;
import org.apache.commons.math3.linear.RealMatrix;
import org.apache.commons.math3.stat.regression.OLSMultipleLinearRegression;
import org.junit.jupiter.api.Test;

/** The weight-break scan alone: its score against an independent least-squares fit, its state, its allocation. */
class WeightBreakScanTest {

  /** Rows: a constant, three columns correlated 0.7 with each other; y = 2 + x1 − x2 + 0.5·x3 + noise (b2 from {@code from}). */
  static double[][] rows(long seed, int n, int from, double b2After, double[] y) {
    Random rnd = new Random(seed);
    double[][] x = new double[n][4];
    for (int i = 0; i < n; i++) {
      double f = rnd.nextGaussian();
      x[i][0] = 1.0;
      for (int j = 1; j < 4; j++) {
        x[i][j] = 3.0 * j + Math.sqrt(0.7) * f + Math.sqrt(0.3) * rnd.nextGaussian();
      }
      double b2 = i < from ? -1.0 : b2After;
      y[i] = 2 + x[i][1] + b2 * x[i][2] + 0.5 * x[i][3] + rnd.nextGaussian();
    }
    return x;
  }

  /**
   * With two blocks kept, a look compares the newest block with the one before: each column's z is
   * the two-sample test of equal coefficients (Chow 1960; common practice) computed here from two
   * independent least-squares fits by Commons Math ({@code OLSMultipleLinearRegression}, no
   * intercept since the rows carry the constant): {@code (b₂ − b₁) / √(s² (V₁ + V₂))} with the
   * pooled {@code s² = (RSS₁ + RSS₂) / (n₁ + n₂ − 2p)}.
   */
  @Test
  void aLookIsTheTwoSampleTestOfEqualCoefficients_againstCommonsMath() {
    int b = 300;
    double[] y = new double[2 * b];
    double[][] x = rows(7, 2 * b, b, -2.0, y);
    WeightBreakScan scan = new WeightBreakScan(b, 2, 1e-9); // every column named: the scores can be read
    boolean named = false;
    for (int i = 0; i < 2 * b; i++) {
      named = scan.observe(x[i], y[i], 4, 0L);
      assertEquals(i == 2 * b - 1, named, "a look names columns only at the end of the second block");
    }
    assertTrue(named);
    assertEquals(4, scan.namedCount());
    double[][] fit = new double[2][];
    double[][] var = new double[2][];
    double rss = 0;
    for (int k = 0; k < 2; k++) {
      OLSMultipleLinearRegression ols = new OLSMultipleLinearRegression();
      ols.setNoIntercept(true);
      double[][] xs = java.util.Arrays.copyOfRange(x, k * b, (k + 1) * b);
      ols.newSampleData(java.util.Arrays.copyOfRange(y, k * b, (k + 1) * b), xs);
      fit[k] = ols.estimateRegressionParameters();
      rss += ols.calculateResidualSumOfSquares();
      RealMatrix m = new Array2DRowRealMatrix(xs);
      RealMatrix inv = new LUDecomposition(m.transpose().multiply(m)).getSolver().getInverse();
      var[k] = new double[4];
      for (int j = 0; j < 4; j++) {
        var[k][j] = inv.getEntry(j, j);
      }
    }
    double s2 = rss / (2 * b - 2 * 4);
    double[] want = new double[4];
    double[] got = new double[4];
    for (int k = 0; k < 4; k++) {
      int j = scan.namedColumn(k);
      got[j] = scan.namedScore(k);
      want[j] = (fit[1][j] - fit[0][j]) / Math.sqrt(s2 * (var[0][j] + var[1][j]));
      // the scan solves with a ridge of 1e-9 on the equilibrated matrix: agreement to about 1e-7 here
      assertEquals(fit[0][j], scan.namedBefore(k), 1e-6 * (1 + Math.abs(fit[0][j])), "column " + j + " before");
      assertEquals(fit[1][j], scan.namedAfter(k), 1e-6 * (1 + Math.abs(fit[1][j])), "column " + j + " after");
    }
    assertArrayEquals(want, got, 1e-4);
    assertEquals(2, scan.namedColumn(0), "the changed column has the largest score");
    assertTrue(scan.namedScore(0) < -4, "x2 weight fell by 1: " + scan.namedScore(0));
    assertEquals(0, scan.filledBlocks(), "a look that names drops the kept blocks");
  }

  @Test
  void theStateWrittenMidBlockContinuesBitForBit() throws IOException {
    int n = 20_000;
    double[] y = new double[n];
    double[][] x = rows(8, n, 9_000, -1.3, y);
    WeightBreakScan a = new WeightBreakScan(144, 64, 4.5);
    int cut = 5_000;
    for (int i = 0; i < cut; i++) {
      a.observe(x[i], y[i], 4, 3L);
    }
    byte[] mid = state(a);
    WeightBreakScan b = new WeightBreakScan(144, 64, 4.5);
    b.readFrom(new DataInputStream(new ByteArrayInputStream(mid)));
    assertArrayEquals(mid, state(b), "a read state writes the same bytes");
    int firstA = -1;
    int firstB = -1;
    for (int i = cut; i < n; i++) {
      if (a.observe(x[i], y[i], 4, 3L) && firstA < 0) {
        firstA = i;
      }
      if (b.observe(x[i], y[i], 4, 3L) && firstB < 0) {
        firstB = i;
        assertEquals(2, b.namedColumn(0), "x2 named first");
      }
    }
    assertTrue(firstA > 9_000, "named after the change: " + firstA);
    assertEquals(firstA, firstB);
    assertArrayEquals(state(a), state(b), "the state at the end");
    assertEquals(a.looks(), b.looks());
    // columns added or removed drop the kept blocks
    a.observe(new double[] {1, 2, 3, 4, 5}, 1.0, 5, 4L);
    assertEquals(0, a.filledBlocks());
  }

  @Test
  void aLookAllocatesNothingOnceWarm() {
    java.lang.management.ThreadMXBean tmx = java.lang.management.ManagementFactory.getThreadMXBean();
    if (!(tmx instanceof com.sun.management.ThreadMXBean sun) || !sun.isThreadAllocatedMemorySupported()) {
      return;
    }
    int n = 30_000;
    double[] y = new double[n];
    double[][] x = rows(9, n, n, -1.0, y); // stationary
    WeightBreakScan scan = new WeightBreakScan(100, 64, 1e6);
    for (int i = 0; i < 10_000; i++) {
      scan.observe(x[i], y[i], 4, 0L);
    }
    long tid = Thread.currentThread().getId();
    long looks = scan.looks();
    long before = sun.getThreadAllocatedBytes(tid);
    for (int i = 10_000; i < n; i++) {
      scan.observe(x[i], y[i], 4, 0L);
    }
    long allocated = sun.getThreadAllocatedBytes(tid) - before;
    assertEquals(200, scan.looks() - looks, "200 looks in 20,000 records");
    // 0 bytes measured here (JVM per-thread allocation counter); a small slack for the counter itself
    assertTrue(allocated < 1_000, "bytes allocated over 20,000 records and 200 looks: " + allocated);
    assertFalse(scan.fired() > 0);
  }

  private static byte[] state(WeightBreakScan s) throws IOException {
    ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    s.writeTo(new DataOutputStream(bytes));
    return bytes.toByteArray();
  }
}
