package dev.runnel.core.pipeline;

import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;
import java.util.Arrays;

/**
 * Error metrics of settled forecasts by horizon bucket (docs/forecasting.md, "Errors by horizon"):
 * count, mean absolute error, root mean squared error, bias (mean of actual − forecast) and interval
 * coverage, overall and per entity, each both since the state began and over a fading window, as
 * the snapshot's prequential metrics ({@link PrequentialMetrics}). One writer thread.
 *
 * <p>A bucket is given by its upper bound: a forecast whose horizon {@code h} (target time − issue
 * time) satisfies {@code bound[i-1] < h <= bound[i]} falls in bucket {@code i}; the first bucket also
 * holds horizons of 0 or less (requests whose target time had passed), and a last, open bucket holds
 * horizons beyond the largest bound.
 *
 * <p>Per-entity memory is bounded: the first {@code maxEntities} entities to settle a forecast get
 * their own table, in that order (no hash order reaches an output); the settled forecasts of any
 * later entity count in the overall table only, and are counted ({@link #settledNotKept()}). About
 * {@code 80 × buckets} bytes per kept entity plus its text (from the array sizes, not measured).
 *
 * <p>Implementation notes: the fading window weights the i-th most recent error of a cell (one
 * bucket of the overall table or of one entity) by {@code 2^(-i/h)}, counted in that cell's own
 * settled forecasts, normalized by the decayed weight (as {@link PrequentialMetrics}, common
 * practice). Each cell is 2 longs and 8 doubles in flat arrays; entities are found by linear
 * probing on the 64-bit hash of their text, with the text kept to resolve a collision exactly. Once
 * the cap is reached, or every entity is known, an update allocates nothing and costs O(buckets)
 * for the bucket search (at most 17) and O(1) expected for the entity.
 */
final class HorizonMetrics {

  /** Doubles per cell: sum |e|, sum e², sum e, then the decayed weight, |e|, e², e and covered. */
  private static final int D = 8;
  private static final int NONE = -1;

  private final long[] bounds;
  private final int buckets;
  private final double decay;
  private final int maxEntities;

  private final long[] count;
  private final long[] covered;
  private final double[] sums;

  private int entities;
  private int capacity;
  private char[][] keys;
  private int[] keyLengths;
  private long[] hashes;
  private long[] entityCount;
  private long[] entityCovered;
  private double[] entitySums;
  private int[] table;
  private int mask;
  private long settledNotKept;

  /**
   * @param boundsMillis the buckets' upper bounds, strictly increasing, each at least 1. Not modified.
   * @param halfLifeRecords the fading window's half-life in settled forecasts of a cell; positive
   * @param maxEntities most entities with their own table, 0 or more
   */
  HorizonMetrics(long[] boundsMillis, double halfLifeRecords, int maxEntities) {
    this.bounds = boundsMillis.clone();
    this.buckets = bounds.length + 1;
    this.decay = StrictMath.pow(2.0, -1.0 / halfLifeRecords);
    this.maxEntities = maxEntities;
    this.count = new long[buckets];
    this.covered = new long[buckets];
    this.sums = new double[buckets * D];
    allocateEntities(Math.min(maxEntities, 16));
  }

  private void allocateEntities(int cap) {
    capacity = cap;
    keys = new char[cap][];
    keyLengths = new int[cap];
    hashes = new long[cap];
    entityCount = new long[cap * buckets];
    entityCovered = new long[cap * buckets];
    entitySums = new double[cap * buckets * D];
    int t = Math.max(4, Integer.highestOneBit(Math.max(1, cap)) << 2);
    table = new int[t];
    Arrays.fill(table, NONE);
    mask = t - 1;
    entities = 0;
  }

  /** Grows the entity arrays by doubling, not beyond the cap; cold. */
  private void growEntities() {
    int cap = (int) Math.min((long) capacity * 2, maxEntities);
    keys = Arrays.copyOf(keys, cap);
    keyLengths = Arrays.copyOf(keyLengths, cap);
    hashes = Arrays.copyOf(hashes, cap);
    entityCount = Arrays.copyOf(entityCount, cap * buckets);
    entityCovered = Arrays.copyOf(entityCovered, cap * buckets);
    entitySums = Arrays.copyOf(entitySums, cap * buckets * D);
    capacity = cap;
    int t = Math.max(4, Integer.highestOneBit(cap) << 2);
    table = new int[t];
    Arrays.fill(table, NONE);
    mask = t - 1;
    for (int e = 0; e < entities; e++) {
      tableInsert(e);
    }
  }

  private void tableInsert(int e) {
    int i = (int) hashes[e] & mask;
    while (table[i] != NONE) {
      i = (i + 1) & mask;
    }
    table[i] = e;
  }

  /** The bucket of a horizon: the first whose upper bound is at least {@code horizonMillis}, else the open one. */
  int bucketOf(long horizonMillis) {
    for (int i = 0; i < bounds.length; i++) {
      if (horizonMillis <= bounds[i]) {
        return i;
      }
    }
    return bounds.length;
  }

  /**
   * The entity's index in the per-entity table, adding it while there is room.
   *
   * @param key the entity text (as {@link PipelineStep} builds it). Not modified.
   * @param n its length
   * @return the index, or -1 when the entity is not kept (the cap was reached before it came)
   */
  int entity(char[] key, int n) {
    long h = EntityTimeKeys.hash(key, n, 0L);
    int i = (int) h & mask;
    for (int e = table[i]; e != NONE; e = table[i]) {
      if (hashes[e] == h && keyLengths[e] == n && Arrays.equals(keys[e], 0, n, key, 0, n)) {
        return e;
      }
      i = (i + 1) & mask;
    }
    if (entities >= maxEntities) {
      return NONE;
    }
    if (entities == capacity) {
      growEntities();
    }
    int e = entities++;
    keys[e] = Arrays.copyOf(key, n);
    keyLengths[e] = n;
    hashes[e] = h;
    tableInsert(e);
    return e;
  }

  /**
   * Adds one settled forecast.
   *
   * @param entity the index from {@link #entity}, or -1 for the overall table only
   * @param horizonMillis target time − issue time
   * @param error actual − forecast; finite
   * @param inInterval whether the interval held the actual
   */
  void add(int entity, long horizonMillis, double error, boolean inInterval) {
    int b = bucketOf(horizonMillis);
    addTo(count, covered, sums, b, error, inInterval);
    if (entity >= 0) {
      addTo(entityCount, entityCovered, entitySums, entity * buckets + b, error, inInterval);
    } else {
      settledNotKept++;
    }
  }

  private void addTo(long[] n, long[] cov, double[] s, int cell, double error, boolean inInterval) {
    double a = Math.abs(error);
    double sq = error * error;
    double c = inInterval ? 1.0 : 0.0;
    n[cell]++;
    if (inInterval) {
      cov[cell]++;
    }
    int k = cell * D;
    s[k] += a;
    s[k + 1] += sq;
    s[k + 2] += error;
    s[k + 3] = decay * s[k + 3] + 1.0;
    s[k + 4] = decay * s[k + 4] + a;
    s[k + 5] = decay * s[k + 5] + sq;
    s[k + 6] = decay * s[k + 6] + error;
    s[k + 7] = decay * s[k + 7] + c;
  }

  // ------------------------------------------------------------------ reading (cold path)

  /** Number of buckets, the open one included. */
  int buckets() { return buckets; }

  /** The upper bound of bucket {@code b} in milliseconds, or {@code Long.MAX_VALUE} for the open one. */
  long bound(int b) { return b < bounds.length ? bounds[b] : Long.MAX_VALUE; }

  /** Entities with their own table. */
  int entities() { return entities; }

  /** The cap on entities with their own table. */
  int maxEntities() { return maxEntities; }

  /** Entity slots allocated now (at most the cap; for the memory check in tests). */
  int entityCapacity() { return capacity; }

  /** Settled forecasts of entities beyond the cap (in the overall table only). */
  long settledNotKept() { return settledNotKept; }

  /** The text of entity {@code e}, as {@link PipelineStep} built it. */
  char[] entityKey(int e) { return Arrays.copyOf(keys[e], keyLengths[e]); }

  /** The metrics of bucket {@code b}, overall ({@code entity} = -1) or of one entity. */
  Snapshot.Metrics metrics(int entity, int b) {
    return entity < 0 ? metricsOf(count, covered, sums, b) : metricsOf(entityCount, entityCovered, entitySums, entity * buckets + b);
  }

  private static Snapshot.Metrics metricsOf(long[] n, long[] cov, double[] s, int cell) {
    long c = n[cell];
    int k = cell * D;
    double w = s[k + 3];
    return new Snapshot.Metrics(c,
        c == 0 ? Double.NaN : s[k] / c,
        c == 0 ? Double.NaN : Math.sqrt(s[k + 1] / c),
        c == 0 ? Double.NaN : s[k + 2] / c,
        c == 0 ? Double.NaN : (double) cov[cell] / c,
        w == 0 ? Double.NaN : s[k + 4] / w,
        w == 0 ? Double.NaN : Math.sqrt(s[k + 5] / w),
        w == 0 ? Double.NaN : s[k + 6] / w,
        w == 0 ? Double.NaN : s[k + 7] / w);
  }

  // ------------------------------------------------------------------ checkpoints

  /** Writes the whole state, the bucket bounds first. */
  void writeTo(DataOutput out) throws IOException {
    out.writeInt(bounds.length);
    for (long b : bounds) {
      out.writeLong(b);
    }
    writeCells(out, count, covered, sums, 0, buckets);
    out.writeLong(settledNotKept);
    out.writeInt(entities);
    for (int e = 0; e < entities; e++) {
      out.writeInt(keyLengths[e]);
      for (int i = 0; i < keyLengths[e]; i++) {
        out.writeChar(keys[e][i]);
      }
      writeCells(out, entityCount, entityCovered, entitySums, e * buckets, buckets);
    }
  }

  private static void writeCells(DataOutput out, long[] n, long[] cov, double[] s, int from, int cells) throws IOException {
    for (int c = from; c < from + cells; c++) {
      out.writeLong(n[c]);
      out.writeLong(cov[c]);
      for (int k = c * D; k < c * D + D; k++) {
        out.writeDouble(s[k]);
      }
    }
  }

  private static void readCells(DataInput in, long[] n, long[] cov, double[] s, int from, int cells) throws IOException {
    for (int c = from; c < from + cells; c++) {
      n[c] = in.readLong();
      cov[c] = in.readLong();
      for (int k = c * D; k < c * D + D; k++) {
        s[k] = in.readDouble();
      }
    }
  }

  /**
   * Reads a state written by {@link #writeTo}. When the checkpoint's bucket bounds differ from the
   * configured ones (the list was changed), its metrics are read past and the tables start empty;
   * entities beyond the configured cap (it was lowered) are dropped from the per-entity table.
   *
   * @return whether the checkpoint's tables were kept (false when the bucket bounds differ)
   */
  boolean readFrom(DataInput in) throws IOException {
    int nb = in.readInt();
    if (nb < 0 || nb > 1 << 16) {
      throw new IOException("horizon buckets: " + nb);
    }
    long[] saved = new long[nb];
    for (int i = 0; i < nb; i++) {
      saved[i] = in.readLong();
    }
    boolean same = Arrays.equals(saved, bounds);
    int cells = nb + 1;
    long[] n = same ? count : new long[cells];
    long[] cov = same ? covered : new long[cells];
    double[] s = same ? sums : new double[cells * D];
    readCells(in, n, cov, s, 0, cells);
    long notKept = in.readLong();
    int ne = in.readInt();
    if (ne < 0) {
      throw new IOException("horizon entities: " + ne);
    }
    clear();
    if (same) {
      settledNotKept = notKept;
    }
    long[] scratchN = new long[cells];
    long[] scratchC = new long[cells];
    double[] scratchS = new double[cells * D];
    for (int e = 0; e < ne; e++) {
      int len = in.readInt();
      if (len < 0 || len > 1 << 24) {
        throw new IOException("horizon entity length: " + len);
      }
      char[] k = new char[len];
      for (int i = 0; i < len; i++) {
        k[i] = in.readChar();
      }
      int idx = same ? entity(k, len) : NONE;
      if (idx >= 0) {
        readCells(in, entityCount, entityCovered, entitySums, idx * buckets, buckets);
      } else {
        readCells(in, scratchN, scratchC, scratchS, 0, cells);
      }
    }
    if (!same) {
      Arrays.fill(count, 0);
      Arrays.fill(covered, 0);
      Arrays.fill(sums, 0.0);
    }
    return same;
  }

  /** Empties every table (a checkpoint written before horizon metrics existed). */
  void clear() {
    allocateEntities(Math.min(maxEntities, 16));
    settledNotKept = 0;
  }

  /** Empties the overall table too. */
  void clearAll() {
    clear();
    Arrays.fill(count, 0);
    Arrays.fill(covered, 0);
    Arrays.fill(sums, 0.0);
  }
}
