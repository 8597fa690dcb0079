package dev.runnel.core.pipeline;

import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;
import java.util.Arrays;

/**
 * Forecasts issued ahead and not yet settled, keyed by (entity, target time): the step remembers a
 * forecast request's value here and takes every forecast for a key out when its actual arrives
 * (docs/forecasting.md). Bounded by count ({@code input.forecast.max_pending}: the forecast issued
 * first is dropped) and by event-time age ({@code input.forecast.max_actual_delay}: a forecast whose
 * target time lies more than that behind the stream clock is dropped); both drops are counted.
 *
 * <p>Layout: a pool of entries on primitive arrays (grown by doubling up to the count bound, then
 * never again), a doubly linked list of the entries in the order they were issued (which entry the
 * count bound drops, and which the age bound looks at first), a singly linked chain per key of its
 * entries in the order they were issued, and a linear-probing hash table on the 64-bit hash of the
 * entity text and the target time that holds one slot per key pending: the id of its first-issued
 * entry (the entity text is kept per entry, so a collision is resolved exactly; the keys and the
 * table are {@link EntityTimeKeys}, shared with {@link LearnedActuals}). Once warm an add
 * or a take allocates nothing and costs O(1) expected however many forecasts a key has (a take then
 * walks its own chain); deletion shifts the probe run back (no tombstones).
 *
 * <p>Why one slot per key: with a slot per entry, the forecasts of one key all share a home slot,
 * so k forecasts for a key (rolling forecasts re-issued every hour, or a replayed feed whose
 * actuals never come) make a probe run of at least k slots, runs of neighbouring keys merge, and
 * every add, take and drop walked and shifted the merged run: O(k) and worse per call, measured as
 * 2.5 times the demo step's cost on a cycled feed (docs/performance.md, "Forecast path").
 *
 * <p>The age bound is applied to the first-issued entry on every call ({@link #expireFront}), and
 * exactly to the key taken: a forecast whose actual arrives later than the bound is dropped, not
 * settled. An expired entry behind a younger one waits in memory until it reaches the front, its
 * actual arrives, or the count bound drops it, so memory is bounded by the count bound alone.
 *
 * <p>Deterministic: no hash order reaches an output (the forecasts for one key are taken in the
 * order they were issued). One thread.
 */
final class PendingForecasts {

  private static final int NONE = -1;

  private final int maxPending;
  private final long maxDelayMillis;

  private int capacity;
  /** The entries' (entity, target time) keys and the table of the keys' first-issued entries. */
  private EntityTimeKeys keys;
  private long[] issue;
  private long[] partition;
  private long[] offset;
  private long[] seq;
  private double[] forecast;
  private double[] low;
  private double[] high;
  private int[] prev;
  private int[] next;
  /** The next entry of the same key in the order issued, or NONE. */
  private int[] keyNext;
  /** For the first-issued entry of a key (the one the table holds): the key's last entry; NONE for the others. */
  private int[] keyLast;
  private int[] free;
  private int freeTop;
  private int first = NONE;
  private int last = NONE;
  private int size;
  private long nextSeq;

  /** The entries the last {@link #take} returned, freed at the next mutating call. */
  private int[] taken = new int[8];
  private int takenToFree;

  private long remembered;
  private long settled;
  private long droppedFull;
  private long droppedExpired;

  /**
   * @param maxPending the count bound, at least 1
   * @param maxDelayMillis the age bound: how long past its target time a forecast waits, at least 1 ms
   */
  PendingForecasts(int maxPending, long maxDelayMillis) {
    this.maxPending = maxPending;
    this.maxDelayMillis = maxDelayMillis;
    allocate(Math.min(maxPending, 64));
  }

  private void allocate(int cap) {
    capacity = cap;
    keys = new EntityTimeKeys(cap);
    issue = new long[cap];
    partition = new long[cap];
    offset = new long[cap];
    seq = new long[cap];
    forecast = new double[cap];
    low = new double[cap];
    high = new double[cap];
    prev = new int[cap];
    next = new int[cap];
    keyNext = new int[cap];
    keyLast = new int[cap];
    free = new int[cap];
    for (int i = 0; i < cap; i++) {
      free[i] = cap - 1 - i;
    }
    freeTop = cap;
  }

  /** Doubles the pool (not beyond the count bound) and the table; cold. */
  private void grow() {
    int cap = (int) Math.min((long) capacity * 2, maxPending);
    int old = capacity;
    keys.resize(cap);
    issue = Arrays.copyOf(issue, cap);
    partition = Arrays.copyOf(partition, cap);
    offset = Arrays.copyOf(offset, cap);
    seq = Arrays.copyOf(seq, cap);
    forecast = Arrays.copyOf(forecast, cap);
    low = Arrays.copyOf(low, cap);
    high = Arrays.copyOf(high, cap);
    prev = Arrays.copyOf(prev, cap);
    next = Arrays.copyOf(next, cap);
    keyNext = Arrays.copyOf(keyNext, cap);
    keyLast = Arrays.copyOf(keyLast, cap);
    // called only when no entry is free: the new ids are the free ones, the lowest taken first
    free = new int[cap];
    int top = 0;
    for (int i = cap - 1; i >= old; i--) {
      free[top++] = i;
    }
    freeTop = top;
    capacity = cap;
    for (int e = first; e != NONE; e = next[e]) {
      if (keyLast[e] != NONE) {
        keys.insert(e);
      }
    }
  }

  /** The 64-bit hash of an entity text and a target time ({@link EntityTimeKeys#hash}). */
  static long hash(char[] k, int n, long targetMillis) {
    return EntityTimeKeys.hash(k, n, targetMillis);
  }

  private boolean expired(long targetMillis, long nowMillis) {
    return nowMillis != Long.MIN_VALUE && nowMillis - targetMillis > maxDelayMillis;
  }

  /** Frees what the last take returned. */
  private void recycle() {
    for (int i = 0; i < takenToFree; i++) {
      free[freeTop++] = taken[i];
    }
    takenToFree = 0;
  }

  /** Drops first-issued forecasts whose target time is more than the age bound behind {@code nowMillis}. */
  void expireFront(long nowMillis) {
    recycle();
    while (first != NONE && expired(keys.target(first), nowMillis)) {
      dropFirst();
      droppedExpired++;
    }
  }

  /**
   * Remembers one forecast, unless its target time is already more than the age bound behind the
   * clock (then it is counted as dropped). When full, the forecast issued first is dropped.
   *
   * @param k the entity text. Not modified (copied).
   * @return whether it was remembered
   */
  boolean add(char[] k, int n, long targetMillis, long issueMillis, double value, double lo, double hi,
              long sourcePartition, long sourceOffset, long nowMillis) {
    expireFront(nowMillis);
    if (expired(targetMillis, nowMillis)) {
      droppedExpired++;
      return false;
    }
    if (size == maxPending) {
      dropFirst();
      droppedFull++;
    } else if (freeTop == 0) {
      grow();
    }
    int e = free[--freeTop];
    long h = EntityTimeKeys.hash(k, n, targetMillis);
    keys.set(e, h, k, n, targetMillis);
    issue[e] = issueMillis;
    forecast[e] = value;
    low[e] = lo;
    high[e] = hi;
    partition[e] = sourcePartition;
    offset[e] = sourceOffset;
    seq[e] = nextSeq++;
    prev[e] = last;
    next[e] = NONE;
    if (last != NONE) {
      next[last] = e;
    } else {
      first = e;
    }
    last = e;
    size++;
    keyNext[e] = NONE;
    keyLast[e] = NONE;
    int i = keys.slotOf(h, k, n, targetMillis);
    int f = keys.entryAt(i);
    if (f == NONE) {
      keys.put(i, e); // the key's first pending forecast
      keyLast[e] = e;
    } else {
      keyNext[keyLast[f]] = e;
      keyLast[f] = e;
    }
    remembered++;
    return true;
  }

  /** Drops the first-issued entry: the first of its key's chain too, so the key's next one takes its slot. */
  private void dropFirst() {
    int e = first;
    unlink(e);
    int i = keys.slotOfEntry(e);
    int f = keyNext[e];
    if (f != NONE) {
      keys.put(i, f);
      keyLast[f] = keyLast[e];
    } else {
      keys.removeSlot(i);
    }
    keyLast[e] = NONE;
    free[freeTop++] = e;
  }

  /**
   * Takes out every forecast pending for (entity, target time), in the order they were issued.
   * Read them with the {@code taken*} methods until the next call. When the target time is already
   * more than the age bound behind the clock they are dropped (counted) instead, and 0 is returned.
   *
   * @param k the entity text. Not modified.
   * @return how many were taken
   */
  int take(char[] k, int n, long targetMillis, long nowMillis) {
    expireFront(nowMillis);
    int slot = keys.slotOf(EntityTimeKeys.hash(k, n, targetMillis), k, n, targetMillis);
    int head = keys.entryAt(slot);
    int found = 0;
    if (head != NONE) {
      // the key's chain is in the order issued
      for (int e = head; e != NONE; e = keyNext[e]) {
        if (found == taken.length) {
          taken = Arrays.copyOf(taken, found * 2);
        }
        taken[found++] = e;
        unlink(e);
      }
      keyLast[head] = NONE;
      keys.removeSlot(slot);
    }
    takenToFree = found;
    if (found > 0 && expired(targetMillis, nowMillis)) {
      droppedExpired += found;
      return 0;
    }
    settled += found;
    return found;
  }

  private void unlink(int e) {
    int p = prev[e];
    int q = next[e];
    if (p != NONE) {
      next[p] = q;
    } else {
      first = q;
    }
    if (q != NONE) {
      prev[q] = p;
    } else {
      last = p;
    }
    size--;
  }

  long takenIssueMillis(int i) { return issue[taken[i]]; }

  double takenForecast(int i) { return forecast[taken[i]]; }

  double takenLow(int i) { return low[taken[i]]; }

  double takenHigh(int i) { return high[taken[i]]; }

  long takenPartition(int i) { return partition[taken[i]]; }

  long takenOffset(int i) { return offset[taken[i]]; }

  /** Forecasts pending now. */
  int size() { return size; }

  /** Table slots in use: one per key (entity, target time) with a forecast pending (cold; for tests). */
  int keySlotsInUse() {
    return keys.slotsInUse();
  }

  /** Forecasts remembered since the state began. */
  long remembered() { return remembered; }

  /** Forecasts settled by their actual since the state began. */
  long settled() { return settled; }

  /** Forecasts dropped by the count bound. */
  long droppedFull() { return droppedFull; }

  /** Forecasts dropped by the age bound (including requests whose target time was already too old). */
  long droppedExpired() { return droppedExpired; }

  /** Writes the counters and the pending forecasts in the order issued. @param out modified */
  void writeTo(DataOutput out) throws IOException {
    out.writeLong(remembered);
    out.writeLong(settled);
    out.writeLong(droppedFull);
    out.writeLong(droppedExpired);
    out.writeLong(nextSeq);
    out.writeInt(size);
    for (int e = first; e != NONE; e = next[e]) {
      keys.writeKey(out, e);
      out.writeLong(keys.target(e));
      out.writeLong(issue[e]);
      out.writeDouble(forecast[e]);
      out.writeDouble(low[e]);
      out.writeDouble(high[e]);
      out.writeLong(partition[e]);
      out.writeLong(offset[e]);
      out.writeLong(seq[e]);
    }
  }

  /** Forgets everything: no forecast pending, counters at zero. */
  void clear() {
    allocate(Math.min(maxPending, 64));
    first = NONE;
    last = NONE;
    size = 0;
    takenToFree = 0;
    remembered = 0;
    settled = 0;
    droppedFull = 0;
    droppedExpired = 0;
    nextSeq = 0;
  }

  /** Replaces the state with what {@link #writeTo} wrote. */
  void readFrom(DataInput in) throws IOException {
    clear();
    long rem = in.readLong();
    long set = in.readLong();
    long full = in.readLong();
    long exp = in.readLong();
    long sq = in.readLong();
    int n = in.readInt();
    if (n < 0 || n > maxPending) {
      throw new IOException(n + " pending forecasts in the checkpoint, more than input.forecast.max_pending (" + maxPending + ")");
    }
    for (int r = 0; r < n; r++) {
      int len = keys.readKey(in, "a pending forecast's");
      char[] k = keys.readBuffer();
      long t = in.readLong();
      long is = in.readLong();
      double f = in.readDouble();
      double lo = in.readDouble();
      double hi = in.readDouble();
      long p = in.readLong();
      long o = in.readLong();
      long s = in.readLong();
      add(k, len, t, is, f, lo, hi, p, o, Long.MIN_VALUE);
      seq[last] = s;
    }
    remembered = rem;
    settled = set;
    droppedFull = full;
    droppedExpired = exp;
    nextSeq = sq;
  }
}
