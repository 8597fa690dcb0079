package dev.runnel.core.pipeline;

import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;

/**
 * A bounded memory of the (entity, target time) keys the model learned an actual for, with the
 * value learned (docs/forecasting.md, "Late, repeated and corrected actuals"): the step asks it
 * before learning an actual, so a repeat (the same value) is rejected and a correction (another
 * value) is found. Bounded by count ({@code input.forecast.max_learned_actuals}: the key learned
 * first is forgotten, and counted when it is forgotten before its time) and by event-time age
 * ({@code input.forecast.max_actual_lag}: a key whose target time is further than that behind the
 * stream clock is forgotten, since any actual for it is rejected as too late anyway).
 *
 * <p>For {@code corrections: replace} each key also keeps what removing its observation from the
 * model needs: the row learned, as (column id, value in the column's first basis) pairs for the
 * non-zero entries (see {@link ColumnBases}), the cumulative log-forgetting at the time it was
 * learned, and the model generation (a restart from the prior forgets it anyway).
 *
 * <p>Layout: a ring of entries in the order learned (the count bound and the age bound both look at
 * the oldest first) on primitive arrays grown by doubling up to the bound, and a linear-probing
 * hash table of entry ids on the 64-bit hash of the entity text and the target time (the text is
 * kept, so a collision is resolved exactly); deletion shifts the probe run back. The keys and the
 * table are {@link EntityTimeKeys}, shared with {@link PendingForecasts}. Once warm a look-up
 * or an insert allocates nothing and costs O(1) expected (a row's arrays are reused and grow only
 * when a longer row comes). Deterministic; one thread.
 */
final class LearnedActuals {


  private final int max;
  private final long maxLagMillis;
  private final boolean keepsRows;

  private int capacity;
  /** Ring of entries: the oldest at {@code head}, {@code size} of them. */
  private int head;
  private int size;
  /** The entries' (entity, target time) keys and the table over them. */
  private EntityTimeKeys keys;
  private double[] value;
  // what a downdate needs (keepsRows only)
  private int[][] rowIds;
  private double[][] rowValues;
  private int[] rowLength;
  private double[] logDecay;
  private long[] generation;

  private long forgottenEarly;

  /**
   * @param max the count bound, at least 1
   * @param maxLagMillis the age bound, at least 1 ms
   * @param keepsRows whether each key keeps its row ({@code corrections: replace})
   */
  LearnedActuals(int max, long maxLagMillis, boolean keepsRows) {
    this.max = max;
    this.maxLagMillis = maxLagMillis;
    this.keepsRows = keepsRows;
    allocate(Math.min(max, 64));
  }

  private void allocate(int cap) {
    capacity = cap;
    head = 0;
    size = 0;
    keys = new EntityTimeKeys(cap);
    value = new double[cap];
    if (keepsRows) {
      rowIds = new int[cap][];
      rowValues = new double[cap][];
      rowLength = new int[cap];
      logDecay = new double[cap];
      generation = new long[cap];
    }
  }

  /** Doubles the ring (not beyond the bound), oldest first at 0, and rebuilds the table; cold. */
  private void grow() {
    int cap = (int) Math.min((long) capacity * 2, max);
    keys.resizeRing(head, size, cap);
    double[] v = new double[cap];
    int[][] ri = keepsRows ? new int[cap][] : null;
    double[][] rv = keepsRows ? new double[cap][] : null;
    int[] rl = keepsRows ? new int[cap] : null;
    double[] ld = keepsRows ? new double[cap] : null;
    long[] gen = keepsRows ? new long[cap] : null;
    for (int i = 0; i < size; i++) {
      int e = (head + i) % capacity;
      v[i] = value[e];
      if (keepsRows) {
        ri[i] = rowIds[e];
        rv[i] = rowValues[e];
        rl[i] = rowLength[e];
        ld[i] = logDecay[e];
        gen[i] = generation[e];
      }
    }
    int n = size;
    value = v;
    if (keepsRows) {
      rowIds = ri;
      rowValues = rv;
      rowLength = rl;
      logDecay = ld;
      generation = gen;
    }
    capacity = cap;
    head = 0;
    for (int e = 0; e < n; e++) {
      keys.insert(e);
    }
  }

  private boolean expired(long targetMillis, long nowMillis) {
    return nowMillis != Long.MIN_VALUE && nowMillis - targetMillis > maxLagMillis;
  }

  /** Forgets the oldest keys whose target time is more than the age bound behind {@code nowMillis}. */
  void expireFront(long nowMillis) {
    while (size > 0 && expired(keys.target(head), nowMillis)) {
      removeHead();
    }
  }

  private void removeHead() {
    keys.removeSlot(keys.slotOfEntry(head));
    head = (head + 1) % capacity;
    size--;
  }

  /**
   * The entry learned for (entity, target time), or -1. Read it with {@link #value(int)} and the
   * row accessors until the next mutating call.
   *
   * @param k the entity text. Not modified.
   */
  int find(char[] k, int n, long targetMillis, long nowMillis) {
    expireFront(nowMillis);
    return keys.entryAt(keys.slotOf(EntityTimeKeys.hash(k, n, targetMillis), k, n, targetMillis));
  }

  /**
   * Remembers a key as learned with {@code v} (the caller found it absent). When full, the key
   * learned first is forgotten (counted as forgotten early when its age had not run out).
   *
   * @param k the entity text. Not modified (copied).
   * @return the entry, for {@link #keepRow}
   */
  int add(char[] k, int n, long targetMillis, double v, long nowMillis) {
    expireFront(nowMillis);
    if (size == max) {
      removeHead();
      forgottenEarly++;
    } else if (size == capacity) {
      grow();
    }
    int e = (head + size) % capacity;
    size++;
    keys.set(e, EntityTimeKeys.hash(k, n, targetMillis), k, n, targetMillis);
    value[e] = v;
    if (keepsRows) {
      rowLength[e] = 0;
    }
    keys.insert(e);
    return e;
  }

  /** Replaces the value learned for entry {@code e} (a correction was learned). */
  void setValue(int e, double v) {
    value[e] = v;
  }

  /**
   * Keeps entry {@code e}'s row: the non-zero entries of {@code row} over {@code [0, dimension)},
   * each as its column's id and its value in the column's first basis.
   *
   * @param row the row in today's layout. Not modified.
   * @param bases the columns' ids and bases. Not modified.
   * @param logDecayNow the cumulative log-forgetting after this row was learned
   * @param gen the model generation
   */
  void keepRow(int e, double[] row, int dimension, ColumnBases bases, double logDecayNow, long gen) {
    int nnz = 0;
    for (int j = 0; j < dimension; j++) {
      if (row[j] != 0.0) {
        nnz++;
      }
    }
    if (rowIds[e] == null || rowIds[e].length < nnz) {
      rowIds[e] = new int[Math.max(nnz, 8)];
      rowValues[e] = new double[Math.max(nnz, 8)];
    }
    int[] ids = rowIds[e];
    double[] vals = rowValues[e];
    int m = 0;
    for (int j = 0; j < dimension; j++) {
      if (row[j] != 0.0) {
        ids[m] = bases.id(j);
        vals[m] = bases.toFirstBasis(j, row[j]);
        m++;
      }
    }
    rowLength[e] = m;
    logDecay[e] = logDecayNow;
    generation[e] = gen;
  }

  double value(int e) { return value[e]; }

  boolean keepsRows() { return keepsRows; }

  /** Non-zero entries of entry {@code e}'s row (0 when it kept none). */
  int rowLength(int e) { return rowLength[e]; }

  int rowId(int e, int i) { return rowIds[e][i]; }

  double rowValue(int e, int i) { return rowValues[e][i]; }

  double logDecay(int e) { return logDecay[e]; }

  long generation(int e) { return generation[e]; }

  /** Keys remembered now. */
  int size() { return size; }

  /** Keys forgotten by the count bound while an actual for them could still be accepted. */
  long forgottenEarly() { return forgottenEarly; }

  /** Forgets everything. */
  void clear() {
    allocate(Math.min(max, 64));
    forgottenEarly = 0;
  }

  /** Writes the counter and the keys, oldest first. @param out modified */
  void writeTo(DataOutput out) throws IOException {
    out.writeLong(forgottenEarly);
    out.writeBoolean(keepsRows);
    out.writeInt(size);
    for (int i = 0; i < size; i++) {
      int e = (head + i) % capacity;
      keys.writeKey(out, e);
      out.writeLong(keys.target(e));
      out.writeDouble(value[e]);
      if (keepsRows) {
        out.writeInt(rowLength[e]);
        for (int c = 0; c < rowLength[e]; c++) {
          out.writeInt(rowIds[e][c]);
          out.writeDouble(rowValues[e][c]);
        }
        out.writeDouble(logDecay[e]);
        out.writeLong(generation[e]);
      }
    }
  }

  /** Replaces the state with what {@link #writeTo} wrote (under the same policy). */
  void readFrom(DataInput in) throws IOException {
    clear();
    long early = in.readLong();
    boolean rows = in.readBoolean();
    if (rows != keepsRows) {
      throw new IOException("the learned actuals were written " + (rows ? "with" : "without")
          + " corrections: replace; keep input.forecast.corrections as it was, or reset the state");
    }
    int n = in.readInt();
    if (n < 0 || n > max) {
      throw new IOException(n + " learned actuals in the checkpoint, more than input.forecast.max_learned_actuals (" + max + ")");
    }
    for (int r = 0; r < n; r++) {
      int len = keys.readKey(in, "a learned actual's");
      char[] k = keys.readBuffer();
      long t = in.readLong();
      double v = in.readDouble();
      int e = add(k, len, t, v, Long.MIN_VALUE);
      if (keepsRows) {
        int m = in.readInt();
        if (m < 0 || m > 1 << 24) {
          throw new IOException("a learned actual's row of " + m + " entries");
        }
        rowIds[e] = new int[Math.max(m, 8)];
        rowValues[e] = new double[Math.max(m, 8)];
        for (int i = 0; i < m; i++) {
          rowIds[e][i] = in.readInt();
          rowValues[e][i] = in.readDouble();
        }
        rowLength[e] = m;
        logDecay[e] = in.readDouble();
        generation[e] = in.readLong();
      }
    }
    forgottenEarly = early;
  }
}
