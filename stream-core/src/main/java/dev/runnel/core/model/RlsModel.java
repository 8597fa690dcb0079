package dev.runnel.core.model;

import dev.runnel.core.layout.LayoutListener;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.EOFException;
import java.io.IOException;
import java.util.Arrays;

/**
 * Exponentially weighted recursive least squares with a ridge prior (or an exactly diffuse
 * start), kept in information square-root form and updated by Givens rotations. One writer
 * thread; not thread-safe.
 *
 * <p>State: an upper-triangular factor {@code R} with {@code R^T R = Lambda} (the information,
 * in units of 1/noise variance), {@code z} with {@code R theta = z}, the weights {@code theta}
 * (solved from {@code R} and {@code z} when first asked for after a change), the minimum of the weighted (and penalized) objective {@code rho^2}, the
 * effective sample size, and an exponentially weighted noise variance. The model solves
 * <pre>{@code
 *   minimize  sum_rows  w_row * (y_row - x_row^T theta)^2      (data rows and prior rows)
 * }</pre>
 * where every row, data or prior, is decayed by each later update's {@code lambda} and re-based
 * with its column. Prior rows are {@code sqrt(a) e_j} with target 0; see
 * {@link #observePriorRows}.
 *
 * <p>Costs per {@link #update}: one pass of Givens rotations over the triangle, {@code 3 p^2}
 * flops (rows before the first non-zero of {@code x} are not touched); the a-priori prediction
 * and leverage come out of the same rotations; nothing is allocated. The weights are not
 * back-substituted per update: {@link #predict} and {@link #weights} solve for them (one
 * back-substitution, {@code p^2}) only when asked after a change, and {@link #forecast} gives a
 * prediction with its leverage from one forward substitution ({@code p^2}) without them.
 * Layout changes: add {@code O(p)} (amortized; {@code O(p^2)} moves for a never-re-based column,
 * which goes into the leading block), remove {@code O(p^2)}, re-base {@code O(p)}.
 *
 * <p>Column order: the factor keeps its own order of the layout's columns: columns added as never
 * re-based (one-hot levels, {@link #columnAdded(int, String, boolean)}) first, then the constant
 * term and the columns it was built with, then other added columns. A one-hot row is zero on
 * every level but one, so its leading zeros skip the longest rows of the triangle; a re-basing
 * moves weight into the constant, whose column must precede the re-based one for the factor to
 * stay triangular, which this order keeps. A {@link GlobalModel} view puts the levels only other
 * partitions hold at the very start, before those ({@link #columnAddedAhead}). Every method takes
 * and gives vectors in layout order.
 *
 * <p>Storage: {@code R} is an array of rows, row {@code i} a {@code double[]} indexed by column,
 * so a Givens rotation reads and writes a row and the rotated data vector at the same index; the
 * JIT compiles that loop to vector instructions (with one flat array and a row offset it cannot
 * prove that the two ranges do not overlap, and runs it scalar: measured about three times
 * slower). Only the upper triangle is ever read. The update writes each rotated row into a
 * spare row and swaps the two row references on success (the two sets of rows at once when the
 * data row alone rotated every row), so a rejected update leaves the state bit-for-bit unchanged and untouched rows
 * are neither copied nor swapped.
 *
 * <p>Implementation notes: the square-root information form is QR-RLS (Givens rotations on the
 * information factor), common practice for numerically robust RLS; the windup guard is the
 * linear-Gaussian case of stabilized forgetting (R. Kulhavý and M. B. Zarrop, "On a general
 * concept of forgetting", Int. J. Control 58(4), 1993), applied one column per update. All
 * transcendental functions go through {@link StrictMath} so results are the same bits on every
 * JVM. Details and what is exact: {@code docs/model.md}.
 */
public final class RlsModel implements LayoutListener {

  /** Format version written by {@link #writeTo}. */
  public static final int FORMAT_VERSION = 3;

  /**
   * In diffuse mode a column counts as identified when its pivot {@code R_jj} exceeds this
   * times the largest pivot (about 450 ulps): below it the information is treated as rank
   * deficient and {@link #ready()} is false.
   */
  public static final double READY_TOLERANCE = 1e-13;

  /**
   * Inputs with a larger magnitude are refused by {@link #update}: rotations preserve row norms,
   * so with every input below 1e100 no factor entry can overflow for any realistic count.
   */
  public static final double MAX_ABS_INPUT = 1e100;

  /** A refresh never tops a column's prior information above this multiple of 1/priorVariance. */
  static final double MAX_REFRESH_BOOST = 1e12;

  private static final int MAGIC = 0x524e4d31; // "RNM1"

  /** Below this the factor's scale is renormalized (2^-60: stored entries stay far from overflow). */
  static final double MIN_SCALE = 0x1p-60;

  private final ModelSettings settings;
  /** 1 / priorVariance, or 0 in diffuse mode. */
  private final double priorInfo;
  private final boolean guard;
  private final double noiseDecay;

  private int p;
  private int cap;
  /**
   * The factor's own column order: {@code pos[j]} is the position of layout column {@code j} in
   * {@code R}, {@code col[q]} the layout column at position {@code q}. Columns added with
   * {@code neverRebased} (one-hot levels) are kept in a block before every other column, so a
   * row's leading zeros (the levels it does not have) come first and the update skips their rows;
   * the constant term follows them, so re-basing another column stays {@code O(p)}.
   */
  private int[] pos;
  private int[] col;
  /** Number of columns in the leading block. */
  private int front;
  /**
   * Number of columns at the very start of the leading block added by {@link #columnAddedAhead}
   * (a {@link GlobalModel} view's columns only other partitions hold); at most {@link #front}.
   * Not written by {@link #writeTo}: the global model keeps it.
   */
  private int ahead;
  /**
   * Re-basings not yet applied to {@code R}, per factor position: the shift and the scale (0 and
   * 1 where none is pending), over positions {@code [pendLo, pendHi]}; applied together, one pass
   * over the rows, before {@code R} is next read (see {@link #columnRebased}). The entries are
   * divided by the scale, as the per-column form did, so the bits are the same: multiplying by a
   * reciprocal instead lost half a digit on NIST Filip.
   */
  private double[] pendShift;
  private double[] pendScale;
  private boolean[] pending;
  private int pendLo = Integer.MAX_VALUE;
  private int pendHi = -1;
  /** Row i of the factor (position i in the factor's column order); entries {@code [i, p)} are live. */
  private double[][] r;
  /** Spare rows the update writes into; row i is swapped with {@code r[i]} on success. */
  private double[][] spare;
  /** Per row: did this update write the spare row. */
  private boolean[] rotated;
  private double[] z;
  private double[] zNext;
  private double[] theta;
  /** Whether {@link #theta} is the solution of the current {@code R theta = z}. */
  private boolean thetaValid;
  /** {@code 1 / r_ii} per factor position, valid from position {@link #invDiagFrom} on. */
  private double[] invDiag;
  /** The first position {@link #invDiag} is valid at; {@code Integer.MAX_VALUE} for none. */
  private int invDiagFrom = Integer.MAX_VALUE;
  /**
   * {@code R^-1} of the current factor (row-major p x p), or null; see {@link #inverseFactor}:
   * the entries of rows and columns from {@link #inverseStart} on (the others 0, not read).
   */
  private double[] inverse;
  private int inverseStart;
  private double[] work;
  /** The scalars {@link #dataRows} carries in and out. */
  private final double[] passAcc = new double[5];
  private double[] work2;
  /** The windup guard's refresh row during an update. */
  private double[] work3;
  /** Each column's prior information right after its last refresh (or its addition). */
  private double[] priorAtRefresh;
  /** The cumulative log-decay at that moment. */
  private double[] logDecayAtRefresh;
  /** Cumulative sum of log(lambda), renormalized to 0 now and then. */
  private double logDecay;
  private long refreshCounter;

  /**
   * The factor's scale: the information factor is {@code scale * r} and {@code R theta = z} holds
   * as {@code r theta = z} in stored units. Forgetting multiplies this scalar by
   * {@code sqrt(lambda)} instead of every entry of {@code r}; it is brought back towards 1 by an
   * exact power of two when it falls below {@link #MIN_SCALE}.
   */
  private double scale = 1.0;

  /**
   * The last forgetting factor {@link #update} was given, with its square root and logarithm
   * ({@code StrictMath.log} is a native call): a cache, not state.
   */
  private double lastLambda = 1.0;
  private double lastSqrtLambda = 1.0;
  private double lastLogLambda = 0.0;

  private double rho2;
  private double nEff;
  private double noiseSum;
  private double noiseWeight;
  /** Set by the caller before an update; not part of the state (see {@link #holdNoise}). */
  private boolean noiseHeld;
  private long updates;
  private boolean ready;

  private PriorRowObserver observer;

  /**
   * A model with {@code initialDimension} columns, each starting from the prior (information
   * {@code 1/priorVariance} on its own diagonal, mean 0) or, diffuse, from zero information.
   * These initial prior rows are not reported to a {@link PriorRowObserver} (none is registered
   * yet): there is one of information {@code 1/priorVariance} per column.
   *
   * @param initialDimension number of columns, at least 1 with a constant term, at least 0 otherwise
   * @param settings the settings. Not modified.
   * @throws IllegalArgumentException if the dimension is out of range
   * @throws NullPointerException if {@code settings} is null
   */
  public RlsModel(int initialDimension, ModelSettings settings) {
    this.settings = java.util.Objects.requireNonNull(settings, "settings");
    int min = settings.constantTerm() ? 1 : 0;
    if (initialDimension < min) {
      throw new IllegalArgumentException("initialDimension must be at least " + min
          + (min == 1 ? " (column 0 is the constant term)" : "") + ", got " + initialDimension);
    }
    this.priorInfo = settings.diffuse() ? 0.0 : 1.0 / settings.priorVariance();
    this.guard = settings.windupGuard() && !settings.diffuse();
    this.noiseDecay = Double.isInfinite(settings.noiseHalfLifeRecords())
        ? 1.0 : StrictMath.pow(2.0, -1.0 / settings.noiseHalfLifeRecords());
    allocate(Math.max(4, initialDimension));
    for (int j = 0; j < initialDimension; j++) {
      appendColumn();
    }
    this.ready = !settings.diffuse() || initialDimension == 0;
  }

  private void allocate(int capacity) {
    cap = capacity;
    r = new double[cap][cap];
    spare = new double[cap][cap];
    rotated = new boolean[cap];
    pos = new int[cap];
    col = new int[cap];
    pendShift = new double[cap];
    pendScale = new double[cap];
    Arrays.fill(pendScale, 1.0);
    pending = new boolean[cap];
    z = new double[cap];
    zNext = new double[cap];
    theta = new double[cap];
    invDiag = new double[cap];
    invDiagFrom = Integer.MAX_VALUE;
    work = new double[cap];
    work2 = new double[cap];
    work3 = new double[cap];
    priorAtRefresh = new double[cap];
    logDecayAtRefresh = new double[cap];
  }

  /** Grows every array to hold {@code needed} columns, keeping the state; cold path. */
  private void ensureCapacity(int needed) {
    if (needed <= cap) {
      return;
    }
    applyRebases();
    double[][] oldR = r;
    double[] oldZ = z;
    double[] oldTheta = theta;
    double[] oldPrior = priorAtRefresh;
    double[] oldLog = logDecayAtRefresh;
    int[] oldPos = pos;
    int[] oldCol = col;
    allocate(Math.max(needed, 2 * cap));
    System.arraycopy(oldPos, 0, pos, 0, p);
    System.arraycopy(oldCol, 0, col, 0, p);
    for (int i = 0; i < p; i++) {
      System.arraycopy(oldR[i], i, r[i], i, p - i);
    }
    System.arraycopy(oldZ, 0, z, 0, p);
    System.arraycopy(oldTheta, 0, theta, 0, p);
    System.arraycopy(oldPrior, 0, priorAtRefresh, 0, p);
    System.arraycopy(oldLog, 0, logDecayAtRefresh, 0, p);
  }

  /** Appends a column at the prior; returns its index. */
  private int appendColumn() {
    ensureCapacity(p + 1);
    int k = p;
    for (int i = 0; i < k; i++) {
      r[i][k] = 0.0;
    }
    Arrays.fill(r[k], k + 1, cap, 0.0);
    r[k][k] = Math.sqrt(priorInfo) / scale;
    z[k] = 0.0;
    theta[k] = 0.0; // the old weights stay the solution: the new column's row is (0.., d, 0..) with z 0
    priorAtRefresh[k] = priorInfo;
    logDecayAtRefresh[k] = logDecay;
    pos[k] = k;
    col[k] = k;
    p = k + 1;
    invDiagFrom = Integer.MAX_VALUE;
    inverse = null;
    return k;
  }

  /**
   * Adds layout column {@code p} at position {@code q0} of the factor, at most {@link #front}
   * (the end of the leading block, or of its part {@link #ahead}): rows and columns from there
   * move one place on. The new row is the prior row {@code (0.., d, ..0)} with {@code z} 0, and
   * the new column is 0 above it, so the factor stays upper triangular and exact. {@code O(p^2)}
   * moves.
   */
  private void insertFrontColumn(int q0) {
    ensureCapacity(p + 1);
    final int n = p;
    final double[][] rm = r;
    for (int i = 0; i < q0; i++) {
      final double[] row = rm[i];
      System.arraycopy(row, q0, row, q0 + 1, n - q0);
      row[q0] = 0.0;
    }
    final double[] fresh = rm[n];
    for (int i = n - 1; i >= q0; i--) {
      final double[] row = rm[i];
      System.arraycopy(row, i, row, i + 1, n - i);
      rm[i + 1] = row;
    }
    Arrays.fill(fresh, q0, cap, 0.0);
    fresh[q0] = Math.sqrt(priorInfo) / scale;
    rm[q0] = fresh;
    System.arraycopy(z, q0, z, q0 + 1, n - q0);
    z[q0] = 0.0;
    for (int j = 0; j < n; j++) {
      if (pos[j] >= q0) {
        pos[j]++;
      }
    }
    pos[n] = q0;
    System.arraycopy(col, q0, col, q0 + 1, n - q0);
    col[q0] = n;
    priorAtRefresh[n] = priorInfo;
    logDecayAtRefresh[n] = logDecay;
    front++;
    p = n + 1;
    factorChanged();
  }

  // ---------------------------------------------------------------- queries (hot path)

  /** @return the number of live columns */
  public int dimension() {
    return p;
  }

  /** @return the settings */
  public ModelSettings settings() {
    return settings;
  }

  /**
   * With a prior always true. Diffuse: true once every pivot {@code R_jj} exceeds
   * {@link #READY_TOLERANCE} times the largest, i.e. the information is full rank.
   *
   * @return whether {@link #predict} and the weights are defined
   */
  public boolean ready() {
    return ready;
  }

  /**
   * The a-priori prediction {@code x^T theta}.
   *
   * @param x feature vector, length at least {@link #dimension()}. Not modified.
   * @return the prediction, or NaN when not {@link #ready()}
   */
  public double predict(double[] x) {
    checkLength(x);
    if (!ready) {
      return Double.NaN;
    }
    final double[] t = currentTheta();
    double s = 0.0;
    for (int j = 0; j < p; j++) {
      s += x[j] * t[j];
    }
    return s;
  }

  /**
   * The leverage {@code x^T (R^T R)^-1 x}, by one triangular solve ({@code p^2/2}); the
   * prediction's variance in units of the noise variance.
   *
   * @param x feature vector, length at least {@link #dimension()}. Not modified.
   * @return the leverage, or NaN when not {@link #ready()}
   */
  public double leverage(double[] x) {
    checkLength(x);
    if (!ready) {
      return Double.NaN;
    }
    applyRebases();
    final double[] u = work2;
    final double[][] rm = r;
    final int n = p;
    gather(x, u);
    double sum = 0.0;
    for (int i = 0; i < n; i++) {
      if (u[i] == 0.0) {
        continue; // a zero of x (a one-hot level it does not have) before any non-zero: nothing to carry
      }
      final double[] row = rm[i];
      final double ui = u[i] / row[i];
      sum += ui * ui;
      for (int j = i + 1; j < n; j++) {
        u[j] -= row[j] * ui;
      }
    }
    return scale == 1.0 ? sum : sum / (scale * scale);
  }

  /**
   * The a-priori prediction {@code x^T theta} and its leverage {@code x^T (R^T R)^-1 x} from one
   * forward substitution {@code u = R^-T x}: the prediction is {@code u^T z} (as
   * {@code theta = R^-1 z}), the leverage {@code u^T u}, so the weights need not be solved. Agrees
   * with {@link #predict} and {@link #leverage} to rounding, not bit for bit. When a pivot is not
   * positive (rank deficient in diffuse mode) it falls back to those two.
   *
   * @param x feature vector, length at least {@link #dimension()}. Not modified.
   * @param out receives the leverage in element 0 and the prediction in element 1 (the order of
   *     {@link #update(double[], double, double, double[])}), NaN when not {@link #ready()}.
   *     Modified.
   */
  public void forecast(double[] x, double[] out) {
    checkLength(x);
    if (!ready) {
      out[0] = Double.NaN;
      out[1] = Double.NaN;
      return;
    }
    applyRebases();
    final double[] u = work2;
    final double[][] rm = r;
    final double[] zm = z;
    final int n = p;
    gather(x, u);
    // rows before the first non-zero carry nothing (below): only their pivots are checked, and
    // their reciprocals are not needed (a global model's view keeps the columns only other
    // partitions hold there)
    int first = 0;
    while (first < n && u[first] == 0.0) {
      if (!(rm[first][first] > 0.0)) {
        out[0] = leverage(x);
        out[1] = predict(x);
        return;
      }
      first++;
    }
    final double[] inv = reciprocalPivots(first);
    double sum = 0.0;
    double pred = 0.0;
    for (int i = first; i < n; i++) {
      final double[] row = rm[i];
      final double d = row[i];
      if (!(d > 0.0)) {
        out[0] = leverage(x);
        out[1] = predict(x);
        return;
      }
      if (u[i] == 0.0) {
        continue; // as in leverage: nothing to carry from a zero
      }
      final double ui = u[i] * inv[i];
      sum += ui * ui;
      pred += ui * zm[i];
      for (int j = i + 1; j < n; j++) {
        u[j] -= row[j] * ui;
      }
    }
    out[0] = scale == 1.0 ? sum : sum / (scale * scale);
    out[1] = pred;
  }

  /**
   * The noise standard deviation, exponentially weighted (half-life
   * {@code noiseHalfLifeRecords}) over the standardized a-priori errors
   * {@code e^2 / (1 + x^T (lambda Lambda)^-1 x)} of updates made while ready.
   *
   * @return the noise sd, or NaN before the first such update
   */
  public double noiseSd() {
    return noiseWeight > 0 ? Math.sqrt(noiseSum / noiseWeight) : Double.NaN;
  }

  /**
   * While held, updates leave the noise estimate as it is (their a priori errors are mostly the
   * model catching up after a detected change, not noise). Not part of the state: the caller sets
   * it before every update it wants held.
   *
   * @param held true to hold the noise estimate in the following updates
   */
  public void holdNoise(boolean held) {
    noiseHeld = held;
  }

  /**
   * Restarts the noise estimate with its present value as a prior worth {@code weight} records:
   * the weight of the past errors is cut to {@code weight} (their mean kept), so the next errors
   * move the estimate quickly. Nothing happens when the weight is already smaller.
   *
   * @param weight records' worth kept, greater than 0
   */
  public void restartNoise(double weight) {
    if (weight > 0 && noiseWeight > weight) {
      noiseSum *= weight / noiseWeight;
      noiseWeight = weight;
    }
  }

  /**
   * Half-width of the prediction interval, {@code intervalZ * noiseSd * sqrt(1 + leverage)}.
   *
   * @param x feature vector. Not modified.
   * @return the half-width, NaN when not ready or before the noise is estimated
   */
  public double intervalHalfWidth(double[] x) {
    return settings.intervalZ() * noiseSd() * Math.sqrt(1.0 + leverage(x));
  }

  // ---------------------------------------------------------------- update (hot path)

  /**
   * Forgets by {@code lambda}, then adds the row {@code (x, y)}; with the windup guard, also
   * tops up one column's prior information (round robin). Nothing is allocated.
   *
   * @param x feature vector, length at least {@link #dimension()}; entries beyond are ignored. Not
   *     modified.
   * @param y target
   * @param lambda forgetting factor in (0, 1]; 1 for no forgetting
   * @return true if applied; false if {@code x} or {@code y} is non-finite or beyond
   *     {@link #MAX_ABS_INPUT}, or the outcome would not be finite. The state is then exactly
   *     unchanged.
   * @throws IllegalArgumentException if {@code lambda} is not in (0, 1] or {@code x} is too short
   */
  public boolean update(double[] x, double y, double lambda) {
    return update(x, y, lambda, null);
  }

  /**
   * As {@link #update(double[], double, double)}, and also gives the a-priori leverage
   * {@code x^T Lambda^-1 x} of the state before this update (what {@link #leverage} would have
   * returned just before the call) and the a-priori prediction {@code x^T theta} (what
   * {@link #predict} would have returned), from the rotations of the update itself instead of a
   * separate triangular solve: with {@code g = prod cos^2} of the rotations,
   * {@code x^T (lambda Lambda)^-1 x = (1 - g) / g}; {@code 1 - g} is accumulated directly,
   * {@code q <- q + g sin^2}, so it does not cancel; the rotated target is the a-priori error
   * times {@code sqrt(g)}, so the prediction is {@code y - e / sqrt(g)}. Both agree with the
   * separate computations to rounding, not bit for bit.
   *
   * @param aPrioriOut null, or receives the leverage in element 0 and, when its length is at
   *     least 2, the prediction in element 1 (NaN when not ready, or when the update is refused).
   *     Modified.
   * @return as {@link #update(double[], double, double)}
   */
  public boolean update(double[] x, double y, double lambda, double[] aPrioriOut) {
    if (aPrioriOut != null) {
      aPrioriOut[0] = Double.NaN;
      if (aPrioriOut.length > 1) {
        aPrioriOut[1] = Double.NaN;
      }
    }
    if (!(lambda > 0 && lambda <= 1)) {
      throw new IllegalArgumentException("lambda must be in (0, 1], got " + lambda);
    }
    checkLength(x);
    if (!acceptable(x, y)) {
      return false;
    }
    applyRebases();
    final int n = p;
    if (lambda != lastLambda) { // sqrt and log of the forgetting factor, kept while it stays the same
      lastLambda = lambda;
      lastSqrtLambda = lambda == 1.0 ? 1.0 : Math.sqrt(lambda);
      lastLogLambda = lambda == 1.0 ? 0.0 : StrictMath.log(lambda);
    }
    final double sl = lastSqrtLambda;
    // forgetting: the true factor becomes sl * scale * r; rows enter in stored units (divided by it)
    final double scaleNext = scale * sl;
    final double toStored = 1.0 / scaleNext;
    final double logDecayNext = logDecay + lastLogLambda;

    // The windup guard's refresh row sqrt(add) e_j is decided before the pass (it depends on the
    // bookkeeping only) and rotated in the same pass as the data row: at row i the data rotation
    // comes first, then the refresh rotation, which is exactly the order of two separate passes,
    // with each element computed by the same expressions, so the bits are those of two passes.
    int refreshColumn = -1;
    double refreshInfo = 0.0;
    double refreshPrior = 0.0;
    if (guard && n > 0) {
      refreshColumn = (int) (refreshCounter % n);
      double decay = StrictMath.exp(logDecayNext - logDecayAtRefresh[refreshColumn]);
      double now = priorAtRefresh[refreshColumn] * decay;
      double target = decay * MAX_REFRESH_BOOST > 1.0 ? priorInfo / decay : priorInfo * MAX_REFRESH_BOOST;
      double add = target - now;
      if (add > 1e-12 * target) {
        refreshInfo = add;
        refreshPrior = now + add;
      } else {
        refreshPrior = now;
      }
    }
    final int rc = refreshInfo > 0.0 ? pos[refreshColumn] : n; // first row the refresh row touches
    final double[][] rm = r;
    final double[][] rs = spare;
    final boolean[] changed = rotated;
    final double[] zm = z;
    final double[] zn = zNext;
    final double[] w = work;
    final double[] v = work3;
    // x in the factor's column order, in stored units
    if (front == 0) { // the factor's order is the layout's
      if (toStored == 1.0) {
        System.arraycopy(x, 0, w, 0, n);
      } else {
        for (int k = 0; k < n; k++) {
          w[k] = x[k] * toStored;
        }
      }
    } else {
      final int[] cm = col;
      for (int k = 0; k < n; k++) {
        w[k] = x[cm[k]] * toStored;
      }
    }
    int lead = 0; // rows before the first non-zero of x (and before the refresh row) stay as they are
    while (lead < n && w[lead] == 0.0) {
      lead++;
    }
    final int start = Math.min(lead, rc);
    if (rc < n) {
      for (int k = rc; k < n; k++) {
        v[k] = 0.0;
      }
      v[rc] = Math.sqrt(refreshInfo) * toStored;
    }
    System.arraycopy(zm, 0, zn, 0, start);
    double yw = y * toStored;
    double yv = 0.0;
    double g = 1.0; // product of the data rotations' cos^2
    double q = 0.0; // 1 - g, accumulated without cancellation
    double zMax = 0.0; // largest |z| of the new state, to refuse a non-finite one
    double pivotMax = 0.0; // largest rotated pivot, likewise (the others are as they were)
    int skipped = 0; // rows from start that no rotation touched
    if (start < rc) { // rows before the refresh row: the data row alone, in a method of its own
      final double[] acc = passAcc;
      acc[0] = yw;
      acc[1] = g;
      acc[2] = q;
      acc[3] = zMax;
      acc[4] = pivotMax;
      skipped = dataRows(rm, rs, changed, w, zm, zn, start, Math.min(rc, n), n, acc);
      yw = acc[0];
      g = acc[1];
      q = acc[2];
      zMax = acc[3];
      pivotMax = acc[4];
    }
    for (int i = rc; i < n; i++) {
      final double[] a = rm[i];
      final double[] b = rs[i];
      final double xi = w[i];
      final double zi = zm[i];
      final double vi = v[i]; // i >= rc
      if (xi == 0.0 && vi == 0.0) {
        changed[i] = false; // nothing meets row i: it stays where it is
        zn[i] = zi;
        skipped++;
        continue;
      }
      changed[i] = true;
      double cs;
      double sn;
      double zi1;
      double d;
      if (xi == 0.0) {
        cs = 1.0;
        sn = 0.0;
        d = a[i];
        zi1 = zi;
      } else {
        final double ai = a[i];
        double h = Math.sqrt(ai * ai + xi * xi);
        if (!(h > 0.0 && h < Double.POSITIVE_INFINITY)) {
          h = StrictMath.hypot(ai, xi); // squares under- or overflowed: rare path
        }
        cs = ai / h;
        sn = xi / h;
        q += g * (sn * sn);
        g *= cs * cs;
        d = h;
        zi1 = cs * zi + sn * yw;
        yw = cs * yw - sn * zi;
      }
      if (vi == 0.0) {
        b[i] = d;
        pivotMax = Math.max(pivotMax, d);
        rotate(a, b, w, i + 1, n, cs, sn);
        zn[i] = zi1;
        zMax = Math.max(zMax, Math.abs(zi1));
        continue;
      }
      // the refresh row meets row i (i >= rc)
      double h2 = Math.sqrt(d * d + vi * vi);
      if (!(h2 > 0.0 && h2 < Double.POSITIVE_INFINITY)) {
        h2 = StrictMath.hypot(d, vi);
      }
      final double cv = d / h2;
      final double sv = vi / h2;
      b[i] = h2;
      pivotMax = Math.max(pivotMax, h2);
      if (xi == 0.0) {
        rotate(a, b, v, i + 1, n, cv, sv);
      } else {
        rotateTwice(a, b, w, v, i + 1, n, cs, sn, cv, sv);
      }
      final double zi2 = cv * zi1 + sv * yv;
      zn[i] = zi2;
      zMax = Math.max(zMax, Math.abs(zi2));
      yv = cv * yv - sv * zi1;
    }
    final double residual = yw * scaleNext; // e_a / sqrt(1 + x^T (lambda Lambda)^-1 x)
    double rho2n = lambda * rho2 + residual * residual;
    if (rc < n) {
      final double e = yv * scaleNext;
      rho2n += e * e;
    }
    // In diffuse mode readiness needs every pivot of the new state (rotated rows in the spare
    // rows, the others where they are); with a prior the model is always ready and only the
    // rotated pivots need a check (a profile put the full loop at a quarter of an update, p = 64).
    double maxDiag = pivotMax;
    double minDiag = Double.POSITIVE_INFINITY;
    if (settings.diffuse()) {
      for (int i = 0; i < n; i++) {
        final double d = i >= start && changed[i] ? rs[i][i] : rm[i][i];
        maxDiag = Math.max(maxDiag, d);
        minDiag = Math.min(minDiag, d);
      }
    }
    if (!(maxDiag < Double.POSITIVE_INFINITY) || !(zMax < Double.POSITIVE_INFINITY)
        || !(rho2n < Double.POSITIVE_INFINITY)) {
      return false; // nothing committed: r, z, theta and every scalar are as before
    }
    // commit
    final boolean wasReady = ready;
    if (aPrioriOut != null && wasReady) {
      aPrioriOut[0] = lambda * (q / g);
      if (aPrioriOut.length > 1) {
        aPrioriOut[1] = y - residual / Math.sqrt(g);
      }
    }
    // Every row rotated by the data row alone: swap the two sets of rows at once. With a refresh
    // row, row by row: swapping the sets there measured 0.75x (paired A/B, p = 128; cause not found).
    if (start == 0 && skipped == 0 && rc == n) {
      r = rs;
      spare = rm;
    } else {
      for (int i = start; i < n; i++) {
        if (changed[i]) {
          final double[] t = rm[i];
          rm[i] = rs[i];
          rs[i] = t;
        }
      }
    }
    scale = scaleNext;
    if (scaleNext < MIN_SCALE) {
      renormalizeScale(r, zn); // r, not rm: the row sets may have been swapped
    }
    z = zn;
    zNext = zm;
    factorChanged();
    rho2 = rho2n;
    nEff = lambda * nEff + 1.0;
    if (wasReady && !noiseHeld) {
      noiseSum = noiseDecay * noiseSum + residual * residual;
      noiseWeight = noiseDecay * noiseWeight + 1.0;
    }
    ready = !settings.diffuse() || (n > 0 ? minDiag > READY_TOLERANCE * maxDiag : true);
    logDecay = logDecayNext;
    updates++;
    if (refreshColumn >= 0) {
      refreshCounter++;
      priorAtRefresh[refreshColumn] = refreshPrior;
      logDecayAtRefresh[refreshColumn] = logDecay;
      if (logDecay < -512.0) {
        renormalizeLogDecay();
      }
      if (refreshInfo > 0.0 && observer != null) {
        observer.priorRowAdded(refreshColumn, refreshInfo);
      }
    }
    return true;
  }

  /**
   * Removes one data row's information exactly (a downdate: a rank-one update with negative
   * weight): afterwards the model holds the minimizer of the same problem without the row
   * {@code sqrt(weight) [x | y]}, where {@code weight} is what forgetting has left of the row since
   * it was learned ({@code 1} with no forgetting) and {@code x} is the row in today's basis and
   * layout. The information loses {@code weight x x^T}, the weighted residual sum of squares the
   * row's share, and the effective sample size {@code weight}. Not undone: the noise estimate (an
   * average of a-priori errors), the count of updates and the windup guard's bookkeeping.
   *
   * <p>Method (the classic Cholesky downdate of an augmented factor, common practice): with the
   * stored factor {@code r}, solve {@code r^T a = u} for the row {@code u} in stored units; the
   * downdate exists when {@code |a| < 1}; Givens rotations from the last row up turn
   * {@code [a; sqrt(1 - |a|^2)]} into the last unit vector, and the same rotations applied to
   * {@code [r; 0]} leave the downdated factor above the row {@code u^T}; applied to
   * {@code [z; zeta]} with {@code zeta = (y_u - a^T z) / sqrt(1 - |a|^2)} they leave the
   * downdated {@code z} above {@code y_u}, and the residual sum of squares falls by
   * {@code zeta^2}. Pivots are kept positive (a row and its {@code z} entry change sign together).
   * {@code O(p^2)}; allocates nothing.
   *
   * @param x the row in layout order. Not modified.
   * @param y its target
   * @param weight the row's weight now, in (0, 1]
   * @return false, with the model unchanged, if the row is not finite or removing it would leave
   *     the information not positive definite (to a margin of 1e-12): the row was not (all) in it
   * @throws IllegalArgumentException if {@code weight} is not in (0, 1] or {@code x} is too short
   */
  public boolean downdate(double[] x, double y, double weight) {
    if (!(weight > 0 && weight <= 1)) {
      throw new IllegalArgumentException("weight must be in (0, 1], got " + weight);
    }
    checkLength(x);
    if (!acceptable(x, y)) {
      return false;
    }
    applyRebases();
    final int n = p;
    final double[][] rm = r;
    final double f = Math.sqrt(weight) / scale;
    final double[] u = work;
    gather(x, u);
    for (int k = 0; k < n; k++) {
      u[k] *= f;
    }
    final double yu = y * f;
    // forward substitution r^T a = u (column i of r above the diagonal, read down the rows)
    final double[] a = work2;
    double norm2 = 0.0;
    for (int i = 0; i < n; i++) {
      double t = u[i];
      for (int k = 0; k < i; k++) {
        t -= rm[k][i] * a[k];
      }
      double d = rm[i][i];
      if (d == 0.0 && t == 0.0) {
        a[i] = 0.0; // a column without information (diffuse start) that the row does not touch either
        continue;
      }
      if (!(d > 0 && d < Double.POSITIVE_INFINITY)) {
        return false;
      }
      a[i] = t / d;
      norm2 += a[i] * a[i];
    }
    if (!(norm2 < 1.0 - 1e-12)) {
      return false;
    }
    double alpha = Math.sqrt(1.0 - norm2);
    double az = 0.0;
    for (int i = 0; i < n; i++) {
      az += a[i] * z[i];
    }
    final double zeta0 = (yu - az) / alpha;
    double zeta = zeta0;
    final double[] v = work3; // the row below the factor, filled by the rotations
    for (int k = 0; k < n; k++) {
      v[k] = 0.0;
    }
    for (int i = n - 1; i >= 0; i--) {
      final double ai = a[i];
      final double h = StrictMath.hypot(ai, alpha);
      final double cs = alpha / h;
      final double sn = ai / h;
      alpha = h;
      final double[] row = rm[i];
      for (int j = i; j < n; j++) {
        final double rij = row[j];
        final double vj = v[j];
        row[j] = cs * rij - sn * vj;
        v[j] = sn * rij + cs * vj;
      }
      final double zi = z[i];
      z[i] = cs * zi - sn * zeta;
      zeta = sn * zi + cs * zeta;
      // no sign fix is needed: v[i] is still 0 here (row k > i fills only v[j], j >= k), so the new
      // pivot is cs * r_ii with cs = alpha / h > 0 and r_ii > 0 (checked above): never negative
    }
    factorChanged();
    final double e = zeta0 * scale;
    rho2 = Math.max(0.0, rho2 - e * e);
    nEff = Math.max(0.0, nEff - weight);
    if (settings.diffuse()) {
      ready = fullRank();
    }
    return true;
  }

  /**
   * The data row's rotations of rows {@code [from, to)}, the rows before the refresh row (all of
   * them without the guard): the expressions of {@link #update}'s combined loop without the
   * refresh's tests, so the bits are the same. {@code acc} carries {@code yw, g, q, zMax} and the
   * largest new pivot in and out; returns the number of rows left untouched.
   */
  private static int dataRows(double[][] rm, double[][] rs, boolean[] changed, double[] w, double[] zm,
      double[] zn, int from, int to, int n, double[] acc) {
    int skipped = 0;
    double yw = acc[0];
    double g = acc[1];
    double q = acc[2];
    double zMax = acc[3];
    double pivotMax = acc[4];
    for (int i = from; i < to; i++) {
      final double[] a = rm[i];
      final double xi = w[i];
      final double zi = zm[i];
      if (xi == 0.0) {
        changed[i] = false; // nothing meets row i: it stays where it is
        zn[i] = zi;
        skipped++;
        continue;
      }
      changed[i] = true;
      final double[] b = rs[i];
      final double ai = a[i];
      double h = Math.sqrt(ai * ai + xi * xi);
      if (!(h > 0.0 && h < Double.POSITIVE_INFINITY)) {
        h = StrictMath.hypot(ai, xi); // squares under- or overflowed: rare path
      }
      final double cs = ai / h;
      final double sn = xi / h;
      q += g * (sn * sn);
      g *= cs * cs;
      final double zi1 = cs * zi + sn * yw;
      yw = cs * yw - sn * zi;
      b[i] = h;
      rotate(a, b, w, i + 1, n, cs, sn);
      zn[i] = zi1;
      zMax = Math.max(zMax, Math.abs(zi1));
      pivotMax = Math.max(pivotMax, h);
    }
    acc[0] = yw;
    acc[1] = g;
    acc[2] = q;
    acc[3] = zMax;
    acc[4] = pivotMax;
    return skipped;
  }

  /**
   * One Givens rotation of a factor row with a vector over {@code [from, to)}:
   * {@code b = cs a + sn w}, {@code w = cs w - sn a}. Every array is indexed alike, the pattern
   * the JIT vectorizes.
   */
  private static void rotate(double[] a, double[] b, double[] w, int from, int to, double cs, double sn) {
    for (int j = from; j < to; j++) {
      final double aj = a[j];
      final double wj = w[j];
      b[j] = cs * aj + sn * wj;
      w[j] = cs * wj - sn * aj;
    }
  }

  /** The data rotation, then the refresh rotation, of one row in one pass (see {@link #update}). */
  private static void rotateTwice(double[] a, double[] b, double[] w, double[] v, int from, int to,
      double cs, double sn, double cv, double sv) {
    for (int j = from; j < to; j++) {
      final double aj = a[j];
      final double wj = w[j];
      final double r1 = cs * aj + sn * wj;
      w[j] = cs * wj - sn * aj;
      final double vj = v[j];
      b[j] = cv * r1 + sv * vj;
      v[j] = cv * vj - sv * r1;
    }
  }

  private boolean acceptable(double[] x, double y) {
    // one test per entry (false for NaN), not a running maximum: no chain from entry to entry
    boolean ok = Math.abs(y) <= MAX_ABS_INPUT;
    for (int j = 0; j < p; j++) {
      ok &= Math.abs(x[j]) <= MAX_ABS_INPUT;
    }
    return ok;
  }

  /** The weights and the reciprocal pivots no longer describe {@code R}. */
  private void factorChanged() {
    inverseStart = 0;
    thetaValid = false;
    invDiagFrom = Integer.MAX_VALUE;
    inverse = null;
  }

  /**
   * {@code 1 / r_ii}, computed once per factor (the divisions are independent of each other, so
   * they overlap), so that a forward substitution's chain from row to row is a multiplication
   * rather than a division.
   */
  private double[] reciprocalPivots(int from) {
    if (from < invDiagFrom) {
      final double[][] rm = r;
      final double[] inv = invDiag;
      for (int i = from; i < p; i++) {
        inv[i] = 1.0 / rm[i][i];
      }
      invDiagFrom = from;
    }
    return invDiag;
  }

  /** {@code out[q] = x[col[q]]}: a layout vector in the factor's column order. */
  private void gather(double[] x, double[] out) {
    if (front == 0) {
      System.arraycopy(x, 0, out, 0, p);
    } else {
      for (int q = 0; q < p; q++) {
        out[q] = x[col[q]];
      }
    }
  }

  /** The weights in layout order, solved from the current factor if a change made them stale. */
  private double[] currentTheta() {
    if (!thetaValid) {
      applyRebases();
      if (front == 0) {
        solve(r, z, theta);
      } else {
        final double[] t = work2;
        solve(r, z, t);
        for (int q = 0; q < p; q++) {
          theta[col[q]] = t[q];
        }
      }
      thetaValid = true;
    }
    return theta;
  }

  /**
   * Back-substitution {@code rm out = zm}. Pivots at or below the tolerance (diffuse: relative,
   * else exactly 0) give weight 0.
   */
  private void solve(double[][] rm, double[] zm, double[] out) {
    solve(rm, zm, out, 0);
  }

  /** As {@link #solve(double[][], double[], double[])} for rows {@code start} and after only. */
  private void solve(double[][] rm, double[] zm, double[] out, int start) {
    final int n = p;
    double maxDiag = 0.0;
    for (int i = 0; i < n; i++) {
      maxDiag = Math.max(maxDiag, rm[i][i]);
    }
    final double tol = settings.diffuse() ? READY_TOLERANCE * maxDiag : 0.0;
    for (int i = n - 1; i >= start; i--) {
      final double[] row = rm[i];
      final double d = row[i];
      out[i] = d > tol ? (zm[i] - dot(row, out, i + 1, n)) / d : 0.0;
    }
  }

  /**
   * {@code sum_{j in [from, to)} a[j] b[j]} with four partial sums, so the additions do not form
   * one chain of dependent operations (a back-substitution is otherwise bound by the latency of
   * its additions, not by their number).
   */
  static double dot(double[] a, double[] b, int from, int to) {
    double s0 = 0.0;
    double s1 = 0.0;
    double s2 = 0.0;
    double s3 = 0.0;
    int j = from;
    for (; j + 3 < to; j += 4) {
      s0 += a[j] * b[j];
      s1 += a[j + 1] * b[j + 1];
      s2 += a[j + 2] * b[j + 2];
      s3 += a[j + 3] * b[j + 3];
    }
    for (; j < to; j++) {
      s0 += a[j] * b[j];
    }
    return (s0 + s1) + (s2 + s3);
  }

  /**
   * Moves the power-of-two part of the scale into the stored factor: exact (a multiplication by
   * a power of two), so the bits of every later result are as if it had not happened, except for
   * entries that would become subnormal. Rare: once per {@code 60 / log2(1/sqrt(lambda))} updates.
   */
  private void renormalizeScale(double[][] rm, double[] zm) {
    final int k = Math.getExponent(scale);
    final double f = Math.scalb(1.0, k);
    for (int i = 0; i < p; i++) {
      final double[] row = rm[i];
      for (int j = i; j < p; j++) {
        row[j] *= f;
      }
      zm[i] *= f;
    }
    scale = Math.scalb(scale, -k);
  }

  /**
   * Applies the pending re-basings to {@code R}: column {@code k} becomes
   * {@code (R_k - shift_k R_c) / scale_k} in rows up to the constant's position {@code c} (which
   * precedes every re-based column) and {@code R_k / scale_k} below it, for all pending {@code k}
   * in one pass over each row (the per-column form touches one entry in each of {@code k} rows,
   * a scattered access that cost more than the update itself at p = 128). Not pending columns in
   * the range have shift 0 and scale 1 and are left exactly as they are. {@code z} is unchanged.
   */
  private void applyRebases() {
    final int hi = pendHi;
    if (hi < 0) {
      return;
    }
    final int lo = pendLo;
    final double[][] rm = r;
    final double[] sh = pendShift;
    final double[] sc = pendScale;
    final int c = settings.constantTerm() ? pos[0] : -1;
    for (int i = 0; i <= hi; i++) {
      final double[] row = rm[i];
      if (i <= c) {
        final double rc = row[c];
        for (int j = lo; j <= hi; j++) {
          row[j] = (row[j] - rc * sh[j]) / sc[j];
        }
      } else {
        for (int j = Math.max(i, lo); j <= hi; j++) {
          row[j] /= sc[j];
        }
      }
    }
    for (int j = lo; j <= hi; j++) {
      sh[j] = 0.0;
      sc[j] = 1.0;
      pending[j] = false;
    }
    pendLo = Integer.MAX_VALUE;
    pendHi = -1;
  }

  /** In diffuse mode: every pivot above {@link #READY_TOLERANCE} times the largest. */
  private boolean fullRank() {
    double maxDiag = 0.0;
    double minDiag = Double.POSITIVE_INFINITY;
    for (int i = 0; i < p; i++) {
      maxDiag = Math.max(maxDiag, r[i][i]);
      minDiag = Math.min(minDiag, r[i][i]);
    }
    return p == 0 || minDiag > READY_TOLERANCE * maxDiag;
  }

  private void renormalizeLogDecay() {
    for (int j = 0; j < p; j++) {
      logDecayAtRefresh[j] -= logDecay;
    }
    logDecay = 0.0;
  }

  // ---------------------------------------------------------------- layout changes

  /**
   * Appends a column starting from the prior (information {@code 1/priorVariance} on its own
   * diagonal, weight 0); in diffuse mode with zero information, so the model is not ready until
   * data identify it. The prior row is reported to the {@link PriorRowObserver}.
   *
   * @param index must equal {@link #dimension()}
   * @param name the column's name; not kept. Not modified.
   * @throws IllegalArgumentException if {@code index != dimension()}
   */
  @Override
  public void columnAdded(int index, String name) {
    columnAdded(index, name, false);
  }

  /**
   * As {@link #columnAdded(int, String)}; a column that will never be re-based (a one-hot
   * level) is kept in the factor's leading block, before the constant term, so the update skips
   * the rows of the levels a record does not have. Results are the same either way, to rounding.
   *
   * @param index must equal {@link #dimension()}
   * @param name the column's name; not kept. Not modified.
   * @param neverRebased true if {@link #columnRebased} will never be called for this column
   * @throws IllegalArgumentException if {@code index != dimension()}
   */
  @Override
  public void columnAdded(int index, String name, boolean neverRebased) {
    if (index != p) {
      throw new IllegalArgumentException("columnAdded index must equal the dimension " + p
          + " (columns are appended), got " + index);
    }
    applyRebases();
    if (neverRebased) {
      insertFrontColumn(front);
    } else {
      appendColumn();
    }
    if (settings.diffuse()) {
      ready = false;
    } else if (observer != null) {
      observer.priorRowAdded(index, priorInfo);
    }
  }

  /**
   * As {@link #columnAdded(int, String, boolean)} with {@code neverRebased}, but the column goes
   * to the very start of the factor, before every column added otherwise (after those added
   * ahead before it): for a column the rows this model learns one by one are always 0 in (a
   * {@link GlobalModel} view's column only other partitions hold), every such row then starts
   * with zeros in those columns and its update never touches their rows, and the weights,
   * standard errors and covariance of the other columns come from the trailing block of the
   * factor alone ({@link #weightsFrom}, {@link #standardErrorsFrom},
   * {@link #unscaledCovarianceFrom}). Exact in any position: the new column holds only its prior
   * row. The prior row is reported as {@link #columnAdded(int, String)} reports it.
   *
   * @param index must equal {@link #dimension()}
   * @param name the column's name; not kept. Not modified.
   * @throws IllegalArgumentException if {@code index != dimension()}
   */
  void columnAddedAhead(int index, String name) {
    if (index != p) {
      throw new IllegalArgumentException("columnAdded index must equal the dimension " + p
          + " (columns are appended), got " + index);
    }
    applyRebases();
    insertFrontColumn(ahead);
    ahead++;
    if (settings.diffuse()) {
      ready = false;
    } else if (observer != null) {
      observer.priorRowAdded(index, priorInfo);
    }
  }

  /** @return the number of columns added by {@link #columnAddedAhead} still in the model */
  int aheadCount() {
    return ahead;
  }

  /**
   * Restores {@link #aheadCount()} after {@link #readFrom} (the global model keeps it).
   *
   * @param n the count, in {@code [0, front]} (the leading block of never re-based columns)
   * @throws IllegalArgumentException if out of range
   */
  void restoreAheadCount(int n) {
    if (n < 0 || n > front) {
      throw new IllegalArgumentException("ahead count must be in [0, " + front + "], got " + n);
    }
    ahead = n;
  }

  /**
   * Marginalizes column {@code index} out exactly: the remaining weights and their covariance are
   * those of the joint posterior. Moves the column to the front by adjacent swaps, each followed
   * by one Givens rotation that restores triangularity ({@code z} rotated alike), then drops the
   * first row and column: the trailing block of an upper-triangular factor factors the marginal
   * information of the trailing variables. {@code O(p^2)}.
   *
   * @param index the column to remove; at least 1 with a constant term
   * @throws IllegalArgumentException if {@code index} is out of range
   */
  @Override
  public void columnRemoved(int index) {
    int min = settings.constantTerm() ? 1 : 0;
    if (index < min || index >= p) {
      throw new IllegalArgumentException("columnRemoved index must be in [" + min + ", " + (p - 1)
          + "]" + (min == 1 ? " (column 0 is the constant term)" : "") + ", got " + index);
    }
    applyRebases();
    final double[][] rm = r;
    final int q = pos[index];
    for (int k = q; k >= 1; k--) {
      // swap columns k-1 and k in rows 0..k (rows below hold zeros in both; so does row k at
      // column k-1, below its diagonal, where the stored entry is not kept at zero)
      for (int i = 0; i < k; i++) {
        final double[] row = rm[i];
        double t = row[k - 1];
        row[k - 1] = row[k];
        row[k] = t;
      }
      rm[k][k - 1] = rm[k][k];
      rm[k][k] = 0.0;
      // row k now has a sub-diagonal entry at column k-1: rotate rows k-1 and k
      final double[] r0 = rm[k - 1];
      final double[] r1 = rm[k];
      double a = r0[k - 1];
      double b = r1[k - 1];
      if (b != 0.0) {
        double h = StrictMath.hypot(a, b);
        double cs = a / h;
        double sn = b / h;
        r0[k - 1] = h;
        r1[k - 1] = 0.0;
        for (int j = k; j < p; j++) {
          double u = r0[j];
          double v = r1[j];
          r0[j] = cs * u + sn * v;
          r1[j] = cs * v - sn * u;
        }
        double u = z[k - 1];
        double v = z[k];
        z[k - 1] = cs * u + sn * v;
        z[k] = cs * v - sn * u;
      } else {
        r1[k - 1] = 0.0;
        if (r0[k - 1] < 0.0) { // keep pivots non-negative: negate row k-1 of [R | z]
          for (int j = k - 1; j < p; j++) {
            r0[j] = -r0[j];
          }
          z[k - 1] = -z[k - 1];
        }
      }
      if (r1[k] < 0.0) { // keep pivots non-negative: negate row k of [R | z]
        for (int j = k; j < p; j++) {
          r1[j] = -r1[j];
        }
        z[k] = -z[k];
      }
    }
    if (rm[0][0] == 0.0) {
      // The column had no information (diffuse, no row has touched it): row 0 then holds
      // information about the other columns alone, which dropping it would lose. Rotate it into
      // the trailing rows instead, as a data row with target z_0.
      foldIntoTrailingRows(rm);
    }
    // drop row 0 and column 0: row i + 1 becomes row i, shifted one column left
    final double[] first = rm[0];
    for (int i = 0; i < p - 1; i++) {
      final double[] row = rm[i + 1];
      System.arraycopy(row, i + 1, row, i, p - 1 - i);
      rm[i] = row;
    }
    rm[p - 1] = first;
    System.arraycopy(z, 1, z, 0, p - 1);
    // the removed column is the one at index; bookkeeping arrays follow the layout
    System.arraycopy(priorAtRefresh, index + 1, priorAtRefresh, index, p - 1 - index);
    System.arraycopy(logDecayAtRefresh, index + 1, logDecayAtRefresh, index, p - 1 - index);
    System.arraycopy(pos, index + 1, pos, index, p - 1 - index);
    System.arraycopy(col, q + 1, col, q, p - 1 - q);
    for (int j = 0; j < p - 1; j++) {
      if (pos[j] > q) {
        pos[j]--;
      }
      if (col[j] > index) {
        col[j]--;
      }
    }
    if (q < front) {
      front--;
    }
    if (q < ahead) {
      ahead--;
    }
    p--;
    factorChanged();
    ready = !settings.diffuse() || fullRank();
  }

  /**
   * Rotates row 0 of {@code [R | z]} (zero at column 0) into rows {@code 1..p-1}, each a Givens
   * rotation as in {@link #update}; what is left of its target is a residual of the objective.
   */
  private void foldIntoTrailingRows(double[][] rm) {
    final double[] v = rm[0];
    double yv = z[0];
    for (int i = 1; i < p; i++) {
      final double vi = v[i];
      if (vi == 0.0) {
        continue;
      }
      final double[] row = rm[i];
      final double h = StrictMath.hypot(row[i], vi);
      final double cs = row[i] / h;
      final double sn = vi / h;
      row[i] = h;
      v[i] = 0.0;
      for (int j = i + 1; j < p; j++) {
        final double a = row[j];
        final double b = v[j];
        row[j] = cs * a + sn * b;
        v[j] = cs * b - sn * a;
      }
      final double zi = z[i];
      z[i] = cs * zi + sn * yv;
      yv = cs * yv - sn * zi;
    }
    final double e = yv * scale;
    rho2 += e * e;
  }

  /**
   * Re-expresses column {@code column} in a new basis so that no prediction changes:
   * {@code theta'_k = scale theta_k}, {@code theta'_0 += shift theta_k}. With {@code T} the map
   * {@code theta' = T theta} (upper triangular), {@code R <- R T^-1}, where
   * {@code (T^-1)_kk = 1/scale} and {@code (T^-1)_0k = -shift/scale}: only column k of R changes,
   * {@code R'_0k = (R_0k - shift R_00) / scale} and {@code R'_ik = R_ik / scale} for i ≥ 1;
   * {@code z} is unchanged. {@code O(p)}.
   *
   * @param column the re-based column; at least 1 with a constant term
   * @param scale {@code s'/s}, positive and finite
   * @param shift {@code (m' - m)/s}, finite; must be 0 without a constant term
   * @throws IllegalArgumentException if an argument is out of range
   */
  @Override
  public void columnRebased(int column, double scale, double shift) {
    int min = settings.constantTerm() ? 1 : 0;
    if (column < min || column >= p) {
      throw new IllegalArgumentException("columnRebased column must be in [" + min + ", " + (p - 1)
          + "], got " + column);
    }
    if (!(scale > 0 && scale < Double.POSITIVE_INFINITY)) {
      throw new IllegalArgumentException("columnRebased scale must be positive and finite, got " + scale);
    }
    if (!(Math.abs(shift) < Double.POSITIVE_INFINITY) || (shift != 0.0 && !settings.constantTerm())) {
      throw new IllegalArgumentException("columnRebased shift must be finite, and 0 without a constant term, got "
          + shift);
    }
    final int k = pos[column];
    if (k < front) {
      throw new IllegalStateException("column " + column + " was added as never re-based (columnAdded with"
          + " neverRebased), but columnRebased was called for it");
    }
    if (pending[k]) {
      applyRebases(); // one pending re-basing per column: compose by applying the first
    }
    pending[k] = true;
    pendShift[k] = shift;
    pendScale[k] = scale;
    pendLo = Math.min(pendLo, k);
    pendHi = Math.max(pendHi, k);
    factorChanged(); // the weights follow from R and z, which are exactly re-based
    priorAtRefresh[column] /= scale * scale;
  }

  // ---------------------------------------------------------------- verification hook

  /**
   * Registers the one observer told of every prior row added from now on (a new column's prior
   * and every windup-guard refresh), or none.
   *
   * @param o the observer, or null to stop
   */
  public void observePriorRows(PriorRowObserver o) {
    this.observer = o;
  }

  // ---------------------------------------------------------------- snapshots (cold path)

  /**
   * @param out receives the weights in the current (standardized) basis, length at least
   *     {@link #dimension()}; NaN when not ready. Modified.
   */
  public void weights(double[] out) {
    checkLength(out);
    final double[] t = ready ? currentTheta() : null;
    for (int j = 0; j < p; j++) {
      out[j] = ready ? t[j] : Double.NaN;
    }
  }

  /**
   * The weights of the columns at factor positions {@code start} and after (see
   * {@link #position}), the same bits as {@link #weights} gives them: the back-substitution runs
   * from the last row up and stops at row {@code start}, so it needs only the trailing block of
   * {@code R} and {@code z} ({@code (p - start)^2/2}); the rows before it are not solved.
   *
   * @param start a factor position in {@code [0, dimension()]}
   * @param out receives, at the layout index of each such column, its weight (NaN when not
   *     ready); other entries are not written. Length at least {@link #dimension()}. Modified.
   */
  void weightsFrom(int start, double[] out) {
    checkLength(out);
    if (!ready || thetaValid || start == 0) {
      final double[] t = ready ? currentTheta() : null;
      for (int q = start; q < p; q++) {
        out[col[q]] = ready ? t[col[q]] : Double.NaN;
      }
      return;
    }
    applyRebases();
    final double[] t = work2;
    solve(r, z, t, start);
    for (int q = start; q < p; q++) {
      out[col[q]] = t[q];
    }
  }

  /**
   * @param column a layout column
   * @return its position in the factor's own column order
   */
  int position(int column) {
    if (column < 0 || column >= p) {
      throw new IllegalArgumentException("column must be in [0, " + (p - 1) + "], got " + column);
    }
    return pos[column];
  }

  /**
   * Standard errors {@code residualSd * sqrt(diag((R^T R)^-1))}, from the rows of {@code R^-1};
   * {@code O(p^3)}.
   *
   * @param out length at least {@link #dimension()}; NaN when not ready or
   *     {@code effectiveSampleSize <= dimension}. Modified.
   */
  public void standardErrors(double[] out) {
    standardErrorsFrom(0, out);
  }

  /**
   * As {@link #standardErrors}, for the columns at factor positions {@code start} and after (see
   * {@link #position}), the same bits: their rows of {@code R^-1} are those of the inverse of the
   * trailing block of {@code R} ({@code R} is upper triangular), so only that block is inverted,
   * {@code O((p - start)^3)}. The diagonal of the covariance of the trailing columns is that of
   * their marginal covariance in the joint solution.
   *
   * @param start a factor position in {@code [0, dimension()]}
   * @param out receives, at the layout index of each such column, its standard error; other
   *     entries are not written. Length at least {@link #dimension()}. Modified.
   */
  void standardErrorsFrom(int start, double[] out) {
    checkLength(out);
    double s = residualSd();
    if (!ready || !(s >= 0)) {
      for (int q = start; q < p; q++) {
        out[col[q]] = Double.NaN;
      }
      return;
    }
    applyRebases();
    double[] u = inverseFactor(start);
    for (int i = start; i < p; i++) {
      double sum = 0.0;
      for (int k = i; k < p; k++) {
        sum += u[i * p + k] * u[i * p + k];
      }
      out[col[i]] = s * Math.sqrt(sum) / scale;
    }
  }

  /**
   * The unscaled covariance {@code (R^T R)^-1} (multiply by a noise variance), row-major
   * {@code p x p} in layout order; {@code O(p^3)}.
   *
   * @return a new array; NaN-filled when not ready
   */
  public double[] unscaledCovariance() {
    return unscaledCovarianceFrom(0);
  }

  /**
   * As {@link #unscaledCovariance}, the block of the columns at factor positions {@code start}
   * and after (see {@link #position}), the same bits, from the inverse of the trailing block of
   * {@code R} alone (as {@link #standardErrorsFrom}): the marginal covariance of those columns'
   * weights, {@code (R_LL^T R_LL)^-1}. {@code O((p - start)^3)}.
   *
   * @param start a factor position in {@code [0, dimension()]}
   * @return row-major {@code p x p} in layout order (a new array): the entries of two such
   *     columns; the others 0 (NaN-filled when not ready)
   */
  double[] unscaledCovarianceFrom(int start) {
    double[] out = new double[p * p];
    if (!ready) {
      Arrays.fill(out, Double.NaN);
      return out;
    }
    applyRebases();
    double[] u = inverseFactor(start);
    for (int i = start; i < p; i++) {
      for (int j = i; j < p; j++) {
        double sum = 0.0;
        for (int k = j; k < p; k++) {
          sum += u[i * p + k] * u[j * p + k];
        }
        sum /= scale * scale;
        out[col[i] * p + col[j]] = sum;
        out[col[j] * p + col[i]] = sum;
      }
    }
    return out;
  }

  /**
   * The information {@code R^T R} (in units of 1/noise variance), row-major {@code p x p}; the
   * quantity that sums across independent models, in layout order. {@code O(p^3)}.
   *
   * @return a new array
   */
  public double[] informationMatrix() {
    applyRebases();
    double[] out = new double[p * p];
    for (int i = 0; i < p; i++) {
      for (int j = i; j < p; j++) {
        double sum = 0.0;
        for (int k = 0; k <= i; k++) {
          sum += r[k][i] * r[k][j];
        }
        sum *= scale * scale;
        out[col[i] * p + col[j]] = sum;
        out[col[j] * p + col[i]] = sum;
      }
    }
    return out;
  }

  /**
   * The information in square-root form, in true units: {@code rowsOut[i]} is row {@code i} of
   * {@code scale * r} (upper triangular in the factor's own column order, entries before the
   * diagonal 0) and {@code targetsOut[i]} row {@code i} of {@code scale * z}, so that
   * {@code sum_i row_i row_i^T} is the information {@code Lambda} and {@code sum_i row_i t_i} the
   * information-weighted target vector {@code Lambda theta}. {@code columnsOut[q]} is the layout
   * column at factor position {@code q}. Used to share what a model holds (see
   * {@link GlobalModel}); {@code O(p^2)}, cold path.
   *
   * @param rowsOut at least {@link #dimension()} rows of length at least {@link #dimension()}. Modified.
   * @param targetsOut length at least {@link #dimension()}. Modified.
   * @param columnsOut length at least {@link #dimension()}. Modified.
   * @return the dimension
   */
  public int sqrtInformation(double[][] rowsOut, double[] targetsOut, int[] columnsOut) {
    applyRebases();
    for (int i = 0; i < p; i++) {
      final double[] out = rowsOut[i];
      Arrays.fill(out, 0, i, 0.0);
      for (int j = i; j < p; j++) {
        out[j] = r[i][j] * scale;
      }
      targetsOut[i] = z[i] * scale;
      columnsOut[i] = col[i];
    }
    return p;
  }

  /**
   * Adds the information of {@code count} rows at once, each with weight {@code weight}: the
   * model then holds the minimizer of its problem plus {@code weight * (t_i - row_i^T theta)^2}
   * for every row. The rows are another model's square-root information (in this model's layout
   * and basis), so with their own minimum {@code residualSumOfSquares} and effective sample size
   * {@code sampleSize} the model's {@code rho^2} and {@code n_eff} become those of the union of
   * both problems: {@code rho^2 += weight * residualSumOfSquares + (what the rotations leave
   * over)}, {@code n_eff += weight * sampleSize}. Nothing is forgotten, no prior row is added, the
   * noise estimate and the update count are unchanged. Each row is rotated into the factor by
   * Givens rotations, as {@link #update} does; {@code O(count p^2)}, cold path.
   *
   * @param rows rows in layout order, each of length at least {@link #dimension()}. Not modified.
   * @param targets the rows' targets. Not modified.
   * @param count number of rows
   * @param weight the rows' weight, positive and finite (forgetting between the rows' time and now)
   * @param residualSumOfSquares the rows' own minimum, finite and non-negative
   * @param sampleSize the rows' effective sample size, finite and non-negative
   * @return false, with the model unchanged, if an entry (times {@code sqrt(weight)}) is not finite
   *     or is larger than {@link #MAX_ABS_INPUT}
   * @throws IllegalArgumentException if {@code weight}, {@code residualSumOfSquares} or
   *     {@code sampleSize} is out of range, or a row is too short
   */
  public boolean addRows(double[][] rows, double[] targets, int count, double weight,
      double residualSumOfSquares, double sampleSize) {
    if (!(weight > 0 && weight < Double.POSITIVE_INFINITY)) {
      throw new IllegalArgumentException("weight must be positive and finite, got " + weight);
    }
    if (!(residualSumOfSquares >= 0 && residualSumOfSquares < Double.POSITIVE_INFINITY)) {
      throw new IllegalArgumentException("residualSumOfSquares must be finite and >= 0, got " + residualSumOfSquares);
    }
    if (!(sampleSize >= 0 && sampleSize < Double.POSITIVE_INFINITY)) {
      throw new IllegalArgumentException("sampleSize must be finite and >= 0, got " + sampleSize);
    }
    final double sw = Math.sqrt(weight);
    for (int k = 0; k < count; k++) {
      checkLength(rows[k]);
      if (!acceptable(rows[k], targets[k] * sw)) {
        return false;
      }
      for (int j = 0; j < p; j++) {
        if (!(Math.abs(rows[k][j] * sw) <= MAX_ABS_INPUT)) {
          return false;
        }
      }
    }
    applyRebases();
    final int n = p;
    final double[][] rm = r;
    final double[] w = work;
    final double f = sw / scale;
    double added = 0.0;
    for (int k = 0; k < count; k++) {
      gather(rows[k], w);
      for (int j = 0; j < n; j++) {
        w[j] *= f;
      }
      double yw = targets[k] * f;
      for (int i = 0; i < n; i++) {
        final double xi = w[i];
        if (xi == 0.0) {
          continue;
        }
        final double[] row = rm[i];
        final double ai = row[i];
        double h = Math.sqrt(ai * ai + xi * xi); // as update: StrictMath.hypot cost most of a fold
        if (!(h > 0.0 && h < Double.POSITIVE_INFINITY)) {
          h = StrictMath.hypot(ai, xi); // squares under- or overflowed: rare path
        }
        final double cs = ai / h;
        final double sn = xi / h;
        row[i] = h;
        w[i] = 0.0;
        for (int j = i + 1; j < n; j++) {
          final double a = row[j];
          final double b = w[j];
          row[j] = cs * a + sn * b;
          w[j] = cs * b - sn * a;
        }
        final double zi = z[i];
        z[i] = cs * zi + sn * yw;
        yw = cs * yw - sn * zi;
      }
      final double e = yw * scale;
      added += e * e;
    }
    factorChanged();
    rho2 += weight * residualSumOfSquares + added;
    nEff += weight * sampleSize;
    if (settings.diffuse()) {
      ready = fullRank();
    }
    return true;
  }

  /**
   * R^-1, upper triangular, row-major p x p, by back-substitution per column; kept until the
   * factor changes (a snapshot asks for standard errors and the covariance, twice). Not to be
   * modified by the caller. Only the rows and columns from {@code start} on are computed (the
   * inverse of the trailing block, the same bits as those entries of the whole inverse: each
   * reads only entries of that block); the others are 0.
   */
  private double[] inverseFactor(int start) {
    if (inverse != null && inverseStart <= start) {
      return inverse;
    }
    // a block computed before (from inverseStart on) is extended, not computed again: its
    // entries are those of any larger block (see above), and each column goes on upwards
    final double[] u = inverse != null ? inverse : new double[p * p];
    final int done = inverse != null ? inverseStart : p;
    for (int j = start; j < p; j++) {
      final int top;
      if (j >= done) {
        top = done - 1; // rows from done on are there
      } else {
        u[j * p + j] = 1.0 / r[j][j];
        top = j - 1;
      }
      for (int i = top; i >= start; i--) {
        double s = 0.0;
        for (int k = i + 1; k <= j; k++) {
          s += r[i][k] * u[k * p + j];
        }
        u[i * p + j] = -s / r[i][i];
      }
    }
    inverse = u;
    inverseStart = start;
    return u;
  }

  /**
   * The OLS-style residual sd {@code sqrt(rho^2 / (nEff - p))}; {@code rho^2} is the minimum of
   * the weighted objective, which with a prior includes the prior rows' penalty.
   *
   * @return the residual sd, NaN when {@code nEff <= p}
   */
  public double residualSd() {
    double dof = nEff - p;
    return dof > 0 ? Math.sqrt(rho2 / dof) : Double.NaN;
  }

  /** @return the weighted residual sum of squares {@code rho^2} (see {@link #residualSd()}) */
  public double weightedResidualSumOfSquares() {
    return rho2;
  }

  /** @return the effective sample size, {@code nEff <- lambda nEff + 1} per update */
  public double effectiveSampleSize() {
    return nEff;
  }

  /** @return the number of accepted updates */
  public long updates() {
    return updates;
  }

  // ---------------------------------------------------------------- checkpoint

  /**
   * Writes the whole state (not the observer). {@link #readFrom} continues bit-for-bit.
   *
   * @param out the sink. Modified.
   * @throws IOException from {@code out}
   */
  public void writeTo(DataOutput out) throws IOException {
    applyRebases();
    out.writeInt(MAGIC);
    out.writeInt(FORMAT_VERSION);
    out.writeDouble(settings.priorVariance());
    out.writeBoolean(settings.constantTerm());
    out.writeBoolean(settings.windupGuard());
    out.writeDouble(settings.intervalZ());
    out.writeDouble(settings.noiseHalfLifeRecords());
    out.writeInt(p);
    out.writeDouble(scale);
    for (int i = 0; i < p; i++) {
      for (int j = i; j < p; j++) {
        out.writeDouble(r[i][j]);
      }
    }
    final double[] t = currentTheta();
    for (int j = 0; j < p; j++) {
      out.writeDouble(z[j]);
      out.writeDouble(t[j]);
      out.writeDouble(priorAtRefresh[j]);
      out.writeDouble(logDecayAtRefresh[j]);
    }
    out.writeDouble(logDecay);
    out.writeLong(refreshCounter);
    out.writeDouble(rho2);
    out.writeDouble(nEff);
    out.writeDouble(noiseSum);
    out.writeDouble(noiseWeight);
    out.writeLong(updates);
    out.writeBoolean(ready);
    // version 3: the factor's column order
    out.writeInt(front);
    for (int q = 0; q < p; q++) {
      out.writeInt(col[q]);
    }
  }

  /**
   * Reads a state written by {@link #writeTo}.
   *
   * @param in the source. Modified (read).
   * @return the model
   * @throws IOException from {@code in}, or if the bytes are not a model of a known version
   */
  public static RlsModel readFrom(DataInput in) throws IOException {
    try {
      return read(in);
    } catch (EOFException e) {
      throw new EOFException("model checkpoint is truncated");
    }
  }

  /** A value read from a checkpoint: refused unless finite and at least {@code min}. */
  private static double checked(double v, double min, String what) throws IOException {
    if (!(v >= min && v < Double.POSITIVE_INFINITY)) {
      throw new IOException("corrupt model checkpoint: " + what + " " + v);
    }
    return v;
  }

  private static long checkedCount(long v, String what) throws IOException {
    if (v < 0) {
      throw new IOException("corrupt model checkpoint: " + what + " " + v);
    }
    return v;
  }

  private static RlsModel read(DataInput in) throws IOException {
    int magic = in.readInt();
    if (magic != MAGIC) {
      throw new IOException("not a model checkpoint: magic 0x" + Integer.toHexString(magic));
    }
    int version = in.readInt();
    if (version < 1 || version > FORMAT_VERSION) {
      throw new IOException("model checkpoint format version " + version + " is not supported (this build reads "
          + FORMAT_VERSION + ")");
    }
    ModelSettings s;
    try {
      s = new ModelSettings(in.readDouble(), in.readBoolean(), in.readBoolean(), in.readDouble(), in.readDouble());
    } catch (IllegalArgumentException e) {
      throw new IOException("corrupt model checkpoint: " + e.getMessage(), e);
    }
    int p = in.readInt();
    if (p < (s.constantTerm() ? 1 : 0) || p > 1 << 15) {
      throw new IOException("corrupt model checkpoint: dimension " + p);
    }
    RlsModel m = new RlsModel(s.constantTerm() ? 1 : 0, s);
    m.ensureCapacity(p);
    m.p = p;
    m.scale = version == 1 ? 1.0 : in.readDouble();
    if (!(m.scale > 0 && m.scale < Double.POSITIVE_INFINITY)) {
      throw new IOException("corrupt model checkpoint: factor scale " + m.scale);
    }
    for (int i = 0; i < p; i++) {
      // pivots are positive with a prior and never negative; every entry is finite
      checked(m.r[i][i] = in.readDouble(), s.diffuse() ? 0.0 : Double.MIN_VALUE, "pivot " + i);
      for (int j = i + 1; j < p; j++) {
        checked(m.r[i][j] = in.readDouble(), -Double.MAX_VALUE, "factor entry (" + i + ", " + j + ")");
      }
    }
    for (int j = 0; j < p; j++) {
      m.z[j] = checked(in.readDouble(), -Double.MAX_VALUE, "z_" + j);
      m.theta[j] = in.readDouble();
      m.priorAtRefresh[j] = checked(in.readDouble(), 0.0, "prior information of column " + j);
      m.logDecayAtRefresh[j] = checked(in.readDouble(), -Double.MAX_VALUE, "log-decay at the refresh of column " + j);
    }
    m.logDecay = checked(in.readDouble(), -Double.MAX_VALUE, "log-decay");
    m.refreshCounter = checkedCount(in.readLong(), "refresh counter");
    m.rho2 = checked(in.readDouble(), 0.0, "rho^2");
    m.nEff = checked(in.readDouble(), 0.0, "effective sample size");
    m.noiseSum = checked(in.readDouble(), 0.0, "noise sum");
    m.noiseWeight = checked(in.readDouble(), 0.0, "noise weight");
    m.updates = checkedCount(in.readLong(), "update count");
    m.ready = in.readBoolean();
    if (version >= 3) {
      int front = in.readInt();
      if (front < 0 || front > p) {
        throw new IOException("corrupt model checkpoint: leading block of " + front + " columns in " + p);
      }
      m.front = front;
      boolean[] seen = new boolean[p];
      for (int q = 0; q < p; q++) {
        int j = in.readInt();
        if (j < 0 || j >= p || seen[j]) {
          throw new IOException("corrupt model checkpoint: column order entry " + j + " at position " + q);
        }
        seen[j] = true;
        m.col[q] = j;
        m.pos[j] = q;
      }
    } else {
      for (int j = 0; j < p; j++) {
        m.col[j] = j;
        m.pos[j] = j;
      }
    }
    m.thetaValid = false; // solved from R and z when needed, as in the model that wrote it
    return m;
  }

  private void checkLength(double[] x) {
    if (x.length < p) {
      throw new IllegalArgumentException("vector length must be at least the dimension " + p + ", got " + x.length);
    }
  }
}
