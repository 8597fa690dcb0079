package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
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
 * {@link InformationSums} (the pending share) against the sums written out over the rows: every
 * row is kept here with its weight, each re-basing is applied to the kept rows themselves
 * ({@code x'_k = (x_k - shift x_0) / scale}, the map of {@link RlsModel#columnRebased}), and
 * {@code A = X^T W X}, {@code b = X^T W y}, {@code c = y^T W y}, {@code n = sum w} are summed
 * directly. The factor must give {@code S^T S = A} and {@code S^T u = b}, and the residual
 * {@code c - b^T A^-1 b} (weighted least squares, common practice) is solved with Commons Math's
 * {@link LUDecomposition}. The sums keep their own bases and compose the maps; this reference
 * never composes anything.
 */
class InformationSumsReferenceTest {

  /** The rows as given, moved to the current bases at each re-basing. */
  static final class Rows {
    int p;
    final List<double[]> x = new ArrayList<>();
    final List<Double> y = new ArrayList<>();
    final List<Double> w = new ArrayList<>();

    Rows(int p) {
      this.p = p;
    }

    void columnAdded() {
      for (int i = 0; i < x.size(); i++) {
        x.set(i, Arrays.copyOf(x.get(i), p + 1));
      }
      p++;
    }

    void rebased(int k, double sc, double shift) {
      for (double[] r : x) {
        r[k] = (r[k] - shift * r[0]) / sc;
      }
    }

    void update(double[] row, double target, double lambda) {
      for (int i = 0; i < w.size(); i++) {
        w.set(i, w.get(i) * lambda);
      }
      x.add(Arrays.copyOf(row, p));
      y.add(target);
      w.add(1.0);
    }

    double[][] a() {
      double[][] a = new double[p][p];
      for (int r = 0; r < x.size(); r++) {
        double[] v = x.get(r);
        for (int i = 0; i < p; i++) {
          for (int j = 0; j < p; j++) {
            a[i][j] += w.get(r) * v[i] * v[j];
          }
        }
      }
      return a;
    }

    double[] b() {
      double[] b = new double[p];
      for (int r = 0; r < x.size(); r++) {
        for (int i = 0; i < p; i++) {
          b[i] += w.get(r) * x.get(r)[i] * y.get(r);
        }
      }
      return b;
    }

    double c() {
      double c = 0;
      for (int r = 0; r < x.size(); r++) {
        c += w.get(r) * y.get(r) * y.get(r);
      }
      return c;
    }

    double n() {
      double n = 0;
      for (double v : w) {
        n += v;
      }
      return n;
    }

    /** {@code c - b^T A^-1 b} over the columns {@code keep} (Commons Math LU). */
    double rss(int[] keep) {
      double[][] a = a();
      double[] b = b();
      int m = keep.length;
      RealMatrix am = new Array2DRowRealMatrix(m, m);
      RealVector bv = new ArrayRealVector(m);
      for (int i = 0; i < m; i++) {
        bv.setEntry(i, b[keep[i]]);
        for (int j = 0; j < m; j++) {
          am.setEntry(i, j, a[keep[i]][keep[j]]);
        }
      }
      RealVector theta = new LUDecomposition(am).getSolver().solve(bv);
      return c() - bv.dotProduct(theta);
    }
  }

  static int[] all(int p) {
    int[] k = new int[p];
    for (int i = 0; i < p; i++) {
      k[i] = i;
    }
    return k;
  }

  /** Factors {@code s} and checks it against {@code ref}; returns the factor's rows. */
  static double[][] check(InformationSums s, Rows ref, int[] keep, String where) {
    int p = ref.p;
    assertEquals(p, s.dimension(), where);
    double[][] rows = new double[p][p + 2];
    double[] u = new double[p + 2];
    for (double[] r : rows) {
      Arrays.fill(r, Double.NaN); // every entry of the first p must be written
    }
    Arrays.fill(u, Double.NaN);
    double rss = s.sqrtInformation(rows, u);
    double[][] a = ref.a();
    double[] b = ref.b();
    double big = 0;
    for (int i = 0; i < p; i++) {
      big = Math.max(big, Math.abs(a[i][i]));
    }
    for (int i = 0; i < p; i++) {
      for (int j = 0; j < p; j++) {
        double e = 0;
        for (int k = 0; k <= Math.min(i, j); k++) {
          e += rows[k][i] * rows[k][j];
        }
        assertEquals(a[i][j], e, 1e-9 * big, where + ": (S^T S)(" + i + ", " + j + ")");
        if (j < i) {
          assertEquals(0.0, rows[i][j], 0.0, where + ": below the diagonal (" + i + ", " + j + ")");
        }
      }
      double e = 0;
      for (int k = 0; k <= i; k++) {
        e += rows[k][i] * u[k];
      }
      assertEquals(b[i], e, 1e-9 * Math.sqrt(big * ref.c()), where + ": (S^T u)(" + i + ")");
    }
    assertEquals(ref.n(), s.effectiveSampleSize(), 1e-12 * ref.n(), where + ": sample size");
    assertEquals(ref.rss(keep), rss, 1e-8 * ref.c(), where + ": residual sum of squares");
    return rows;
  }

  @Test
  void sumsUnderReBasingsAdditionsAndForgettingAreTheDirectSums() {
    Random rnd = new Random(2112);
    int numeric = 2;
    InformationSums s = new InformationSums(3);
    Rows ref = new Rows(3);
    // raw values come from a fixed distribution; the basis (offset, scale) of each numeric column
    // moves as a running scaler's would, and both sides are told by columnRebased
    double[] off = new double[16];
    double[] sc = new double[16];
    Arrays.fill(sc, 1.0);
    for (int step = 0; step < 400; step++) {
      if (step % 37 == 5 && ref.p < 12) {
        s.columnAdded(); // a one-hot level: past the first 8 columns the arrays grow
        ref.columnAdded();
      }
      for (int k = 1; k <= numeric; k++) {
        if (rnd.nextInt(3) == 0) {
          double newOff = 10 * k + rnd.nextGaussian();
          double newSc = k * Math.exp(0.3 * rnd.nextGaussian());
          double shift = (newOff - off[k]) / sc[k];
          double scale = newSc / sc[k];
          s.columnRebased(k, scale, shift);
          ref.rebased(k, scale, shift);
          off[k] = newOff;
          sc[k] = newSc;
        }
      }
      double[] x = new double[ref.p];
      x[0] = 1;
      double y = 1;
      for (int k = 1; k <= numeric; k++) {
        double raw = 10 * k + k * rnd.nextGaussian();
        x[k] = (raw - off[k]) / sc[k];
        y += (k == 1 ? 0.5 : -0.3) * raw;
      }
      int level = 1 + numeric + rnd.nextInt(ref.p - numeric);
      if (level < ref.p) {
        x[level] = 1;
        y += 0.2 * level;
      }
      y += 0.3 * rnd.nextGaussian();
      double lambda = step % 5 == 0 ? 1.0 : StrictMath.pow(2.0, -rnd.nextInt(300) / 2000.0);
      add(s, x, y, lambda);
      ref.update(x, y, lambda);
      if (step % 50 == 49) {
        check(s, ref, all(ref.p), "step " + step);
        // a factoring applies the maps: the next rows are in the new bases as before
      }
    }
    assertTrue(ref.p >= 12, "the arrays grew");
    check(s, ref, all(ref.p), "end");
  }

  @Test
  void aBasisMovedTwiceComposesAsTheTwoMovesDo() {
    // column 1 moved by (sc 2, shift 3) and then by (sc 0.5, shift -1): the sums must equal those
    // of rows moved twice, and of rows given in the final basis from the start
    Random rnd = new Random(5);
    InformationSums moved = new InformationSums(2);
    Rows ref = new Rows(2);
    for (int i = 0; i < 20; i++) {
      double[] x = {1, rnd.nextGaussian() * 4 + 2};
      double y = 1 + x[1] + rnd.nextGaussian();
      add(moved, x, y, 1.0);
      ref.update(x, y, 1.0);
    }
    moved.columnRebased(1, 2.0, 3.0);
    ref.rebased(1, 2.0, 3.0);
    moved.columnRebased(1, 0.5, -1.0);
    ref.rebased(1, 0.5, -1.0);
    // a row given now is in the twice-moved basis
    double[] x = {1, 0.7};
    add(moved, x, 2.5, 1.0);
    ref.update(x, 2.5, 1.0);
    check(moved, ref, all(2), "composed");
    // the one map equivalent to both: x'' = (x - 2) / 1 (shift 3 then, in units of scale 2, -1)
    InformationSums once = new InformationSums(2);
    Rows refOnce = new Rows(2);
    Random again = new Random(5);
    for (int i = 0; i < 20; i++) {
      double[] r = {1, again.nextGaussian() * 4 + 2};
      double yy = 1 + r[1] + again.nextGaussian();
      add(once, r, yy, 1.0);
      refOnce.update(r, yy, 1.0);
    }
    once.columnRebased(1, 1.0, 1.0);
    refOnce.rebased(1, 1.0, 1.0);
    add(once, x, 2.5, 1.0);
    refOnce.update(x, 2.5, 1.0);
    double[][] r1 = new double[2][2];
    double[][] r2 = new double[2][2];
    double[] u1 = new double[2];
    double[] u2 = new double[2];
    double rss1 = moved.sqrtInformation(r1, u1);
    double rss2 = once.sqrtInformation(r2, u2);
    for (int i = 0; i < 2; i++) {
      assertArrayEquals(r2[i], r1[i], 1e-9);
    }
    assertArrayEquals(u2, u1, 1e-9);
    assertEquals(rss2, rss1, 1e-9);
  }

  @Test
  void aScaleDecayedPast2ToTheMinus60IsRenormalizedWithoutChangingTheSums() {
    // 8 columns (the arrays' first capacity); halvings by 1 and then by 2^20 per step: the stored
    // scale would underflow after 1074 halvings if it were never brought back
    Random rnd = new Random(60);
    InformationSums s = new InformationSums(8);
    Rows ref = new Rows(8);
    for (int step = 0; step < 160; step++) {
      double[] x = new double[8];
      x[0] = 1;
      for (int k = 1; k < 8; k++) {
        x[k] = rnd.nextGaussian();
      }
      double y = 2 + x[1] - x[2] + 0.1 * rnd.nextGaussian();
      double lambda = step < 3 || step >= 140 ? 1.0 : step < 80 ? 0.5 : 0x1p-20;
      add(s, x, y, lambda);
      ref.update(x, y, lambda);
      if (step == 62 || step == 79) {
        check(s, ref, all(8), "step " + step);
      }
    }
    check(s, ref, all(8), "after 1,277 halvings");
  }

  @Test
  void theMapOfAColumnUsesColumnZerosEntryWhateverItIs() {
    // x'_k = (x_k - shift x_0) / scale holds for any x_0, not only a constant 1
    Random rnd = new Random(77);
    InformationSums s = new InformationSums(3);
    Rows ref = new Rows(3);
    for (int i = 0; i < 30; i++) {
      if (i % 10 == 3) {
        double sc = Math.exp(rnd.nextGaussian());
        double shift = rnd.nextGaussian();
        s.columnRebased(1 + i % 2, sc, shift);
        ref.rebased(1 + i % 2, sc, shift);
      }
      double[] x = {0.5 + rnd.nextDouble() * 3, rnd.nextGaussian(), rnd.nextGaussian()};
      double y = x[0] - x[1] + rnd.nextGaussian();
      add(s, x, y, 0.97);
      ref.update(x, y, 0.97);
    }
    check(s, ref, all(3), "x_0 not 1");
  }

  @Test
  void aColumnDependentOnOthersToRoundingGetsAZeroRowAtAnyScale() {
    // a column that is 3 x column 1 (plus a part of 1e-12) is not determined: at entries of
    // about 1000 its pivot is rounding (about 1e-10 of a diagonal near 4e7), at most 1e-14 of
    // the diagonal, whatever the sign the rounding takes (docs/model.md: "a zero row")
    for (int seed = 0; seed < 10; seed++) {
      Random rnd = new Random(seed);
      InformationSums s = new InformationSums(3);
      Rows ref = new Rows(3);
      for (int i = 0; i < 40; i++) {
        double v = 1000 * rnd.nextGaussian();
        double[] x = {1, v, 3 * v + 1e-12 * rnd.nextGaussian()};
        double y = 1 + 0.002 * v + rnd.nextGaussian();
        add(s, x, y, 1.0);
        ref.update(x, y, 1.0);
      }
      double[][] rows = check(s, ref, new int[] {0, 1}, "seed " + seed);
      for (int j = 0; j < 3; j++) {
        assertEquals(0.0, rows[2][j], 0.0, "seed " + seed + ": the dependent column's row");
      }
    }
  }

  @Test
  void aColumnTheRowsDoNotDetermineGetsAZeroRow() {
    // the constant and three one-hot levels, one in every row: the last level is the constant
    // minus the other two, so its pivot is 0 to rounding (docs/model.md: "a zero row")
    Random rnd = new Random(3);
    InformationSums s = new InformationSums(5);
    Rows ref = new Rows(5);
    for (int i = 0; i < 40; i++) {
      double[] x = new double[5];
      x[0] = 1;
      x[1] = rnd.nextGaussian();
      int level = 2 + rnd.nextInt(3);
      x[level] = 1;
      double y = 1 + 2 * x[1] + level + 0.2 * rnd.nextGaussian();
      add(s, x, y, 0.98);
      ref.update(x, y, 0.98);
    }
    double[][] rows = check(s, ref, new int[] {0, 1, 2, 3}, "rank deficient");
    for (int j = 0; j < 5; j++) {
      assertEquals(0.0, rows[4][j], 0.0, "the undetermined column's row");
    }
  }

  @Test
  void noColumnsHoldsOnlyTheTargetsSumOfSquares() {
    InformationSums s = new InformationSums(0);
    double c = 0;
    double n = 0;
    double[] ys = {1.5, -2, 3};
    for (double y : ys) {
      add(s, new double[0], y, 0.5);
      c = 0.5 * c + y * y;
      n = 0.5 * n + 1;
    }
    assertEquals(c, s.sqrtInformation(new double[0][0], new double[0]), 1e-12);
    assertEquals(n, s.effectiveSampleSize(), 0.0);
  }

  @Test
  void aCheckpointContinuesBitForBitWithItsBasesStillToApply() throws IOException {
    Random rnd = new Random(8);
    InformationSums s = new InformationSums(3);
    Rows ref = new Rows(3);
    for (int i = 0; i < 30; i++) {
      double[] x = {1, rnd.nextGaussian(), rnd.nextInt(2)};
      double y = x[1] + rnd.nextGaussian();
      add(s, x, y, 0.9);
      ref.update(x, y, 0.9);
    }
    s.columnRebased(1, 1.7, -0.4); // pending when the checkpoint is written
    ref.rebased(1, 1.7, -0.4);
    byte[] cp = bytes(s);
    InformationSums back = read(cp);
    assertArrayEquals(cp, bytes(back), "the checkpoint does not read back to the same bytes");
    for (InformationSums t : List.of(s, back)) {
      t.columnAdded();
      add(t, new double[] {1, 0.3, 1, 2.0}, 1.1, 0.9);
    }
    ref.columnAdded();
    ref.update(new double[] {1, 0.3, 1, 2.0}, 1.1, 0.9);
    ref.update(new double[] {1, -0.3, 0, -1.0}, 0.4, 1.0);
    add(s, new double[] {1, -0.3, 0, -1.0}, 0.4, 1.0);
    add(back, new double[] {1, -0.3, 0, -1.0}, 0.4, 1.0);
    assertArrayEquals(bytes(s), bytes(back), "the read copy continues differently");
    check(back, ref, all(4), "read back");
  }

  @Test
  void aCheckpointWithAValueOutOfRangeIsRefusedByName() throws IOException {
    // p, scale, c, n, then per row: the triangle's entries, b, the basis scale and shift
    refusedWith(new double[0], -1, "pending share has -1 columns");
    refusedWith(new double[0], ModelShare.MAX_COLUMNS + 1, "pending share has " + (ModelShare.MAX_COLUMNS + 1));
    double[] good = {1.0, 4.0, 3.0, /* row 0 */ 2.0, 0.5, 1.0, 1.0, 0.0, /* row 1 */ 1.5, -1.0, 1.0, 0.0};
    // the good one reads
    assertEquals(2, read(raw(2, good)).dimension());
    refused(good, 0, 0.0, "pending share scale 0.0");
    refused(good, 0, -1.0, "pending share scale -1.0");
    refused(good, 0, Double.POSITIVE_INFINITY, "pending share scale");
    refused(good, 1, -1e-300, "target sum of squares");
    refused(good, 1, Double.NaN, "target sum of squares");
    refused(good, 2, -1.0, "sample size -1.0");
    refused(good, 2, Double.POSITIVE_INFINITY, "sample size");
    refused(good, 3, -2.0, "information entry -2.0"); // a diagonal entry
    refused(good, 4, Double.NaN, "information entry NaN"); // off the diagonal: any finite value
    refused(good, 5, Double.NEGATIVE_INFINITY, "information vector entry");
    refused(good, 6, 0.0, "basis scale 0.0");
    refused(good, 6, Double.NaN, "basis scale");
    refused(good, 7, Double.POSITIVE_INFINITY, "basis shift");
    refused(good, 8, -0.5, "information entry -0.5");
    refused(good, 10, -3.0, "basis scale -3.0");
    // the other ends: zero sums, a negative off-diagonal entry, a negative shift
    double[] edge = good.clone();
    edge[1] = 0.0;
    edge[2] = 0.0;
    edge[3] = 0.0;
    edge[4] = -7.0;
    edge[5] = -1.0;
    edge[7] = -2.0;
    edge[8] = 0.0;
    assertEquals(2, read(raw(2, edge)).dimension());
    // a map read back is applied: basis scale 2 on column 1 halves its entries
    double[] mapped = {1.0, 0.0, 1.0, /* row 0 */ 1.0, 0.0, 0.0, 1.0, 0.0, /* row 1 */ 4.0, 0.0, 2.0, 0.0};
    InformationSums m = read(raw(2, mapped));
    double[][] rows = new double[2][2];
    m.sqrtInformation(rows, new double[2]);
    assertEquals(1.0, rows[1][1], 1e-15, "A_11 = 4 / 2^2 after the map (sqrt: 1)");
    // a shift alone (scale 1, shift 3): A'_01 = 0 - 3 * 1, A'_11 = 4 - 0 + 9 * 1; Cholesky 1, -3, 2
    double[] shifted = mapped.clone();
    shifted[10] = 1.0;
    shifted[11] = 3.0;
    InformationSums h = read(raw(2, shifted));
    h.sqrtInformation(rows, new double[2]);
    assertEquals(-3.0, rows[0][1], 1e-15);
    assertEquals(2.0, rows[1][1], 1e-15);
    // no columns at all reads back
    InformationSums none = new InformationSums(0);
    add(none, new double[0], 2.0, 1.0);
    InformationSums noneBack = read(bytes(none));
    assertEquals(0, noneBack.dimension());
    assertEquals(4.0, noneBack.sqrtInformation(new double[0][0], new double[0]), 0.0);
  }

  @Test
  void anOlderCheckpointsModelWithoutPriorBecomesTheSameSums() {
    // version-1 checkpoints kept the pending share as an RlsModel without prior
    ModelSettings none = ModelSettings.defaults().withPriorVariance(ModelSettings.DIFFUSE).withWindupGuard(false);
    RlsModel old = new RlsModel(3, none);
    Rows ref = new Rows(3);
    Random rnd = new Random(17);
    for (int i = 0; i < 25; i++) {
      double[] x = {1, rnd.nextGaussian(), rnd.nextGaussian()};
      double y = 1 + x[1] + 2 * x[2] + rnd.nextGaussian();
      old.update(x, y, 0.95);
      ref.update(x, y, 0.95);
    }
    old.columnRebased(2, 2.0, 0.5);
    ref.rebased(2, 2.0, 0.5);
    check(InformationSums.fromModel(old), ref, all(3), "from a model");
  }

  /** Forgets by {@code lambda} and adds the row {@code (x, y)}, every entry of {@code x} in its own column. */
  static void add(InformationSums s, double[] x, double y, double lambda) {
    int[] id = new int[x.length];
    for (int j = 0; j < id.length; j++) {
      id[j] = j;
    }
    s.update(x, id, id, x.length, y, lambda);
  }

  static byte[] bytes(InformationSums s) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    s.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  static InformationSums read(byte[] b) throws IOException {
    return InformationSums.readFrom(new DataInputStream(new ByteArrayInputStream(b)));
  }

  static byte[] raw(int p, double[] values) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    DataOutputStream o = new DataOutputStream(b);
    o.writeInt(p);
    for (double v : values) {
      o.writeDouble(v);
    }
    return b.toByteArray();
  }

  static void refusedWith(double[] values, int p, String words) throws IOException {
    byte[] b = raw(p, values);
    IOException e = assertThrows(IOException.class, () -> read(b));
    assertTrue(e.getMessage().contains(words), e.getMessage());
  }

  static void refused(double[] good, int at, double value, String words) throws IOException {
    double[] v = good.clone();
    v[at] = value;
    refusedWith(v, 2, words);
  }
}
