package dev.runnel.core.drift;

import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;

/**
 * Names the columns whose weights changed, after an error-level alarm: a before/after comparison
 * of estimates from disjoint stretches of data, column by column, that accounts for correlated
 * columns. One writer thread.
 *
 * <p>Method. When the error-level test fires, the model's raw-unit weights {@code b} are frozen
 * (the "before" estimate, from the data up to the alarm). For the next {@code n} trained records
 * (raw-unit rows {@code x_t}, targets {@code y_t}) it keeps the residuals against {@code b},
 * {@code r_t = y_t − x_tᵀb}, their cumulative score {@code S = Σ x_t r_t} and the information
 * {@code A = Σ x_t x_tᵀ} ({@code O(p²)} per record, only while the window is open). The cumulative
 * score of the before-estimate is the quantity the score-based fluctuation tests of parameter
 * stability are built on (Nyblom 1989, <i>JASA</i> 84, 223–230; Hansen 1992, <i>J. Policy
 * Modeling</i> 14, 517–533). Scaled by the inverse information, {@code d = A⁻¹S} is exactly the
 * least-squares fit of the window minus {@code b}; its j-th entry is the change in column j with
 * the other columns held fixed, so a change in one column does not spill into the columns it is
 * correlated with (the raw score {@code S_j}, and Hansen's individual statistics built from it, do
 * spill: {@code E S ≈ A Δ}). Each column is then tested as in the two-sample test of equal
 * coefficients (Chow 1960, <i>Econometrica</i> 28, 591–605), one coefficient at a time:
 *
 * <pre>  z_j = d_j / (σ̂ √([A⁻¹]_jj · (1 + n / n_b)))</pre>
 *
 * where {@code σ̂} is the residual sd of the window's own fit and {@code n_b} the model's effective
 * sample size at the alarm: the variance of the before-estimate is taken as that of the window's
 * scaled by {@code n / n_b}, which holds when the rows' distribution is the same before and after
 * (and keeps a column whose own standard error is mostly the prior, such as a one-hot level beside
 * a constant term, from hiding a change in its identified contrasts). A column is named when
 * {@code |z_j|} exceeds {@code attribution_se}; the names are ordered by {@code |z|}, largest first.
 * (References are given from memory.)
 *
 * <p>Directions the window cannot identify (a constant beside a full set of one-hot columns, a
 * level not seen after the alarm) get no change: {@code A} is equilibrated to unit diagonal and
 * solved with a ridge of {@value #RIDGE}, and the standard error is that of the ridge solution
 * ({@code B⁻¹ − ε B⁻²} in the equilibrated basis), so an unidentified direction adds nothing to
 * it. A column that received no data in the window is not tested. If columns are added or removed
 * while the window is open, it closes at once: with at least {@code 2p} records it is evaluated,
 * otherwise dropped.
 */
public final class ChangeAttribution {

  /** The ridge added to the equilibrated information (unit diagonal). */
  static final double RIDGE = 1e-9;

  /** One tested column. */
  public record Change(String column, double before, double after, double score) { }

  private final int windowRecords;
  private final double threshold;

  private boolean open;
  private int p;
  private long layoutVersion;
  private String[] names;
  private double[] before;
  private double nEffBefore;
  private double[] s;
  private double[][] a;
  private double rss;
  private long n;
  private long openedAtRecord;
  private List<Change> last = List.of();

  /**
   * @param windowRecords records in the window; 0 turns the attribution off
   * @param threshold a column is named above this many standard errors
   */
  public ChangeAttribution(int windowRecords, double threshold) {
    this.windowRecords = windowRecords;
    this.threshold = threshold;
  }

  /** Whether it is on. */
  public boolean enabled() { return windowRecords > 0; }

  /** Whether a window is open (then {@link #observe} wants every trained record's raw row). */
  public boolean isOpen() { return open; }

  /** The threshold in standard errors. */
  public double threshold() { return threshold; }

  /** Records in the window so far. */
  public long windowCount() { return n; }

  /** The trained-record count at which the window opened. */
  public long openedAtRecord() { return openedAtRecord; }

  /**
   * Every tested column of the latest window this object evaluated, largest {@code |z|} first
   * (empty before one). Not kept in the checkpoint (the named columns are, as alarms): for tests
   * and tools within one run.
   */
  public List<Change> latest() { return last; }

  /**
   * Opens a window (an error-level alarm fired). Ignored when off, when one is open, or when a
   * before-weight is not finite. Cold path (allocates).
   *
   * @param columnNames column names. Not modified.
   * @param rawWeights the model's raw-unit weights now. Not modified.
   * @param dimension number of columns
   * @param effectiveSampleSize the model's effective sample size now
   * @param layout the layout version (columns added or removed)
   * @param trained the pipeline's trained-record count
   */
  public void open(String[] columnNames, double[] rawWeights, int dimension, double effectiveSampleSize, long layout,
                   long trained) {
    if (!enabled() || open || dimension <= 0) {
      return;
    }
    for (int j = 0; j < dimension; j++) {
      if (!Double.isFinite(rawWeights[j])) {
        return;
      }
    }
    p = dimension;
    names = Arrays.copyOf(columnNames, p);
    before = Arrays.copyOf(rawWeights, p);
    nEffBefore = effectiveSampleSize;
    layoutVersion = layout;
    s = new double[p];
    a = new double[p][p];
    rss = 0.0;
    n = 0;
    openedAtRecord = trained;
    open = true;
  }

  /**
   * One trained record while the window is open (hot path while open: {@code O(p²)}, no
   * allocation). Non-finite rows are skipped.
   *
   * @param x the record's raw-unit row (constant 1, scaled columns back in their input's units). Not modified.
   * @param y the target
   * @param dimension the row's length now
   * @param layout the layout version now
   * @return the columns named, largest {@code |z|} first, when this record closed the window; null otherwise
   */
  public List<Change> observe(double[] x, double y, int dimension, long layout) {
    if (!open) {
      return null;
    }
    if (layout != layoutVersion || dimension != p) {
      return close();
    }
    double r = y;
    for (int j = 0; j < p; j++) {
      r -= x[j] * before[j];
    }
    if (!Double.isFinite(r)) {
      return null;
    }
    for (int i = 0; i < p; i++) {
      double xi = x[i];
      s[i] += xi * r;
      double[] ai = a[i];
      for (int j = i; j < p; j++) {
        ai[j] += xi * x[j];
      }
    }
    rss += r * r;
    n++;
    return n >= windowRecords ? close() : null;
  }

  /** Evaluates the window if it holds at least 2p records, and closes it. Cold path. */
  private List<Change> close() {
    open = false;
    List<Change> all = n >= 2L * p ? evaluate() : null;
    s = null;
    a = null;
    if (all == null) {
      return List.of();
    }
    last = List.copyOf(all);
    List<Change> named = new ArrayList<>();
    for (Change c : all) {
      if (Math.abs(c.score()) > threshold) {
        named.add(c);
      }
    }
    return named;
  }

  /** Every testable column with its score, largest |z| first; null when the fit has no residual degrees of freedom. */
  List<Change> evaluate() {
    double[] dInv = new double[p];
    boolean[] seen = new boolean[p];
    double[][] b = new double[p][p];
    int fitted = 0; // columns with data in the window: the fit's parameters
    for (int i = 0; i < p; i++) {
      seen[i] = a[i][i] > 0;
      dInv[i] = seen[i] ? 1.0 / Math.sqrt(a[i][i]) : 0.0;
      if (seen[i]) {
        fitted++;
      }
    }
    for (int i = 0; i < p; i++) {
      for (int j = i; j < p; j++) {
        double v = a[i][j] * dInv[i] * dInv[j];
        b[i][j] = v;
        b[j][i] = v;
      }
      b[i][i] = (seen[i] ? 1.0 : 0.0) + (seen[i] ? RIDGE : 1.0);
    }
    double[][] inv = new double[p][p];
    if (!SmallCholesky.invertInto(b, p, new double[p][p], new double[p][p], inv)) {
      return null;
    }
    // d = D⁻¹ B⁻¹ D⁻¹ S
    double[] c = new double[p];
    for (int i = 0; i < p; i++) {
      c[i] = s[i] * dInv[i];
    }
    double[] d = new double[p];
    for (int i = 0; i < p; i++) {
      double sum = 0.0;
      for (int k = 0; k < p; k++) {
        sum += inv[i][k] * c[k];
      }
      d[i] = sum * dInv[i];
    }
    // residual sum of squares of the window's fit: Σ r² − 2 dᵀS + dᵀ A d
    double dS = 0.0;
    double dAd = 0.0;
    for (int i = 0; i < p; i++) {
      dS += d[i] * s[i];
      double row = a[i][i] * d[i];
      for (int j = i + 1; j < p; j++) {
        row += 2.0 * a[i][j] * d[j];
      }
      dAd += d[i] * row;
    }
    double dof = n - fitted; // a column 0 in the whole window is not fitted and takes no degree of freedom
    double rssFit = Math.max(0.0, rss - 2.0 * dS + dAd);
    if (!(dof > 0) || !(rssFit > 0)) {
      return null;
    }
    double sigma2 = rssFit / dof;
    double inflate = 1.0 + (nEffBefore > 0 ? n / nEffBefore : 0.0);
    List<Change> out = new ArrayList<>();
    for (int j = 0; j < p; j++) {
      if (!seen[j]) {
        continue;
      }
      double sq = 0.0;
      for (int k = 0; k < p; k++) {
        sq += inv[j][k] * inv[j][k];
      }
      double v = (inv[j][j] - RIDGE * sq) * dInv[j] * dInv[j];
      if (!(v > 0)) {
        continue;
      }
      double z = d[j] / Math.sqrt(sigma2 * v * inflate);
      if (Double.isFinite(z)) {
        out.add(new Change(names[j], before[j], before[j] + d[j], z));
      }
    }
    // largest |z| first; ties in column order (a stable sort)
    out.sort((x, y) -> Double.compare(Math.abs(y.score()), Math.abs(x.score())));
    return out;
  }

  // ------------------------------------------------------------------ checkpoint

  /** Writes the state. */
  public void writeTo(DataOutput out) throws IOException {
    out.writeBoolean(open);
    if (open) {
      out.writeInt(p);
      out.writeLong(layoutVersion);
      out.writeDouble(nEffBefore);
      out.writeDouble(rss);
      out.writeLong(n);
      out.writeLong(openedAtRecord);
      for (int i = 0; i < p; i++) {
        out.writeUTF(names[i]);
        out.writeDouble(before[i]);
        out.writeDouble(s[i]);
        for (int j = i; j < p; j++) {
          out.writeDouble(a[i][j]);
        }
      }
    }
  }

  /** Whether a window is open, the only state {@link #writeTo} keeps beyond "closed". */
  public boolean hasState() { return open; }

  /** Back to the state after construction. */
  void reset() {
    open = false;
    s = null;
    a = null;
    n = 0;
    last = List.of();
  }

  /** Reads a state written by {@link #writeTo}. */
  public void readFrom(DataInput in) throws IOException {
    open = in.readBoolean();
    s = null;
    a = null;
    if (open) {
      p = in.readInt();
      if (p <= 0 || p > 1_000_000) {
        throw new IOException("corrupt drift checkpoint: attribution window of " + p + " columns");
      }
      layoutVersion = in.readLong();
      nEffBefore = in.readDouble();
      rss = in.readDouble();
      n = DriftMonitor.count(in.readLong(), "attribution records");
      openedAtRecord = in.readLong();
      names = new String[p];
      before = new double[p];
      s = new double[p];
      a = new double[p][p];
      for (int i = 0; i < p; i++) {
        names[i] = in.readUTF();
        before[i] = in.readDouble();
        s[i] = in.readDouble();
        for (int j = i; j < p; j++) {
          a[i][j] = in.readDouble();
        }
      }
    }
  }
}
