package dev.runnel.core.drift;

import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;

/**
 * A per-coefficient stability test kept all the time (not only after an error-level alarm): it
 * names the columns whose weights broke, even when the columns are correlated and the change is too
 * small for the error-level test. One writer thread.
 *
 * <p>Method: the two-sample test of equal regression coefficients (Chow 1960, <i>Econometrica</i>
 * 28, 591–605), one coefficient at a time, between two disjoint stretches of the stream, evaluated
 * on a schedule with several lengths of the recent stretch, as in the moving-estimates and
 * fluctuation tests of parameter constancy (Ploberger, Krämer and Kontrus 1989, <i>Journal of
 * Econometrics</i> 40, 307–318; Chu, Hornik and Kuan 1995, <i>Biometrika</i> 82, 603–617). The
 * trained records (raw-unit rows {@code x}, targets {@code y}) are summed in blocks of
 * {@code B = blockRecords} records ({@code Σxxᵀ}, {@code Σxy}, {@code Σy²}, {@code n}: {@code O(p²)}
 * per record, no allocation); the last {@code K = blocks} complete blocks are kept. At the end of
 * every block (a "look"), for each length {@code L} = 1, 2, 4, … blocks (up to {@code K/2}, and
 * with at least as many older blocks), the least-squares fit of the last {@code L} blocks (the
 * recent stretch) is compared with the fit of all older kept blocks (the reference), column by
 * column:
 *
 * <pre>  z_j = (β̂_recent,j − β̂_reference,j) / (σ̂ √(V_recent,jj + V_reference,jj))</pre>
 *
 * where {@code V = (XᵀX)⁻¹} of each stretch and {@code σ̂²} the pooled residual variance of the two
 * fits. Each fit's {@code j}-th entry is the weight of column {@code j} with the other columns
 * held fixed, so a change in one column does not spill into the columns it is correlated with
 * (its least-squares estimate is the efficient, decorrelated one; a raw score {@code Σ x·e} would
 * spread it: its mean is {@code XᵀX·Δ}). A column is named when its largest {@code |z|} over the
 * lengths at one look exceeds {@code threshold}; the names of one look are ordered by {@code |z|},
 * largest first, and the kept blocks are then dropped, so that the next look compares stretches
 * after the break with each other (as a monitoring test restarts after a detection). (References
 * are given from memory.)
 *
 * <p>False alarms: at one look the test makes at most {@code m·p} comparisons ({@code m} lengths,
 * {@code p} columns); by Bonferroni's inequality the chance that any exceeds {@code k} under
 * stability is at most {@code 2·m·p·Φ(−k)}, and over {@code N} records at most {@code N/B} times that.
 * The looks are strongly correlated (they share most of their data), so the true rate is far
 * smaller; the default threshold is calibrated on the stationary trials of the change harness
 * (docs/drift.md).
 *
 * <p>Identifiability: both stretches are fitted in one equilibrated basis (each column scaled by
 * its pooled root sum of squares) with a ridge of {@value #RIDGE}. Only a column whose weight is
 * identified in both stretches (the same for every least-squares solution) is tested: a constant
 * beside every level of a one-hot feature, those levels, and a column without data in a stretch are
 * not (their contrasts are, in the snapshots' contrasts). Columns added or removed drop the kept
 * blocks. Above {@value #MAX_COLUMNS} columns the scan waits (its memory is {@code K·p²} numbers).
 *
 * <p>Cost: {@code O(p²)} per record for the sums; a look costs {@code O(K·p² + m·p³)}, once per
 * {@code B} records.
 */
public final class WeightBreakScan {

  /** The ridge added to the equilibrated information (scaled to unit mean diagonal). */
  static final double RIDGE = 1e-9;
  /** A column is identified in a stretch when {@code ε·[B⁺]_jj} is below this (see {@code fit}). */
  static final double IDENTIFIED = 1e-3;
  /** Above this many columns the scan waits. */
  public static final int MAX_COLUMNS = 256;

  private final int blockRecords;
  private final int blocks;
  private final double threshold;

  // state (checkpointed)
  private int p;
  private long layoutVersion = Long.MIN_VALUE;
  /** The block being filled. */
  private double[][] curA;
  private double[] curS;
  private double curYy;
  private long curN;
  /** Complete blocks, a ring: {@code filled} of them, the newest at {@code newest}. */
  private double[][][] ringA;
  private double[][] ringS;
  private double[] ringYy;
  private long[] ringN;
  private int newest = -1;
  private int filled;
  private long looks;
  private long fired;

  // scratch (not state)
  private double[][] winA;
  private double[] winS;
  private double[][] totA;
  private double[] totS;
  private double[][] refA;
  private double[] refS;
  private double[][] eq;
  private double[][] chol;
  private double[][] cholInv;
  private double[][] inv;
  private double[] dInv;
  private double[] tmp;
  private double[] betaW;
  private double[] betaR;
  private double[] varW;
  private double[] varR;
  private double[] bestZ;
  private double[] bestBefore;
  private double[] bestAfter;
  private int[] order;
  private int namedCount;

  /**
   * @param blockRecords trained records per block (one look per block); 0 turns the scan off
   * @param blocks complete blocks kept (the longest recent stretch is half of them)
   * @param threshold a column is named above this many standard errors
   */
  public WeightBreakScan(int blockRecords, int blocks, double threshold) {
    this.blockRecords = blockRecords;
    this.blocks = blocks;
    this.threshold = threshold;
  }

  /** Whether it is on. */
  public boolean enabled() { return blockRecords > 0 && blocks >= 2; }

  /** The threshold in standard errors. */
  public double threshold() { return threshold; }

  /** Looks made since the start. */
  public long looks() { return looks; }

  /** Looks that named a column, since the start. */
  public long fired() { return fired; }

  /** Complete blocks kept now. */
  public int filledBlocks() { return filled; }

  /**
   * One trained record (hot path: {@code O(p²)}, no allocation once warm; a look at the end of a
   * block is {@code O(K·p² + m·p³)}). Non-finite rows and targets are skipped.
   *
   * @param x the record's raw-unit row. Not modified.
   * @param y the target (in the model's units)
   * @param dimension the row's length
   * @param layout the layout version (columns added or removed)
   * @return true when this record ended a block whose look named columns (read them with
   *     {@link #namedCount}, {@link #namedColumn}, …, before the next call)
   */
  public boolean observe(double[] x, double y, int dimension, long layout) {
    if (!enabled()) {
      return false;
    }
    if (dimension != p || layout != layoutVersion) {
      start(dimension, layout); // cold path: columns came or went
    }
    if (p == 0 || !Double.isFinite(y)) {
      return false;
    }
    for (int j = 0; j < p; j++) {
      if (!Double.isFinite(x[j])) {
        return false;
      }
    }
    double[][] a = curA;
    double[] s = curS;
    for (int i = 0; i < p; i++) {
      double xi = x[i];
      s[i] += xi * y;
      double[] ai = a[i];
      for (int j = i; j < p; j++) {
        ai[j] += xi * x[j];
      }
    }
    curYy += y * y;
    curN++;
    if (curN < blockRecords) {
      return false;
    }
    push();
    return look();
  }

  /** Drops everything kept and sizes the arrays for {@code dimension} columns (cold path). */
  private void start(int dimension, long layout) {
    layoutVersion = layout;
    filled = 0;
    newest = -1;
    curYy = 0.0;
    curN = 0;
    if (dimension <= 0 || dimension > MAX_COLUMNS) {
      p = 0;
      return;
    }
    if (dimension != p || curA == null) {
      p = dimension;
      curA = new double[p][p];
      curS = new double[p];
      ringA = new double[blocks][p][p];
      ringS = new double[blocks][p];
      ringYy = new double[blocks];
      ringN = new long[blocks];
      winA = new double[p][p];
      winS = new double[p];
      totA = new double[p][p];
      totS = new double[p];
      refA = new double[p][p];
      refS = new double[p];
      eq = new double[p][p];
      chol = new double[p][p];
      cholInv = new double[p][p];
      inv = new double[p][p];
      dInv = new double[p];
      tmp = new double[p];
      betaW = new double[p];
      betaR = new double[p];
      varW = new double[p];
      varR = new double[p];
      bestZ = new double[p];
      bestBefore = new double[p];
      bestAfter = new double[p];
      order = new int[p];
    } else {
      clear(curA, curS);
    }
  }

  private void clear(double[][] a, double[] s) {
    for (int i = 0; i < p; i++) {
      java.util.Arrays.fill(a[i], 0.0);
    }
    java.util.Arrays.fill(s, 0.0);
  }

  /** The block being filled becomes the newest kept block (the oldest is dropped when the ring is full). */
  private void push() {
    newest = (newest + 1) % blocks;
    double[][] oldA = ringA[newest];
    double[] oldS = ringS[newest];
    ringA[newest] = curA;
    ringS[newest] = curS;
    ringYy[newest] = curYy;
    ringN[newest] = curN;
    curA = oldA;
    curS = oldS;
    clear(curA, curS);
    curYy = 0.0;
    curN = 0;
    if (filled < blocks) {
      filled++;
    }
  }

  /** One look: every length against the older kept blocks. Returns true when columns were named. */
  private boolean look() {
    if (filled < 2) {
      return false;
    }
    looks++;
    clear(totA, totS);
    double totYy = 0.0;
    long totN = 0;
    for (int k = 0; k < filled; k++) {
      int b = Math.floorMod(newest - k, blocks);
      add(totA, totS, ringA[b], ringS[b]);
      totYy += ringYy[b];
      totN += ringN[b];
    }
    clear(winA, winS);
    double winYy = 0.0;
    long winN = 0;
    java.util.Arrays.fill(bestZ, 0.0);
    int maxLength = blocks / 2;
    for (int len = 1; len <= maxLength && 2 * len <= filled; len++) {
      int b = Math.floorMod(newest - (len - 1), blocks);
      add(winA, winS, ringA[b], ringS[b]);
      winYy += ringYy[b];
      winN += ringN[b];
      if ((len & (len - 1)) != 0) {
        continue; // lengths 1, 2, 4, 8, …
      }
      for (int i = 0; i < p; i++) {
        double[] ti = totA[i];
        double[] wi = winA[i];
        double[] ri = refA[i];
        for (int j = i; j < p; j++) {
          ri[j] = ti[j] - wi[j];
        }
        refS[i] = totS[i] - winS[i];
      }
      compare(winYy, winN, totYy - winYy, totN - winN);
    }
    namedCount = 0;
    for (int j = 0; j < p; j++) {
      if (Math.abs(bestZ[j]) > threshold) {
        order[namedCount++] = j;
      }
    }
    if (namedCount == 0) {
      return false;
    }
    // largest |z| first; ties in column order (insertion sort of a few indices, no allocation)
    for (int i = 1; i < namedCount; i++) {
      int v = order[i];
      int k = i - 1;
      while (k >= 0 && Math.abs(bestZ[order[k]]) < Math.abs(bestZ[v])) {
        order[k + 1] = order[k];
        k--;
      }
      order[k + 1] = v;
    }
    fired++;
    filled = 0;
    newest = -1;
    return true;
  }

  private void add(double[][] into, double[] intoS, double[][] a, double[] s) {
    for (int i = 0; i < p; i++) {
      double[] t = into[i];
      double[] ai = a[i];
      for (int j = i; j < p; j++) {
        t[j] += ai[j];
      }
      intoS[i] += s[i];
    }
  }

  /** Compares the recent stretch (winA…) with the reference (refA…) and keeps each column's largest |z|. */
  private void compare(double winYy, long winN, double refYy, long refN) {
    if (winN < 2L * p || refN < 2L * p) {
      return;
    }
    for (int i = 0; i < p; i++) {
      double d = winA[i][i] + refA[i][i];
      dInv[i] = d > 0 ? 1.0 / Math.sqrt(d) : 0.0; // a column without data anywhere: zero, and not identified
    }
    double totN = winN + refN;
    double rssW = fit(winA, winS, winYy, Math.sqrt(totN / winN), betaW, varW);
    if (Double.isNaN(rssW)) {
      return;
    }
    double rssR = fit(refA, refS, refYy, Math.sqrt(totN / refN), betaR, varR);
    double dof = totN - 2.0 * p;
    if (Double.isNaN(rssR) || !(dof > 0)) {
      return;
    }
    double sigma2 = (rssW + rssR) / dof;
    if (!(sigma2 > 0)) {
      return;
    }
    for (int j = 0; j < p; j++) {
      double v = varW[j] + varR[j];
      if (!(v > 0) || Double.isNaN(betaW[j]) || Double.isNaN(betaR[j])) {
        continue; // not identified in one of the stretches: not tested
      }
      double z = (betaW[j] - betaR[j]) / Math.sqrt(sigma2 * v);
      if (Double.isFinite(z) && Math.abs(z) > Math.abs(bestZ[j])) {
        bestZ[j] = z;
        bestBefore[j] = betaR[j];
        bestAfter[j] = betaW[j];
      }
    }
  }

  /**
   * The ridge least-squares fit of one stretch in the common equilibrated basis: weights into
   * {@code beta}, the diagonal of their unscaled covariance into {@code var}; returns the residual
   * sum of squares, NaN when the equilibrated matrix is not positive definite.
   */
  private double fit(double[][] a, double[] s, double yy, double scale, double[] beta, double[] var) {
    for (int i = 0; i < p; i++) {
      double di = dInv[i] * scale;
      for (int j = i; j < p; j++) {
        double v = a[i][j] * di * dInv[j] * scale;
        eq[i][j] = v;
        eq[j][i] = v;
      }
      eq[i][i] += RIDGE;
    }
    if (!invert()) {
      return Double.NaN;
    }
    // beta = D inv D s (D = dInv·scale)
    for (int i = 0; i < p; i++) {
      tmp[i] = s[i] * dInv[i] * scale;
    }
    for (int i = 0; i < p; i++) {
      double sum = 0.0;
      double sq = 0.0;
      double[] ii = inv[i];
      for (int k = 0; k < p; k++) {
        sum += ii[k] * tmp[k];
        sq += ii[k] * ii[k];
      }
      double d2 = dInv[i] * scale;
      beta[i] = sum * d2;
      var[i] = (ii[i] - RIDGE * sq) * d2 * d2;
    }
    // a column is identified when the ridge leaves it alone: the diagonal of (B + εI)⁻¹B, 1 − ε·inv_ii, is
    // near 1 (for a column in an exact dependency, such as a constant beside every level of a one-hot
    // feature, or without data, ε·inv_ii is of order 1); its weight is then the same for every
    // least-squares solution. Otherwise it is marked NaN (after the residual sum of squares, which needs it).
    double rss = residual(a, s, yy, beta);
    for (int i = 0; i < p; i++) {
      if (!(RIDGE * inv[i][i] < IDENTIFIED) || dInv[i] == 0.0) {
        beta[i] = Double.NaN;
      }
    }
    return rss;
  }

  /** Σy² − 2βᵀs + βᵀAβ, at least 0. */
  private double residual(double[][] a, double[] s, double yy, double[] beta) {
    // residual sum of squares: Σy² − 2βᵀs + βᵀAβ
    double bs = 0.0;
    double bab = 0.0;
    for (int i = 0; i < p; i++) {
      bs += beta[i] * s[i];
      double row = a[i][i] * beta[i];
      for (int j = i + 1; j < p; j++) {
        row += 2.0 * a[i][j] * beta[j];
      }
      bab += beta[i] * row;
    }
    return Math.max(0.0, yy - 2.0 * bs + bab);
  }

  /** inv = eq⁻¹ by Cholesky (into the scratch arrays); false when eq is not positive definite. */
  private boolean invert() {
    return SmallCholesky.invertInto(eq, p, chol, cholInv, inv);
  }

  /** Columns named by the latest look that named any. */
  public int namedCount() { return namedCount; }

  /** The k-th named column's index (largest |z| first). */
  public int namedColumn(int k) { return order[k]; }

  /** The k-th named column's signed z. */
  public double namedScore(int k) { return bestZ[order[k]]; }

  /** The k-th named column's raw weight in the reference stretch. */
  public double namedBefore(int k) { return bestBefore[order[k]]; }

  /** The k-th named column's raw weight in the recent stretch. */
  public double namedAfter(int k) { return bestAfter[order[k]]; }

  // ------------------------------------------------------------------ checkpoint

  /** Whether there is state to write (the scan has seen a record). */
  public boolean hasState() { return enabled() && (p > 0 || looks > 0 || fired > 0); }

  /** Writes the state: counters, the layout it sums for, the block being filled and the kept blocks, oldest first. */
  public void writeTo(DataOutput out) throws IOException {
    out.writeLong(looks);
    out.writeLong(fired);
    out.writeInt(p);
    if (p == 0) {
      return;
    }
    out.writeLong(layoutVersion);
    out.writeInt(filled);
    for (int k = filled - 1; k >= 0; k--) {
      int b = Math.floorMod(newest - k, blocks);
      writeBlock(out, ringA[b], ringS[b], ringYy[b], ringN[b]);
    }
    writeBlock(out, curA, curS, curYy, curN);
  }

  private void writeBlock(DataOutput out, double[][] a, double[] s, double yy, long n) throws IOException {
    out.writeLong(n);
    out.writeDouble(yy);
    for (int i = 0; i < p; i++) {
      out.writeDouble(s[i]);
      for (int j = i; j < p; j++) {
        out.writeDouble(a[i][j]);
      }
    }
  }

  /** Reads a state written by {@link #writeTo}; the settings come from the configuration. */
  public void readFrom(DataInput in) throws IOException {
    looks = DriftMonitor.count(in.readLong(), "stability looks");
    fired = DriftMonitor.count(in.readLong(), "stability alarms");
    int dim = in.readInt();
    if (dim < 0 || dim > MAX_COLUMNS) {
      throw new IOException("corrupt drift checkpoint: a stability scan of " + dim + " columns");
    }
    if (dim == 0) {
      p = 0;
      curA = null;
      layoutVersion = Long.MIN_VALUE;
      filled = 0;
      newest = -1;
      return;
    }
    long layout = in.readLong();
    int f = in.readInt();
    if (f < 0) {
      throw new IOException("corrupt drift checkpoint: " + f + " stability blocks");
    }
    p = -1; // force new arrays
    start(dim, layout);
    for (int k = 0; k < f; k++) {
      readBlock(in, curA, curS);
      curYy = lastYy;
      curN = lastN;
      if (enabled()) {
        push(); // a checkpoint with more blocks than configured keeps the newest
      }
    }
    readBlock(in, curA, curS);
    curYy = lastYy;
    curN = lastN;
  }

  private double lastYy;
  private long lastN;

  private void readBlock(DataInput in, double[][] a, double[] s) throws IOException {
    lastN = DriftMonitor.count(in.readLong(), "records in a stability block");
    lastYy = in.readDouble();
    for (int i = 0; i < p; i++) {
      s[i] = in.readDouble();
      for (int j = i; j < p; j++) {
        a[i][j] = in.readDouble();
      }
    }
  }

  /** Back to the state after construction. */
  void reset() {
    p = 0;
    curA = null;
    layoutVersion = Long.MIN_VALUE;
    filled = 0;
    newest = -1;
    curN = 0;
    curYy = 0.0;
    looks = 0;
    fired = 0;
    namedCount = 0;
  }
}
