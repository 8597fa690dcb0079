package dev.runnel.core.pipeline;

import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;
import java.util.Arrays;

/**
 * The (entity, target time) keys of a store's entries and the linear-probing table over them: the
 * part {@link PendingForecasts} and {@link LearnedActuals} share (docs/performance.md, "Forecast
 * path"). The store owns its entries' ids (0 to capacity − 1) and decides which table slot holds
 * which entry; this class keeps each entry's key, finds a key's slot, and empties a slot by
 * shifting the rest of its probe run back (no tombstones).
 *
 * <p>Layout: per entry its hash, target time and key length side by side in one {@code long[]}
 * (three words), and its key's chars in one {@code char[]} at a fixed width per entry (grown, cold,
 * when a longer key comes): a probe that compares a key reads two places, not five (the earlier
 * layout had an array per field and a {@code char[]} object per entry). The table holds entry ids,
 * {@link #NONE} for an empty slot; it has four slots per entry of capacity (load at most 1/4).
 *
 * <p>The hash is FNV-1a over the entity text's chars, then the target time mixed in, then a
 * finalizing mix (64 bits); a collision is resolved by comparing the key exactly. Nothing here
 * depends on hash order that could reach an output. One thread.
 */
final class EntityTimeKeys {

  static final int NONE = -1;

  private int capacity;
  /** Per entry e: words[3e] the hash, words[3e + 1] the target time, words[3e + 2] the key length. */
  private long[] words;
  /** Per entry e: its key's chars from e · width. */
  private char[] chars;
  private int width = 8;
  private int[] table;
  private int mask;
  private char[] readBuffer = new char[16];

  /** @param capacity entries, at least 1 */
  EntityTimeKeys(int capacity) {
    this.capacity = capacity;
    words = new long[3 * capacity];
    chars = new char[capacity * width];
    emptyTable();
  }

  /** The 64-bit hash of an entity text and a target time (FNV-1a over the chars, then a finalizing mix). */
  static long hash(char[] k, int n, long targetMillis) {
    long h = 0xcbf29ce484222325L;
    for (int i = 0; i < n; i++) {
      h ^= k[i];
      h *= 0x100000001b3L;
    }
    h ^= targetMillis * 0x9E3779B97F4A7C15L;
    h ^= h >>> 33;
    h *= 0xff51afd7ed558ccdL;
    h ^= h >>> 33;
    h *= 0xc4ceb9fe1a85ec53L;
    h ^= h >>> 33;
    return h;
  }

  /** A table sized for the capacity, every slot empty; cold. */
  void emptyTable() {
    int t = Integer.highestOneBit(capacity) << 2;
    table = new int[t];
    Arrays.fill(table, NONE);
    mask = t - 1;
  }

  /** Grows to {@code cap} entries, each keeping its id and key, with an empty table (the store inserts its entries again); cold. */
  void resize(int cap) {
    words = Arrays.copyOf(words, 3 * cap);
    chars = Arrays.copyOf(chars, cap * width);
    capacity = cap;
    emptyTable();
  }

  /**
   * Grows to {@code cap} entries, moving the {@code size} entries of a ring that starts at
   * {@code head} to ids 0, 1, … in ring order, with an empty table; cold.
   */
  void resizeRing(int head, int size, int cap) {
    long[] w = new long[3 * cap];
    char[] c = new char[cap * width];
    for (int i = 0; i < size; i++) {
      int e = (head + i) % capacity;
      System.arraycopy(words, 3 * e, w, 3 * i, 3);
      System.arraycopy(chars, e * width, c, i * width, width);
    }
    words = w;
    chars = c;
    capacity = cap;
    emptyTable();
  }

  /** Sets entry {@code e}'s key. @param k the entity text. Not modified (copied). */
  void set(int e, long h, char[] k, int n, long targetMillis) {
    if (n > width) {
      widen(n);
    }
    int b = 3 * e;
    words[b] = h;
    words[b + 1] = targetMillis;
    words[b + 2] = n;
    System.arraycopy(k, 0, chars, e * width, n);
  }

  /** Makes room for keys of {@code n} chars; cold (a longer key than any before). */
  private void widen(int n) {
    int w = Math.max(n, 2 * width);
    char[] c = new char[capacity * w];
    for (int e = 0; e < capacity; e++) {
      System.arraycopy(chars, e * width, c, e * w, width);
    }
    chars = c;
    width = w;
  }

  long hash(int e) { return words[3 * e]; }

  long target(int e) { return words[3 * e + 1]; }

  /** Whether entry {@code e} holds this key. @param k not modified */
  private boolean matches(int e, long h, char[] k, int n, long targetMillis) {
    int b = 3 * e;
    if (words[b] != h || words[b + 1] != targetMillis || words[b + 2] != n) {
      return false;
    }
    char[] c = chars;
    int o = e * width;
    for (int i = 0; i < n; i++) {
      if (c[o + i] != k[i]) {
        return false;
      }
    }
    return true;
  }

  /**
   * The table slot whose entry holds this key, or the empty slot that ends its probe run.
   *
   * @param k the entity text. Not modified.
   */
  int slotOf(long h, char[] k, int n, long targetMillis) {
    int i = (int) h & mask;
    for (int e = table[i]; e != NONE; e = table[i]) {
      if (matches(e, h, k, n, targetMillis)) {
        return i;
      }
      i = (i + 1) & mask;
    }
    return i;
  }

  /** The entry in table slot {@code i}, or {@link #NONE}. */
  int entryAt(int i) { return table[i]; }

  /** Puts entry {@code e} in table slot {@code i} (empty, or holding an entry of the same key). */
  void put(int i, int e) { table[i] = e; }

  /** Puts entry {@code e} in the first empty slot of its probe run. */
  void insert(int e) {
    int i = (int) hash(e) & mask;
    while (table[i] != NONE) {
      i = (i + 1) & mask;
    }
    table[i] = e;
  }

  /** The table slot holding entry {@code e} (it must be in the table). */
  int slotOfEntry(int e) {
    int i = (int) hash(e) & mask;
    while (table[i] != e) {
      i = (i + 1) & mask;
    }
    return i;
  }

  /** Empties table slot {@code i} and shifts the rest of its probe run back. */
  void removeSlot(int i) {
    table[i] = NONE;
    int j = i;
    while (true) {
      j = (j + 1) & mask;
      int f = table[j];
      if (f == NONE) {
        return;
      }
      int home = (int) hash(f) & mask;
      boolean stays = i <= j ? (i < home && home <= j) : (i < home || home <= j);
      if (!stays) {
        table[i] = f;
        table[j] = NONE;
        i = j;
      }
    }
  }

  /** Table slots in use (cold; for tests). */
  int slotsInUse() {
    int n = 0;
    for (int v : table) {
      if (v != NONE) {
        n++;
      }
    }
    return n;
  }

  /** Writes entry {@code e}'s key: its length, then its chars. @param out modified */
  void writeKey(DataOutput out, int e) throws IOException {
    int n = (int) words[3 * e + 2];
    out.writeInt(n);
    int o = e * width;
    for (int i = 0; i < n; i++) {
      out.writeChar(chars[o + i]);
    }
  }

  /**
   * Reads a key as {@link #writeKey} wrote it into {@link #readBuffer()}.
   *
   * @param what whose key it is, for the error ("a pending forecast's")
   * @return its length
   */
  int readKey(DataInput in, String what) throws IOException {
    int len = in.readInt();
    if (len < 0 || len > 1 << 26) {
      throw new IOException(what + " entity of " + len + " characters");
    }
    if (readBuffer.length < len) {
      readBuffer = new char[len];
    }
    for (int i = 0; i < len; i++) {
      readBuffer[i] = in.readChar();
    }
    return len;
  }

  /** The chars the last {@link #readKey} read. */
  char[] readBuffer() { return readBuffer; }
}
