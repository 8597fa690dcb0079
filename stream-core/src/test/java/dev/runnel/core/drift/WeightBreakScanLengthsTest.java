package dev.runnel.core.drift;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.Arrays;
import org.apache.commons.math3.linear.Array2DRowRealMatrix;
import org.apache.commons.math3.linear.LUDecomposition;
import org.apache.commons.math3.linear.RealMatrix;
import org.apache.commons.math3.stat.regression.OLSMultipleLinearRegression;
import org.junit.jupiter.api.Test;

/**
 * The scan with more than two blocks kept: at every look, each length L = 1, 2, 4 (up to half the
 * kept blocks, with at least as many older ones) compared with all older kept blocks, the largest
 * |z| per column, against the same comparisons made from independent least-squares fits by Commons
 * Math ({@code OLSMultipleLinearRegression}, the two-sample test of equal coefficients, Chow 1960;
 * common practice); the look that first exceeds the threshold is the one that names, in the order
 * of |z|. Also: a checkpoint with more blocks than configured, and corrupt checkpoints.
 */
class WeightBreakScanLengthsTest {

  private static final int P = 4;

  /** Per column: the signed z of largest |z| over the lengths, and the two fits it came from. */
  private record Best(double[] z, double[] before, double[] after) { }

  /** Commons Math fit of rows [from, to): weights, diagonal of (XᵀX)⁻¹, residual sum of squares. */
  private static double[][] ols(double[][] x, double[] y, int from, int to) {
    OLSMultipleLinearRegression ols = new OLSMultipleLinearRegression();
    ols.setNoIntercept(true);
    double[][] xs = Arrays.copyOfRange(x, from, to);
    ols.newSampleData(Arrays.copyOfRange(y, from, to), xs);
    RealMatrix m = new Array2DRowRealMatrix(xs);
    RealMatrix inv = new LUDecomposition(m.transpose().multiply(m)).getSolver().getInverse();
    double[] v = new double[P];
    for (int j = 0; j < P; j++) {
      v[j] = inv.getEntry(j, j);
    }
    return new double[][] {ols.estimateRegressionParameters(), v, {ols.calculateResidualSumOfSquares()}};
  }

  /** The reference look over blocks [first, last] (block k is rows k·b to (k+1)·b), K kept at most. */
  private static Best reference(double[][] x, double[] y, int b, int first, int last, int kept) {
    int filled = last - first + 1;
    double[] z = new double[P];
    double[] before = new double[P];
    double[] after = new double[P];
    for (int len = 1; len <= kept / 2 && 2 * len <= filled; len *= 2) {
      int split = (last + 1 - len) * b;
      double[][] ref = ols(x, y, first * b, split);
      double[][] win = ols(x, y, split, (last + 1) * b);
      double s2 = (ref[2][0] + win[2][0]) / ((last + 1 - first) * b - 2.0 * P);
      for (int j = 0; j < P; j++) {
        double zj = (win[0][j] - ref[0][j]) / Math.sqrt(s2 * (win[1][j] + ref[1][j]));
        if (Math.abs(zj) > Math.abs(z[j])) {
          z[j] = zj;
          before[j] = ref[0][j];
          after[j] = win[0][j];
        }
      }
    }
    return new Best(z, before, after);
  }

  @Test
  void everyLookComparesTheLengthsOneTwoFourWithTheOlderBlocks_againstCommonsMath() {
    int[] r = scenario(11, 6, -1.2, 4.0); // x2's weight −1 → −1.2 from block 6
    assertTrue(r[0] >= 1, "the step was named");
    assertTrue(r[1] >= 1, "a named score came from a length above 1");
  }

  /** Early, small steps with a low threshold: looks with 2 and 3 blocks kept decide (a length is never compared with fewer older blocks). */
  @Test
  void earlyLooksCompareOnlyLengthsWithAsManyOlderBlocks_againstCommonsMath() {
    int named = 0;
    for (int seed = 20; seed < 30; seed++) {
      named += scenario(seed, 1, -1.12, 2.5)[0];
    }
    assertTrue(named >= 1, "some step was named");
  }

  /** Runs 14 blocks of 200 records (8 kept) through the scan and the reference; returns {looks that named, of them from a length above 1}. */
  private static int[] scenario(long seed, int fromBlock, double b2After, double threshold) {
    int b = 200;
    int kept = 8;
    int n = 14 * b;
    double[] y = new double[n];
    double[][] x = WeightBreakScanTest.rows(seed, n, fromBlock * b, b2After, y);
    WeightBreakScan scan = new WeightBreakScan(b, kept, threshold);
    int first = 0;
    int namedLooks = 0;
    int looksWithLongerBest = 0;
    for (int i = 0; i < n; i++) {
      boolean named = scan.observe(x[i], y[i], P, 0L);
      if ((i + 1) % b != 0) {
        assertFalse(named, "only the end of a block looks");
        continue;
      }
      int last = i / b;
      first = Math.max(first, last - kept + 1);
      int filled = last - first + 1;
      assertEquals(named ? 0 : filled, scan.filledBlocks(), "blocks kept after block " + last + " (none after a look that names)");
      if (filled < 2) {
        assertFalse(named);
        continue;
      }
      Best want = reference(x, y, b, first, last, kept);
      int over = 0;
      for (int j = 0; j < P; j++) {
        over += Math.abs(want.z[j]) > threshold ? 1 : 0;
      }
      assertEquals(over > 0, named, "a look names when a reference |z| exceeds the threshold, block " + last
          + ", reference z " + Arrays.toString(want.z));
      if (!named) {
        continue;
      }
      namedLooks++;
      assertEquals(over, scan.namedCount(), "columns named at block " + last);
      double previous = Double.POSITIVE_INFINITY;
      for (int k = 0; k < scan.namedCount(); k++) {
        int j = scan.namedColumn(k);
        assertEquals(want.z[j], scan.namedScore(k), 1e-4 * (1 + Math.abs(want.z[j])), "z of column " + j);
        assertEquals(want.before[j], scan.namedBefore(k), 1e-6 * (1 + Math.abs(want.before[j])), "before, column " + j);
        assertEquals(want.after[j], scan.namedAfter(k), 1e-6 * (1 + Math.abs(want.after[j])), "after, column " + j);
        assertTrue(Math.abs(scan.namedScore(k)) <= previous, "largest |z| first");
        previous = Math.abs(scan.namedScore(k));
      }
      // which length gave the named score (so that the test is known to reach lengths above 1)
      double[][] one = {ols(x, y, first * b, last * b)[0], ols(x, y, last * b, (last + 1) * b)[0]};
      int j0 = scan.namedColumn(0);
      if (Math.abs(scan.namedAfter(0) - one[1][j0]) > 1e-6) {
        looksWithLongerBest++;
      }
      first = last + 1;
    }
    assertEquals(namedLooks, scan.fired());
    return new int[] {namedLooks, looksWithLongerBest};
  }

  /** A checkpoint written with 8 blocks kept, read by a scan configured for 4, keeps the newest 4: the state of a scan that kept 4 all along. */
  @Test
  void aCheckpointWithMoreBlocksThanConfiguredKeepsTheNewest() throws IOException {
    int b = 50;
    int n = 7 * b + 20;
    double[] y = new double[n];
    double[][] x = WeightBreakScanTest.rows(12, n, n, -1.0, y); // stationary
    WeightBreakScan eight = new WeightBreakScan(b, 8, 1e9);
    WeightBreakScan four = new WeightBreakScan(b, 4, 1e9);
    for (int i = 0; i < n; i++) {
      eight.observe(x[i], y[i], P, 2L);
      four.observe(x[i], y[i], P, 2L);
    }
    assertEquals(7, eight.filledBlocks());
    WeightBreakScan read = new WeightBreakScan(b, 4, 1e9);
    read.readFrom(in(state(eight)));
    assertEquals(4, read.filledBlocks());
    // both looked at the end of every block from the second, so the counters agree too
    assertArrayEquals(state(four), state(read));
  }

  @Test
  void corruptCheckpointsAreRefused() throws IOException {
    WeightBreakScan scan = new WeightBreakScan(10, 4, 3.0);
    for (int dim : new int[] {-1, WeightBreakScan.MAX_COLUMNS + 1}) {
      ByteArrayOutputStream bytes = new ByteArrayOutputStream();
      DataOutputStream out = new DataOutputStream(bytes);
      out.writeLong(0);
      out.writeLong(0);
      out.writeInt(dim);
      IOException e = assertThrows(IOException.class, () -> scan.readFrom(in(bytes.toByteArray())));
      assertEquals("corrupt drift checkpoint: a stability scan of " + dim + " columns", e.getMessage());
    }
    ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    DataOutputStream out = new DataOutputStream(bytes);
    out.writeLong(0);
    out.writeLong(0);
    out.writeInt(2);
    out.writeLong(1L);
    out.writeInt(-1);
    IOException e = assertThrows(IOException.class, () -> scan.readFrom(in(bytes.toByteArray())));
    assertEquals("corrupt drift checkpoint: -1 stability blocks", e.getMessage());
    // the largest allowed width is read (one block being filled, nothing kept)
    WeightBreakScan wide = new WeightBreakScan(10, 4, 3.0);
    double[] row = new double[WeightBreakScan.MAX_COLUMNS];
    Arrays.fill(row, 1.0);
    wide.observe(row, 1.0, row.length, 0L);
    assertTrue(wide.hasState());
    WeightBreakScan back = new WeightBreakScan(10, 4, 3.0);
    back.readFrom(in(state(wide)));
    assertArrayEquals(state(wide), state(back));
  }

  private static DataInputStream in(byte[] b) {
    return new DataInputStream(new ByteArrayInputStream(b));
  }

  private static byte[] state(WeightBreakScan s) throws IOException {
    ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    s.writeTo(new DataOutputStream(bytes));
    return bytes.toByteArray();
  }
}
