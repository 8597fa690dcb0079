package dev.runnel.core.feature;

import java.util.concurrent.ThreadLocalRandom;

/**
 * A hash table from text keys to values that is looked up either by a {@code String} or by a
 * range of chars, so the hot path finds a level from a record's char buffer without making a
 * {@code String}. One writer thread. Keys are not null; a key is stored as the {@code String} given
 * to {@link #put}.
 *
 * <p>Implementation notes: open addressing with linear probing, at most half full, doubling when
 * needed; removal shifts the following entries back (no tombstones), so lookups stay short after
 * any number of removals. The hash of a key is a multiply-xor mix of its chars (four to a word) and length under a
 * seed drawn per table: keys chosen to collide under {@code String.hashCode} (e.g. "Aa" and "BB")
 * spread here, and an input cannot be tuned to one table's seed without seeing it. The seed changes
 * only where entries sit in the arrays, never what a lookup returns; callers that need an order
 * keep their own (the vocabulary's lists), so results stay deterministic.
 *
 * @param <V> the value type
 */
final class TextKeyTable<V> {

  private static final int MIN_CAPACITY = 16;
  private static final long M1 = 0x9E3779B97F4A7C15L;
  private static final long M2 = 0xC2B2AE3D27D4EB4FL;

  private final long seed;
  private String[] keys;
  private Object[] values;
  private int[] hashes;
  private int mask;
  private int size;

  /** A table with a random seed. */
  TextKeyTable() { this(ThreadLocalRandom.current().nextLong()); }

  /** A table with the given seed (tests). */
  TextKeyTable(long seed) {
    this.seed = seed;
    allocate(MIN_CAPACITY);
  }

  private void allocate(int capacity) {
    keys = new String[capacity];
    values = new Object[capacity];
    hashes = new int[capacity];
    mask = capacity - 1;
  }

  /** Number of entries. */
  int size() { return size; }

  /** Slots in the arrays (tests: memory stays bounded by the largest size held). */
  int capacity() { return keys.length; }

  /** The hash of a key: its chars taken four at a time as one 64-bit word (a quarter of the multiplies in the chain). */
  int hash(String s) {
    int n = s.length();
    long h = seed ^ n;
    int i = 0;
    for (; i + 3 < n; i += 4) {
      h = (h ^ (s.charAt(i) | (long) s.charAt(i + 1) << 16 | (long) s.charAt(i + 2) << 32 | (long) s.charAt(i + 3) << 48)) * M1;
    }
    for (; i < n; i++) h = (h ^ s.charAt(i)) * M1;
    return finish(h);
  }

  /** {@link #hash(String)} of the key {@code c[off .. off+len)}. */
  int hash(char[] c, int off, int len) {
    long h = seed ^ len;
    int i = off;
    int end = off + len;
    for (; i + 3 < end; i += 4) {
      h = (h ^ (c[i] | (long) c[i + 1] << 16 | (long) c[i + 2] << 32 | (long) c[i + 3] << 48)) * M1;
    }
    for (; i < end; i++) h = (h ^ c[i]) * M1;
    return finish(h);
  }

  private static int finish(long h) {
    h ^= h >>> 29;
    h *= M2;
    return (int) (h ^ (h >>> 32));
  }

  /** The value of {@code key}, or null. */
  @SuppressWarnings("unchecked")
  V get(String key) {
    int h = hash(key);
    int m = mask;
    for (int i = h & m; ; i = (i + 1) & m) {
      String k = keys[i];
      if (k == null) return null;
      if (hashes[i] == h && k.equals(key)) return (V) values[i];
    }
  }

  /** The value of the key {@code c[off .. off+len)}, or null. Allocates nothing. @param c not modified */
  @SuppressWarnings("unchecked")
  V get(char[] c, int off, int len) {
    int h = hash(c, off, len);
    int m = mask;
    for (int i = h & m; ; i = (i + 1) & m) {
      String k = keys[i];
      if (k == null) return null;
      if (hashes[i] == h && sameChars(k, c, off, len)) return (V) values[i];
    }
  }

  private static boolean sameChars(String k, char[] c, int off, int len) {
    if (k.length() != len) return false;
    for (int j = 0; j < len; j++) {
      if (k.charAt(j) != c[off + j]) return false;
    }
    return true;
  }

  /**
   * Adds {@code key} with {@code value}.
   *
   * @throws IllegalStateException if {@code key} is present (a caller bug)
   */
  void put(String key, V value) {
    if (2 * (size + 1) > keys.length) grow();
    int h = hash(key);
    int m = mask;
    int i = h & m;
    while (keys[i] != null) {
      if (hashes[i] == h && keys[i].equals(key)) throw new IllegalStateException("key " + key + " is already present");
      i = (i + 1) & m;
    }
    keys[i] = key;
    values[i] = value;
    hashes[i] = h;
    size++;
  }

  /** Removes {@code key}. @return whether it was present */
  boolean remove(String key) {
    int h = hash(key);
    int m = mask;
    int i = h & m;
    while (true) {
      String k = keys[i];
      if (k == null) return false;
      if (hashes[i] == h && k.equals(key)) break;
      i = (i + 1) & m;
    }
    // shift back every following entry of the run whose home is not in (i, j]
    int j = i;
    while (true) {
      j = (j + 1) & m;
      if (keys[j] == null) break;
      int home = hashes[j] & m;
      boolean stays = i <= j ? (i < home && home <= j) : (i < home || home <= j);
      if (!stays) {
        keys[i] = keys[j];
        values[i] = values[j];
        hashes[i] = hashes[j];
        i = j;
      }
    }
    keys[i] = null;
    values[i] = null;
    size--;
    return true;
  }

  private void grow() {
    String[] oldKeys = keys;
    Object[] oldValues = values;
    int[] oldHashes = hashes;
    allocate(oldKeys.length * 2);
    int m = mask;
    for (int s = 0; s < oldKeys.length; s++) {
      if (oldKeys[s] == null) continue;
      int i = oldHashes[s] & m;
      while (keys[i] != null) i = (i + 1) & m;
      keys[i] = oldKeys[s];
      values[i] = oldValues[s];
      hashes[i] = oldHashes[s];
    }
  }
}
