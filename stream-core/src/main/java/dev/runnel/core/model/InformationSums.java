package dev.runnel.core.model;

import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;
import java.util.Arrays;

/**
 * The pending share of a {@link GlobalModel}: the weighted sums {@code A = X^T W X},
 * {@code b = X^T W y} and {@code c = y^T W y} of the rows learned since the last share, with the
 * rows' weights {@code W} decayed by every later step's forgetting factor, and their effective
 * sample size. One writer thread; not thread-safe.
 *
 * <p>Why sums and not a second {@link RlsModel}: a share needs only the rows' information, which
 * the sums hold exactly as well as a factor does; the factor is needed to solve, and the pending
 * share is never solved until it is sent. An update adds {@code x x^T} over the non-zero entries
 * of {@code x} (one-hot rows skip most of the triangle), {@code m(m+1)/2} multiply-adds for
 * {@code m} non-zeros, without square roots or divisions; forgetting multiplies one scalar,
 * as {@link RlsModel} does. {@link #sqrtInformation} factors the sums (Cholesky, common practice)
 * when a share is made. Nothing is allocated per update.
 *
 * <p>Columns are numbered as the {@link GlobalModel}'s pending table numbers them (the constant
 * term, when there is one, is column 0). A re-basing is the map of {@link RlsModel#columnRebased}
 * (the entry of column {@code k} becomes {@code (x_k - shift x_0) / scale}); the featurizer
 * re-bases every numeric column on nearly every record, so the sums are not moved at each one:
 * they stay in each column's basis of when it entered the sums (the last share, or its
 * addition), each column keeps the composed map to its current basis, {@code O(1)} per
 * re-basing, a row is brought back to the sums' bases ({@code x_k = S_k x'_k + H_k x'_0}, one
 * multiply-add per moved column), and the sums are moved to the current bases
 * ({@code A <- M^T A M}, {@code b <- M^T b}, {@code O(p)} per moved column) only when they are
 * factored.
 */
final class InformationSums {

  /** Below this the scale is brought back by an exact power of two (as {@link RlsModel}). */
  private static final double MIN_SCALE = 0x1p-60;
  /**
   * A Cholesky pivot at or below this fraction of its column's diagonal is taken as no new
   * information (a column the rows do not determine, e.g. every one-hot level beside the
   * constant term): its row of the factor is 0.
   */
  static final double PIVOT_TOLERANCE = 1e-14;

  private int p;
  /** Upper triangle, {@code a[i][j]} for {@code j >= i}, in stored units: the sums are {@code scale * a}. */
  private double[][] a;
  private double[] b;
  private double c;
  private double scale = 1.0;
  private double nEff;
  /** Non-zero positions of the row being added. */
  private int[] nz;
  /** The row being added, in the sums' bases. */
  private double[] row;
  /** Per column, the composed map to its current basis: {@code x_k = mapScale_k x'_k + mapShift_k x'_0}. */
  private double[] mapScale;
  private double[] mapShift;
  /** Per column, whether its map is not the identity. */
  private boolean[] moved;

  InformationSums(int dimension) {
    int cap = Math.max(8, dimension);
    a = new double[cap][cap];
    b = new double[cap];
    nz = new int[cap];
    row = new double[cap];
    mapScale = new double[cap];
    Arrays.fill(mapScale, 1.0);
    mapShift = new double[cap];
    moved = new boolean[cap];
    p = dimension;
  }

  int dimension() {
    return p;
  }

  /** Appends a column with no information (its index is the dimension before the call). */
  void columnAdded() {
    if (p == a.length) {
      int cap = 2 * p;
      double[][] na = new double[cap][cap];
      for (int i = 0; i < p; i++) {
        System.arraycopy(a[i], i, na[i], i, p - i);
      }
      a = na;
      b = Arrays.copyOf(b, cap);
      nz = new int[cap];
      row = new double[cap];
      mapScale = Arrays.copyOf(mapScale, cap);
      Arrays.fill(mapScale, p, cap, 1.0);
      mapShift = Arrays.copyOf(mapShift, cap);
      moved = Arrays.copyOf(moved, cap);
    }
    mapScale[p] = 1.0;
    mapShift[p] = 0.0;
    moved[p] = false;
    for (int i = 0; i <= p; i++) {
      a[i][p] = 0.0;
    }
    b[p] = 0.0;
    p++;
  }

  /**
   * As {@link RlsModel#columnRebased}: {@code x''_k = (x'_k - shift x'_0) / sc}, composed into the
   * column's map: {@code x_k = S (sc x''_k + shift x''_0) + H x''_0}. {@code O(1)}.
   */
  void columnRebased(int k, double sc, double shift) {
    mapShift[k] += mapScale[k] * shift;
    mapScale[k] *= sc;
    moved[k] = true;
  }

  /** Moves the sums to the current bases (every column's map applied), and the maps to identity. */
  private void applyMaps() {
    for (int k = 0; k < p; k++) {
      if (moved[k]) {
        rebaseSums(k, mapScale[k], mapShift[k]);
        mapScale[k] = 1.0;
        mapShift[k] = 0.0;
        moved[k] = false;
      }
    }
  }

  /** The sums under {@code x'_k = (x_k - shift x_0) / sc}: {@code A <- M^T A M}, {@code b <- M^T b}. */
  private void rebaseSums(int k, double sc, double shift) {
    // the map is linear, so the stored sums re-base as the true ones do
    if (shift != 0.0) {
      final double a00 = a[0][0];
      final double a0k = a[0][k];
      a[k][k] = a[k][k] - 2.0 * shift * a0k + shift * shift * a00;
      for (int j = 0; j < k; j++) {
        a[j][k] = a[j][k] - shift * a[0][j];
      }
      for (int j = k + 1; j < p; j++) {
        a[k][j] = a[k][j] - shift * a[0][j];
      }
      b[k] = b[k] - shift * b[0];
    }
    if (sc != 1.0) {
      for (int j = 0; j < k; j++) {
        a[j][k] /= sc;
      }
      a[k][k] /= sc * sc;
      for (int j = k + 1; j < p; j++) {
        a[k][j] /= sc;
      }
      b[k] /= sc;
    }
  }

  /**
   * Forgets by {@code lambda} and adds the row {@code (x, y)}, given in another layout (the
   * {@link GlobalModel}'s local one, so it is not copied into this object's order): entry
   * {@code x[j]} is column {@code columns[j]} here, for {@code count} entries; the columns no
   * entry names are 0.
   *
   * @param x the row in its own layout, at least {@code count} entries, each finite. Not modified.
   * @param order the indices {@code j < count} in increasing order of {@code columns[j]}. Not modified.
   * @param columns per index of {@code x}, its column here, distinct; with a constant term
   *     {@code columns[0] == 0}. Not modified.
   * @param count the number of entries of {@code x}
   * @param y its target
   * @param lambda the forgetting factor, in (0, 1]
   */
  void update(double[] x, int[] order, int[] columns, int count, double y, double lambda) {
    if (lambda != 1.0) {
      scale *= lambda;
      nEff *= lambda;
      if (scale < MIN_SCALE) {
        renormalize();
      }
    }
    final double f = scale == 1.0 ? 1.0 : 1.0 / scale;
    final int[] idx = nz;
    final double[] w = row;
    // column 0's entry (the constant term's when there is one; else every shift is 0)
    final double x0 = count > 0 && columns[0] == 0 ? x[0] : 0.0;
    Arrays.fill(w, 0, p, 0.0);
    int m = 0;
    for (int s = 0; s < count; s++) {
      final int j = order[s];
      final int k = columns[j];
      final double v = moved[k] ? mapScale[k] * x[j] + mapShift[k] * x0 : x[j];
      if (v != 0.0) {
        w[k] = v;
        idx[m++] = k;
      }
    }
    // each non-zero's row of the triangle over [i, last non-zero], zeros included: a loop over
    // one index, which the JIT turns into vector instructions (adding 0 changes no entry); the
    // same sums as over the non-zeros alone
    final int hi = m > 0 ? idx[m - 1] + 1 : 0;
    for (int s = 0; s < m; s++) {
      final int i = idx[s];
      final double xi = w[i] * f;
      final double[] ai = a[i];
      for (int j = i; j < hi; j++) {
        ai[j] += xi * w[j];
      }
      b[i] += xi * y;
    }
    c += y * f * y;
    nEff += 1.0;
  }

  /** Brings the scale back towards 1 by exactly {@code 2^60}, moving it into the stored sums. */
  private void renormalize() {
    final double down = 0x1p-60;
    for (int i = 0; i < p; i++) {
      final double[] row = a[i];
      for (int j = i; j < p; j++) {
        row[j] *= down;
      }
      b[i] *= down;
    }
    c *= down;
    scale *= 0x1p60;
  }

  /** @return the rows' effective sample size */
  double effectiveSampleSize() {
    return nEff;
  }

  /**
   * Factors the sums: an upper-triangular {@code S} and {@code u} with {@code S^T S = A},
   * {@code S^T u = b} (Cholesky and a forward substitution, {@code O(p^3)}, once per share), in
   * this object's column order; a column whose pivot is at most {@link #PIVOT_TOLERANCE} of its
   * diagonal gets a zero row and a zero {@code u} entry.
   *
   * @param rowsOut {@code p} rows of length at least {@code p}. Modified.
   * @param targetsOut length at least {@code p}. Modified.
   * @return the rows' minimum weighted residual sum of squares, {@code c - u^T u}, at least 0
   */
  double sqrtInformation(double[][] rowsOut, double[] targetsOut) {
    applyMaps();
    final int n = p;
    final double sc = scale;
    double uu = 0.0;
    for (int i = 0; i < n; i++) {
      final double[] si = rowsOut[i];
      Arrays.fill(si, 0, n, 0.0);
      final double aii = a[i][i] * sc;
      double d = aii;
      double bi = b[i] * sc;
      for (int k = 0; k < i; k++) {
        final double ski = rowsOut[k][i];
        d -= ski * ski;
        bi -= ski * targetsOut[k];
      }
      if (!(d > PIVOT_TOLERANCE * aii)) {
        targetsOut[i] = 0.0;
        continue;
      }
      final double sii = Math.sqrt(d);
      si[i] = sii;
      for (int j = i + 1; j < n; j++) {
        double e = a[i][j] * sc;
        for (int k = 0; k < i; k++) {
          e -= rowsOut[k][i] * rowsOut[k][j];
        }
        si[j] = e / sii;
      }
      final double ui = bi / sii;
      targetsOut[i] = ui;
      uu += ui * ui;
    }
    return Math.max(0.0, c * sc - uu);
  }

  void writeTo(DataOutput out) throws IOException {
    out.writeInt(p);
    out.writeDouble(scale);
    out.writeDouble(c);
    out.writeDouble(nEff);
    for (int i = 0; i < p; i++) {
      for (int j = i; j < p; j++) {
        out.writeDouble(a[i][j]);
      }
      out.writeDouble(b[i]);
      out.writeDouble(mapScale[i]);
      out.writeDouble(mapShift[i]);
    }
  }

  static InformationSums readFrom(DataInput in) throws IOException {
    int p = in.readInt();
    if (p < 0 || p > ModelShare.MAX_COLUMNS) {
      throw new IOException("corrupt global model checkpoint: pending share has " + p + " columns");
    }
    InformationSums s = new InformationSums(p);
    s.scale = finite(in.readDouble(), "scale", true);
    s.c = finite(in.readDouble(), "target sum of squares", false);
    s.nEff = finite(in.readDouble(), "sample size", false);
    for (int i = 0; i < p; i++) {
      for (int j = i; j < p; j++) {
        s.a[i][j] = finite(in.readDouble(), "information entry", j != i ? null : false);
      }
      s.b[i] = finite(in.readDouble(), "information vector entry", null);
      s.mapScale[i] = finite(in.readDouble(), "basis scale", true);
      s.mapShift[i] = finite(in.readDouble(), "basis shift", null);
      s.moved[i] = s.mapScale[i] != 1.0 || s.mapShift[i] != 0.0;
    }
    return s;
  }

  /** @param positive true: > 0; false: >= 0; null: any finite value */
  private static double finite(double v, String what, Boolean positive) throws IOException {
    boolean ok = Double.isFinite(v) && (positive == null || (positive ? v > 0 : v >= 0));
    if (!ok) {
      throw new IOException("corrupt global model checkpoint: pending share " + what + " " + v);
    }
    return v;
  }

  /**
   * The sums of an older checkpoint's pending share, kept then as an {@link RlsModel} without
   * prior: {@code A = R^T R}, {@code b = R^T z}, {@code c = rho^2 + z^T z}, in the model's layout
   * order.
   */
  static InformationSums fromModel(RlsModel m) {
    int n = m.dimension();
    double[][] rows = new double[n][n];
    double[] u = new double[n];
    int[] cols = new int[n];
    m.sqrtInformation(rows, u, cols);
    InformationSums s = new InformationSums(n);
    double uu = 0.0;
    for (int i = 0; i < n; i++) {
      uu += u[i] * u[i];
      final int ci = cols[i];
      for (int j = i; j < n; j++) {
        final int cj = cols[j];
        double e = 0.0;
        for (int q = 0; q <= i; q++) {
          e += rows[q][i] * rows[q][j];
        }
        s.a[Math.min(ci, cj)][Math.max(ci, cj)] = e;
      }
      double bi = 0.0;
      for (int q = 0; q <= i; q++) {
        bi += rows[q][i] * u[q];
      }
      s.b[ci] = bi;
    }
    s.c = m.weightedResidualSumOfSquares() + uu;
    s.nEff = m.effectiveSampleSize();
    return s;
  }
}
