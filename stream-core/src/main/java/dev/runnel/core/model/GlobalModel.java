package dev.runnel.core.model;

import dev.runnel.core.layout.LayoutListener;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.EOFException;
import java.io.IOException;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;

/**
 * One partition's part of a model shared across partitions: it predicts with the information
 * of its own records and of every share folded in from the other partitions, and keeps what its
 * own records contributed since its last share so that it can share it. One writer thread.
 *
 * <p>It is the featurizer's {@link LayoutListener} in place of a plain {@link RlsModel}, and
 * takes feature vectors in the local layout. It keeps two models:
 * <ul>
 *   <li>the <b>view</b>, an {@link RlsModel} with the prior (counted once, here) over the union
 *       of the columns this partition has and every column a folded share named: its own rows go
 *       in by {@link #update}, other partitions' shares by {@link #fold};</li>
 *   <li>the <b>pending share</b>, {@link InformationSums}: the weighted sums {@code X^T W X},
 *       {@code X^T W y}, {@code y^T W y} of the same own rows with the same forgetting factors,
 *       so that it holds exactly the rows' information since the last {@link #share}; a share
 *       factors it (Cholesky), hands it out and starts it again. (Checkpoints of version 1 kept
 *       it as an {@link RlsModel} without prior; they are read and turned into sums.)</li>
 * </ul>
 *
 * <p>Columns are matched by name. A column only another partition holds is <b>kept</b> in the
 * view (never marginalized): the view's other weights are then those of the joint solution, as
 * the union of all records gives them, and a later share that touches the column adds to it
 * exactly; marginalizing would be exact only until such a share came. A column the local layout
 * removes is kept too, for the same reason (its information is in the pending share until it is
 * shared); a local column that comes back under the same name continues the kept one. A level
 * (a never re-based column) a share brings that the view lacks goes to the very start of the
 * view's factor ({@link RlsModel#columnAddedAhead}): own rows are 0 there, so an own update and
 * forecast skip those rows, and the local weights, standard errors and covariance come from the
 * factor's trailing block alone ({@link RlsModel#weightsFrom}), exactly, since the trailing block
 * of an upper-triangular factor factors the marginal information of its columns; the leading
 * block is kept, so a later share touching it still folds exactly. Every
 * column's basis (the entry of a value {@code v} is {@code (v - offset) / scale}) starts at
 * {@code (0, 1)} when the column is created, as the featurizer's scalers do, and follows each
 * re-basing ({@code offset += shift * scale}, {@code scale *= s'/s}); a share states its
 * columns' bases, and its rows are brought to the view's with the re-basing algebra of
 * {@link RlsModel#columnRebased} ({@code a'_k = (a_k - shift a_0) / scale}). Forgetting by event
 * time: a share's rows, stated at the sender's event time {@code t0}, are folded at the
 * receiver's event time {@code t1} with weight {@code 2^(-(t1 - t0)/h)}, the factor its own
 * records get for the same step, so every row's weight is {@code 2^(-(now - t_row)/h)}.
 *
 * <p>Exactly once: the last sequence number folded from each source partition and the next one
 * this partition will share are part of the state ({@link #writeTo}); a share already folded is
 * ignored and a gap is refused. Details: {@code docs/model.md}, "One model across partitions".
 */
public final class GlobalModel implements LayoutListener {

  /** What {@link #fold} did. */
  public enum FoldResult {
    /** The share's information is now in the view. */
    FOLDED,
    /** The share (or a later one from its source) was folded before: nothing changed. */
    ALREADY_FOLDED
  }

  /**
   * Format version written by {@link #writeTo}: 3 adds the count of the view's columns ahead
   * ({@link RlsModel#aheadCount}); 2 and 1 (the pending share an {@link RlsModel}) are read.
   */
  public static final int FORMAT_VERSION = 3;
  private static final int MAGIC = 0x524e4731; // "RNG1"
  /** A share stated more than this many half-lives after the receiver's clock is refused. */
  static final double MAX_HALVINGS_AHEAD = 64.0;

  /** The columns of one of the two models: names, bases, and which local column each is. */
  private static final class Table {
    /** The view's model; null in the pending share. */
    RlsModel model;
    /** The pending share's sums; null in the view. */
    InformationSums sums;
    final List<String> names = new ArrayList<>();
    final Map<String, Integer> index = new HashMap<>(); // lookups only; never iterated
    double[] offset = new double[8];
    double[] scale = new double[8];
    boolean[] fixed = new boolean[8];
    int[] fromLocal = new int[8];
    /** Per column, the local index it is, or -1. */
    int[] local = new int[8];
    /** The local indices in the order of their columns here; rebuilt when {@link #orderStale}. */
    int[] localOrder = new int[8];
    boolean orderStale = true;

    int size() {
      return names.size();
    }

    /** Registers a column of the model (the caller adds it to the model after this). */
    int register(String name, boolean isFixed, double off, double sc) {
      int k = names.size();
      if (k == offset.length) {
        offset = Arrays.copyOf(offset, 2 * k);
        scale = Arrays.copyOf(scale, 2 * k);
        fixed = Arrays.copyOf(fixed, 2 * k);
        local = Arrays.copyOf(local, 2 * k);
      }
      names.add(name);
      index.put(name, k);
      offset[k] = off;
      scale[k] = sc;
      fixed[k] = isFixed;
      local[k] = -1;
      return k;
    }

    void bindLocal(int localIndex, int k) {
      if (localIndex == fromLocal.length) {
        fromLocal = Arrays.copyOf(fromLocal, 2 * localIndex);
      }
      fromLocal[localIndex] = k;
      local[k] = localIndex;
      orderStale = true;
    }

    /** @return the local indices in the order of their columns here ({@code localCount} of them) */
    int[] localOrder(int localCount) {
      if (orderStale) {
        if (localOrder.length < localCount) {
          localOrder = new int[Math.max(localCount, 2 * localOrder.length)];
        }
        int m = 0;
        for (int k = 0; k < names.size(); k++) {
          if (local[k] >= 0) {
            localOrder[m++] = local[k];
          }
        }
        orderStale = false;
      }
      return localOrder;
    }

    /** The local layout adds column {@code localIndex}: continue a kept column of that name or add one. */
    void localAdded(int localIndex, String name, boolean isFixed) {
      Integer kept = index.get(name);
      int k;
      if (kept != null) {
        k = kept;
        if (local[k] >= 0) {
          throw new IllegalStateException("column " + name + " was added to the layout twice");
        }
        if (offset[k] != 0.0 || scale[k] != 1.0) { // back to the basis a new column starts in
          rebase(k, 1.0 / scale[k], -offset[k] / scale[k]);
          offset[k] = 0.0;
          scale[k] = 1.0;
        }
      } else {
        k = register(name, isFixed, 0.0, 1.0);
        if (model != null) {
          model.columnAdded(k, name, isFixed);
        } else {
          sums.columnAdded();
        }
      }
      bindLocal(localIndex, k);
    }

    private void rebase(int k, double sc, double shift) {
      if (model != null) {
        model.columnRebased(k, sc, shift);
      } else {
        sums.columnRebased(k, sc, shift);
      }
    }

    void localRemoved(int localIndex, int localCount) {
      orderStale = true;
      local[fromLocal[localIndex]] = -1;
      for (int j = localIndex + 1; j < localCount; j++) {
        int k = fromLocal[j];
        fromLocal[j - 1] = k;
        local[k] = j - 1;
      }
    }

    void localRebased(int localIndex, double sc, double shift) {
      int k = fromLocal[localIndex];
      rebase(k, sc, shift);
      offset[k] += shift * scale[k];
      scale[k] *= sc;
    }

    void writeTo(DataOutput out) throws IOException {
      out.writeInt(names.size());
      for (int k = 0; k < names.size(); k++) {
        out.writeUTF(names.get(k));
        out.writeDouble(offset[k]);
        out.writeDouble(scale[k]);
        out.writeBoolean(fixed[k]);
        out.writeInt(local[k]);
      }
      if (model != null) {
        model.writeTo(out);
      } else {
        sums.writeTo(out);
      }
    }

    /**
     * @param pendingVersion 0 for the view; else the checkpoint's version for the pending share
     *     (1: an {@link RlsModel}, read and turned into sums; 2: {@link InformationSums})
     */
    static Table readFrom(DataInput in, int localCount, String what, int pendingVersion) throws IOException {
      Table t = new Table();
      int n = in.readInt();
      if (n < 0 || n > ModelShare.MAX_COLUMNS) {
        throw new IOException("corrupt global model checkpoint: " + what + " has " + n + " columns");
      }
      boolean[] bound = new boolean[localCount];
      t.fromLocal = new int[Math.max(8, localCount)];
      for (int k = 0; k < n; k++) {
        String name = in.readUTF();
        double off = in.readDouble();
        double sc = in.readDouble();
        boolean fx = in.readBoolean();
        int loc = in.readInt();
        if (name.isEmpty() || t.index.containsKey(name) || !Double.isFinite(off) || !(sc > 0 && sc < Double.POSITIVE_INFINITY)
            || loc < -1 || loc >= localCount || (loc >= 0 && bound[loc])) {
          throw new IOException("corrupt global model checkpoint: " + what + " column " + k + " (" + name + ", offset "
              + off + ", scale " + sc + ", local index " + loc + ")");
        }
        t.register(name, fx, off, sc);
        if (loc >= 0) {
          bound[loc] = true;
          t.bindLocal(loc, k);
        }
      }
      for (int j = 0; j < localCount; j++) {
        if (!bound[j]) {
          throw new IOException("corrupt global model checkpoint: " + what + " has no column for local column " + j);
        }
      }
      int dim;
      if (pendingVersion == 0) {
        t.model = RlsModel.readFrom(in);
        dim = t.model.dimension();
      } else if (pendingVersion == 1) {
        RlsModel old = RlsModel.readFrom(in);
        dim = old.dimension();
        if (dim == n) {
          t.sums = InformationSums.fromModel(old);
        }
      } else {
        t.sums = InformationSums.readFrom(in);
        dim = t.sums.dimension();
      }
      if (dim != n) {
        throw new IOException("corrupt global model checkpoint: " + what + " lists " + n + " columns, its model has "
            + dim);
      }
      return t;
    }
  }

  private final int partition;
  private final ModelSettings settings;
  private final double halfLifeMillis;
  private Table view;
  private Table pending;
  private int local;
  private long nextSequence = 1;
  /** Per source partition, the last sequence number folded; sorted, so the checkpoint's bytes are too. */
  private final TreeMap<Integer, Long> folded = new TreeMap<>();
  private double[] viewRow = new double[8];
  /** {@link #localStart()}, or -1 when a layout change or a fold may have moved it. */
  private int localStart = -1;

  /**
   * A model at its prior over {@code initialColumns}, the layout's columns before any event (the
   * constant term first when {@code settings.constantTerm()}), each in the basis {@code (0, 1)}.
   *
   * @param partition this partition's number, at least 0; shares carry it as their source
   * @param initialColumns the columns' names, unique. Not modified.
   * @param settings the view's settings (the pending share takes the constant term from them).
   *     Not modified.
   * @param halfLifeMillis the event-time forgetting half-life in ms, or +Infinity for none; the
   *     same as the stream clock's (a per-record forgetting factor has no common clock across
   *     partitions and cannot be shared)
   * @throws IllegalArgumentException if an argument is out of range (named)
   */
  public GlobalModel(int partition, String[] initialColumns, ModelSettings settings, double halfLifeMillis) {
    if (partition < 0) {
      throw new IllegalArgumentException("partition must be at least 0, got " + partition);
    }
    if (!(halfLifeMillis > 0)) {
      throw new IllegalArgumentException("halfLifeMillis must be positive, or +Infinity for no forgetting, got "
          + halfLifeMillis);
    }
    this.partition = partition;
    this.settings = settings;
    this.halfLifeMillis = halfLifeMillis;
    this.view = new Table();
    for (int j = 0; j < initialColumns.length; j++) {
      if (view.index.containsKey(initialColumns[j]) || initialColumns[j].isEmpty()) {
        throw new IllegalArgumentException("initialColumns[" + j + "]: \"" + initialColumns[j]
            + "\" is empty or named twice; column names must be unique");
      }
      view.register(initialColumns[j], false, 0.0, 1.0);
      view.bindLocal(j, j);
    }
    view.model = new RlsModel(initialColumns.length, settings);
    this.local = initialColumns.length;
    this.pending = freshPending();
  }

  private GlobalModel(int partition, ModelSettings settings, double halfLifeMillis, Table view) {
    this.partition = partition;
    this.settings = settings;
    this.halfLifeMillis = halfLifeMillis;
    this.view = view;
  }

  /** A pending share with no information over the local columns, in their current bases. */
  private Table freshPending() {
    Table t = new Table();
    t.sums = new InformationSums(local);
    for (int j = 0; j < local; j++) {
      int v = view.fromLocal[j];
      t.register(view.names.get(v), view.fixed[v], view.offset[v], view.scale[v]);
      t.bindLocal(j, j);
    }
    return t;
  }

  // ---------------------------------------------------------------- the stream

  /**
   * Writes the local vector {@code x} into the view's layout (the pending share reads the local
   * vector itself: {@link InformationSums#update}).
   */
  private void scatter(double[] x) {
    if (x.length < local) {
      throw new IllegalArgumentException("vector length must be at least the local dimension " + local + ", got "
          + x.length);
    }
    int nv = view.size();
    if (viewRow.length < nv) {
      viewRow = new double[Math.max(nv, 2 * viewRow.length)];
    }
    Arrays.fill(viewRow, 0, nv, 0.0);
    final int[] to = view.fromLocal;
    for (int j = 0; j < local; j++) {
      viewRow[to[j]] = x[j];
    }
  }

  /**
   * Learns one own record: the view and the pending share both forget by {@code lambda} and
   * add the row. The pending share takes every row the view accepts (finite, within
   * {@link RlsModel#MAX_ABS_INPUT}); it adds {@code x x^T} over the row's non-zero entries.
   *
   * @param x the feature vector in the local layout. Not modified.
   * @param y the target
   * @param lambda the forgetting factor of this step, from the stream clock
   * @param aPrioriOut as {@link RlsModel#update(double[], double, double, double[])}. Modified.
   * @return as {@link RlsModel#update(double[], double, double, double[])}
   */
  public boolean update(double[] x, double y, double lambda, double[] aPrioriOut) {
    scatter(x);
    if (!view.model.update(viewRow, y, lambda, aPrioriOut)) {
      return false;
    }
    // the view accepted the row: it is finite and in range
    pending.sums.update(x, pending.localOrder(local), pending.fromLocal, local, y, lambda);
    return true;
  }

  /**
   * @param x the feature vector in the local layout. Not modified.
   * @return the view's prediction (NaN while it is not ready)
   */
  public double predict(double[] x) {
    scatter(x);
    return view.model.predict(viewRow);
  }

  /**
   * As {@link RlsModel#forecast}: the view's a-priori prediction and leverage for a record in the
   * local layout.
   *
   * @param x the feature vector in the local layout. Not modified.
   * @param out receives the leverage in element 0 and the prediction in element 1. Modified.
   */
  public void forecast(double[] x, double[] out) {
    scatter(x);
    view.model.forecast(viewRow, out);
  }

  /**
   * @param x the feature vector in the local layout. Not modified.
   * @return the view's leverage of {@code x} (NaN while it is not ready)
   */
  public double leverage(double[] x) {
    scatter(x);
    return view.model.leverage(viewRow);
  }

  /**
   * Hands out what this partition's own records contributed since its last share, stated at
   * {@code eventTimeMillis}, and starts the next share empty. Call it with the stream clock's
   * time, and checkpoint the model in the same transaction as the share is published.
   *
   * @param eventTimeMillis the event time at which the rows' weights are stated (the clock's)
   * @return the share, numbered one after the previous one
   */
  public ModelShare share(long eventTimeMillis) {
    InformationSums m = pending.sums;
    int n = m.dimension();
    double[][] rows = new double[n][n];
    double[] targets = new double[n];
    double rss = m.sqrtInformation(rows, targets);
    String[] names = new String[n];
    double[] offsets = new double[n];
    double[] scales = new double[n];
    boolean[] fixed = new boolean[n];
    int constant = -1;
    for (int q = 0; q < n; q++) {
      int k = q;
      names[q] = pending.names.get(k);
      offsets[q] = pending.offset[k];
      scales[q] = pending.scale[k];
      fixed[q] = pending.fixed[k];
      if (k == 0 && settings.constantTerm()) {
        constant = q;
      }
    }
    ModelShare s = new ModelShare(partition, nextSequence, eventTimeMillis, names, offsets, scales, fixed, constant,
        rows, targets, rss, m.effectiveSampleSize());
    nextSequence++;
    pending = freshPending();
    return s;
  }

  /**
   * Folds another partition's share into the view: its columns matched by name (one the view
   * lacks is added, with this view's prior, in the share's basis), its rows brought to the view's
   * bases and weighted by the forgetting from the share's event time to {@code nowMillis}. The
   * pending share is not touched: it holds own records only.
   *
   * @param s the share. Not modified.
   * @param nowMillis this partition's stream clock
   * @return {@link FoldResult#ALREADY_FOLDED}, changing nothing, when its sequence number is at or
   *     below the last one folded from its source; else {@link FoldResult#FOLDED}
   * @throws IllegalArgumentException (the state unchanged) if the share is this partition's own,
   *     skips a sequence number of its source (a share was lost: folding on would never count
   *     it), disagrees on the constant term, needs a shift without a constant term, is stated
   *     more than 64 half-lives after {@code nowMillis}, or holds entries beyond
   *     {@link RlsModel#MAX_ABS_INPUT} in this view's bases
   */
  public FoldResult fold(ModelShare s, long nowMillis) {
    if (s.source() == partition) {
      throw new IllegalArgumentException("share " + s.sequence() + " is this partition's (" + partition
          + ") own: its records are in the view already");
    }
    Long last = folded.get(s.source());
    long expected = last == null ? 1 : last + 1;
    if (s.sequence() < expected) {
      return FoldResult.ALREADY_FOLDED;
    }
    if (s.sequence() > expected) {
      throw new IllegalArgumentException("share " + s.sequence() + " of partition " + s.source()
          + " cannot be folded before share " + expected + " (the shares of a partition are folded in order, each once)");
    }
    if ((s.constant() >= 0) != settings.constantTerm()) {
      throw new IllegalArgumentException("share " + s.sequence() + " of partition " + s.source()
          + (s.constant() >= 0 ? " has" : " has no") + " constant term, this model" + (settings.constantTerm() ? " has" : " has no")
          + " one (model.constant_term must be the same on every partition)");
    }
    double weight = 1.0;
    if (halfLifeMillis < Double.POSITIVE_INFINITY) {
      double halvings = (double) (nowMillis - s.eventTimeMillis()) / halfLifeMillis;
      if (halvings < -MAX_HALVINGS_AHEAD) {
        throw new IllegalArgumentException("share " + s.sequence() + " of partition " + s.source() + " is stated at "
            + s.eventTimeMillis() + " ms, more than " + MAX_HALVINGS_AHEAD + " half-lives after this clock (" + nowMillis
            + " ms)");
      }
      weight = StrictMath.pow(2.0, -halvings);
    }
    final int n = s.dimension();
    final int c = s.constant();
    if (c >= 0 && !s.name(c).equals(view.names.get(0))) {
      throw new IllegalArgumentException("share " + s.sequence() + " of partition " + s.source() + " names its constant "
          + s.name(c) + ", this model " + view.names.get(0));
    }
    // the view column of each share column; new ones numbered after the view's
    int[] target = new int[n];
    int next = view.size();
    double[] sc = new double[n];
    double[] sh = new double[n];
    for (int q = 0; q < n; q++) {
      Integer v = view.index.get(s.name(q));
      if (v == null) {
        target[q] = next++;
        sc[q] = 1.0;
        sh[q] = 0.0;
      } else {
        target[q] = v;
        sc[q] = view.scale[v] / s.scale(q);
        sh[q] = (view.offset[v] - s.offset(q)) / s.scale(q);
        if (sh[q] != 0.0 && c < 0) {
          throw new IllegalArgumentException("column " + s.name(q) + " of share " + s.sequence() + " of partition "
              + s.source() + " needs a shift to this view's basis, and there is no constant term to take it");
        }
      }
    }
    // the rows in the view's layout and bases (a'_k = (a_k - shift a_0) / scale, as columnRebased)
    double[][] rows = new double[n][next];
    double[] targets = new double[n];
    double sw = Math.sqrt(weight);
    for (int i = 0; i < n; i++) {
      double a0 = c >= 0 ? s.factor(i, c) : 0.0;
      for (int q = i; q < n; q++) {
        double a = s.factor(i, q);
        double e = q == c || (sh[q] == 0.0 && sc[q] == 1.0) ? a : (a - a0 * sh[q]) / sc[q];
        if (!(Math.abs(e * sw) <= RlsModel.MAX_ABS_INPUT)) {
          throw new IllegalArgumentException("share " + s.sequence() + " of partition " + s.source()
              + " has an entry out of range in this view's basis: " + e);
        }
        rows[i][target[q]] = e;
      }
      targets[i] = s.target(i);
      if (!(Math.abs(targets[i] * sw) <= RlsModel.MAX_ABS_INPUT)) {
        throw new IllegalArgumentException("share " + s.sequence() + " of partition " + s.source()
            + " has a target out of range: " + targets[i]);
      }
    }
    for (int q = 0; q < n; q++) {
      if (target[q] >= view.size()) {
        int k = view.register(s.name(q), s.fixed(q), s.offset(q), s.scale(q));
        if (s.fixed(q)) {
          view.model.columnAddedAhead(k, s.name(q)); // own rows are 0 there: see the class doc
        } else {
          view.model.columnAdded(k, s.name(q), false);
        }
      }
    }
    if (!view.model.addRows(rows, targets, n, weight, s.residualSumOfSquares(), s.sampleSize())) {
      throw new IllegalStateException("the view refused rows checked in range"); // checked above
    }
    folded.put(s.source(), s.sequence());
    localStart = -1;
    return FoldResult.FOLDED;
  }

  /**
   * Starts the view again from its prior over the local columns, and the pending share empty:
   * what a model per partition does after a step of 64 half-lives or more, when everything
   * learned before weighs under {@code 2^-64} of the next record (docs/model.md, "The stream
   * clock"). Kept columns only other partitions held go (they come back with the next share that
   * names them); the local columns keep their bases, as the featurizer's scalers do. The
   * exactly-once bookkeeping is kept: the shares folded before are not folded again, and the next
   * share's number follows the last one.
   */
  public void restartFromPrior() {
    Table fresh = new Table();
    for (int j = 0; j < local; j++) {
      int v = view.fromLocal[j];
      fresh.register(view.names.get(v), view.fixed[v], view.offset[v], view.scale[v]);
      fresh.bindLocal(j, j);
    }
    fresh.model = new RlsModel(local, settings);
    view = fresh;
    localStart = -1;
    pending = freshPending();
  }

  // ---------------------------------------------------------------- layout events

  @Override
  public void columnAdded(int index, String name) {
    columnAdded(index, name, false);
  }

  @Override
  public void columnAdded(int index, String name, boolean neverRebased) {
    if (index != local) {
      throw new IllegalArgumentException("columnAdded index must equal the local dimension " + local + ", got " + index);
    }
    view.localAdded(index, name, neverRebased);
    pending.localAdded(index, name, neverRebased);
    local++;
    localStart = -1;
  }

  /** The column stays in the view and in the pending share (kept; see the class doc). */
  @Override
  public void columnRemoved(int index) {
    int min = settings.constantTerm() ? 1 : 0;
    if (index < min || index >= local) {
      throw new IllegalArgumentException("columnRemoved index must be in [" + min + ", " + (local - 1) + "], got " + index);
    }
    view.localRemoved(index, local);
    pending.localRemoved(index, local);
    local--;
    localStart = -1;
  }

  @Override
  public void columnRebased(int column, double scale, double shift) {
    if (column < 0 || column >= local) {
      throw new IllegalArgumentException("columnRebased column must be in [0, " + (local - 1) + "], got " + column);
    }
    view.localRebased(column, scale, shift);
    pending.localRebased(column, scale, shift);
  }

  // ---------------------------------------------------------------- reading

  /** @return the view: the model this partition predicts with, in the view's own column order */
  public RlsModel view() {
    return view.model;
  }

  /** @return the view's columns' names, in its order (a new list) */
  public List<String> viewColumns() {
    return new ArrayList<>(view.names);
  }

  /** @param name a column @return its index in the view, or -1 */
  public int viewIndex(String name) {
    Integer v = view.index.get(name);
    return v == null ? -1 : v;
  }

  /** @param v a view column @return the offset of its basis */
  public double viewOffset(int v) {
    return view.offset[v];
  }

  /** @param v a view column @return the scale of its basis */
  public double viewScale(int v) {
    return view.scale[v];
  }

  /**
   * The view's weights of the local columns, in the local layout: the entries of the joint solution
   * over every column of the view that this partition's layout holds.
   *
   * @param out receives {@link #localDimension()} weights. Modified.
   */
  public void localWeights(double[] out) {
    double[] w = new double[view.size()];
    view.model.weightsFrom(localStart(), w);
    for (int j = 0; j < local; j++) {
      out[j] = w[view.fromLocal[j]];
    }
  }

  /**
   * The view's standard errors of the local columns, in the local layout.
   *
   * @param out receives {@link #localDimension()} standard errors. Modified.
   */
  public void localStandardErrors(double[] out) {
    double[] se = new double[view.size()];
    view.model.standardErrorsFrom(localStart(), se);
    for (int j = 0; j < local; j++) {
      out[j] = se[view.fromLocal[j]];
    }
  }

  /**
   * The block of the view's unscaled covariance over the local columns, in the local layout
   * (the marginal covariance of their weights in the joint solution).
   *
   * @return row-major {@code localDimension() x localDimension()} (a new array)
   */
  public double[] localUnscaledCovariance() {
    double[] cov = view.model.unscaledCovarianceFrom(localStart());
    int n = view.size();
    double[] out = new double[local * local];
    for (int i = 0; i < local; i++) {
      int vi = view.fromLocal[i];
      for (int j = 0; j < local; j++) {
        out[i * local + j] = cov[vi * n + view.fromLocal[j]];
      }
    }
    return out;
  }

  /**
   * @return the first position in the view's factor of a local column: the trailing block from
   *     there holds every local column, and the solution's entries, standard errors and marginal
   *     covariance of those columns need only that block (see {@link RlsModel#weightsFrom})
   */
  private int localStart() {
    if (localStart < 0) {
      int start = view.size();
      for (int j = 0; j < local; j++) {
        start = Math.min(start, view.model.position(view.fromLocal[j]));
      }
      localStart = start;
    }
    return localStart;
  }

  /** @return per source partition, the last sequence number folded (a new sorted map) */
  public java.util.SortedMap<Integer, Long> foldedSequences() {
    return new TreeMap<>(folded);
  }

  /** @return the number of columns of the local layout */
  public int localDimension() {
    return local;
  }

  /** @return the number of columns the pending share has */
  public int pendingDimension() {
    return pending.size();
  }

  /** @param source a partition @return the last sequence number folded from it, 0 for none */
  public long lastFolded(int source) {
    Long v = folded.get(source);
    return v == null ? 0 : v;
  }

  /** @return the sequence number the next {@link #share} will carry */
  public long nextShareSequence() {
    return nextSequence;
  }

  // ---------------------------------------------------------------- checkpoint

  /**
   * Writes the whole state: the view (and how many of its columns are ahead in its factor) and
   * the pending share with their columns and bases, the
   * next share's number and the last number folded from each source. {@link #readFrom}
   * continues bit for bit.
   *
   * @param out the sink. Modified.
   * @throws IOException from {@code out}
   */
  public void writeTo(DataOutput out) throws IOException {
    out.writeInt(MAGIC);
    out.writeInt(FORMAT_VERSION);
    out.writeInt(partition);
    out.writeDouble(halfLifeMillis);
    out.writeInt(local);
    out.writeLong(nextSequence);
    out.writeInt(folded.size());
    for (Map.Entry<Integer, Long> e : folded.entrySet()) {
      out.writeInt(e.getKey());
      out.writeLong(e.getValue());
    }
    view.writeTo(out);
    out.writeInt(view.model.aheadCount());
    pending.writeTo(out);
  }

  /**
   * Reads a state written by {@link #writeTo}.
   *
   * @param in the source. Modified (read).
   * @return the model
   * @throws IOException if the bytes are not a global model of a known version, are cut short
   *     ("global model checkpoint is truncated") or hold a value out of range (named)
   */
  public static GlobalModel readFrom(DataInput in) throws IOException {
    try {
      int magic = in.readInt();
      if (magic != MAGIC) {
        throw new IOException("not a global model checkpoint: magic 0x" + Integer.toHexString(magic));
      }
      int version = in.readInt();
      if (version < 1 || version > FORMAT_VERSION) {
        throw new IOException("global model checkpoint format version " + version + " is not supported (this build reads 1 to "
            + FORMAT_VERSION + ")");
      }
      int partition = in.readInt();
      double h = in.readDouble();
      int local = in.readInt();
      long nextSequence = in.readLong();
      int sources = in.readInt();
      if (partition < 0 || !(h > 0) || local < 0 || local > ModelShare.MAX_COLUMNS || nextSequence < 1 || sources < 0) {
        throw new IOException("corrupt global model checkpoint: partition " + partition + ", half-life " + h
            + " ms, local columns " + local + ", next share " + nextSequence + ", sources " + sources);
      }
      TreeMap<Integer, Long> folded = new TreeMap<>();
      for (int i = 0; i < sources; i++) {
        int src = in.readInt();
        long seq = in.readLong();
        if (src < 0 || src == partition || seq < 1 || folded.put(src, seq) != null) {
          throw new IOException("corrupt global model checkpoint: folded share " + seq + " of partition " + src);
        }
      }
      Table view = Table.readFrom(in, local, "view", 0);
      if (version >= 3) {
        int ahead = in.readInt();
        try {
          view.model.restoreAheadCount(ahead);
        } catch (IllegalArgumentException e) {
          throw new IOException("corrupt global model checkpoint: " + e.getMessage());
        }
      }
      GlobalModel g = new GlobalModel(partition, view.model.settings(), h, view);
      g.local = local;
      g.nextSequence = nextSequence;
      g.folded.putAll(folded);
      g.pending = Table.readFrom(in, local, "pending share", version);
      return g;
    } catch (EOFException e) {
      throw new EOFException("global model checkpoint is truncated");
    }
  }
}
