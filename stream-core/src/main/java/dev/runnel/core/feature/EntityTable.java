package dev.runnel.core.feature;

import dev.runnel.core.record.EventRecord;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;
import java.util.Arrays;

/**
 * The entities a history feature remembers, each under a small id ({@code 0 .. capacity)}) that
 * indexes the feature's own arrays of state. Bounded two ways: at most {@code maxEntities} (when
 * full, the least recently updated entity is dropped to make room), and an entity whose latest
 * actual is more than {@code expireAfterMillis} behind the stream clock is dropped (checked from
 * the least recently updated end, so each check is O(1) amortized). One writer thread.
 *
 * <p>An entity's key is its entity fields' texts, each as its length in two chars then its chars
 * (so no two field lists give the same key), built from the record into a scratch buffer without
 * allocating. Lookup is open addressing with linear probing over a power-of-two table at most half
 * full, sized once for {@code maxEntities}' ids as they are first used; removal shifts the
 * following entries back (no tombstones). The hash's seed is fixed, and the order that reaches a
 * checkpoint is the recency list's, never the table's.
 *
 * <p>Allocation: a lookup and an update of a known entity allocate nothing; a new entity makes its
 * key's {@code String}, and the arrays grow by doubling until {@code maxEntities}.
 */
final class EntityTable {

  private static final long M1 = 0x9E3779B97F4A7C15L;
  private static final long M2 = 0xC2B2AE3D27D4EB4FL;
  private static final long SEED = 0x5EED_0F_E1L;

  /** Told when an id is given to a new entity, so its state can be cleared. */
  interface Reset {
    void reset(int id);
  }

  private final int[] entitySlots;
  private final int maxEntities;
  private final long expireAfterMillis;
  private final Reset reset;

  /** The key of the record last passed to {@link #keyOf}. */
  private char[] key = new char[64];
  private int keyLength;
  private int keyHash;

  /** Open-addressing table: id + 1, 0 = empty; and the hash of the entry. */
  private int[] table;
  private int[] tableHashes;
  private int mask;

  /** By id: the key, the time of the latest actual, the recency list (-1 = none). */
  private String[] keys = new String[0];
  private long[] lastActual = new long[0];
  private int[] newer = new int[0];
  private int[] older = new int[0];
  /** Ids in use: {@code size}; ids never used: from {@code nextFresh}; freed ids are a stack in {@code freed}. */
  private int size;
  private int nextFresh;
  private int[] freed = new int[0];
  private int freedCount;
  /** The least and most recently updated entity, or -1. */
  private int oldest = -1;
  private int newest = -1;
  private long dropped;
  private long expired;

  /**
   * @param entitySlots the record slots of the entity fields (text). Not modified.
   * @param reset told of every id given to a new entity
   */
  EntityTable(int[] entitySlots, int maxEntities, long expireAfterMillis, Reset reset) {
    this.entitySlots = entitySlots.clone();
    this.maxEntities = maxEntities;
    this.expireAfterMillis = expireAfterMillis;
    this.reset = reset;
    allocateTable(16);
  }

  int size() { return size; }

  /** Entities dropped to make room for a new one (the cap), since the state began. */
  long droppedFull() { return dropped; }

  /** Entities dropped by age (the expiry), since the state began. */
  long droppedExpired() { return expired; }

  /** The length of the id arrays: one past the highest id in use so far. */
  int idCapacity() { return keys.length; }

  /** Whether the record holds every entity field. */
  boolean hasEntity(EventRecord r) {
    for (int slot : entitySlots) if (!r.present(slot)) return false;
    return true;
  }

  /** The first entity field the record lacks, or -1. */
  int missingSlot(EventRecord r) {
    for (int slot : entitySlots) if (!r.present(slot)) return slot;
    return -1;
  }

  /** Builds the record's key (the record must hold every entity field). Allocates nothing once warm. */
  void keyOf(EventRecord r) {
    int n = 0;
    for (int slot : entitySlots) {
      int len = r.textLength(slot);
      if (key.length < n + 2 + len) key = Arrays.copyOf(key, Math.max(key.length * 2, n + 2 + len));
      key[n++] = (char) (len >>> 16);
      key[n++] = (char) len;
      System.arraycopy(r.textChars(slot), 0, key, n, len);
      n += len;
    }
    keyLength = n;
    keyHash = hash(key, n);
  }

  private static int hash(char[] c, int len) {
    long h = SEED ^ len;
    int i = 0;
    for (; i + 3 < len; i += 4) {
      h = (h ^ (c[i] | (long) c[i + 1] << 16 | (long) c[i + 2] << 32 | (long) c[i + 3] << 48)) * M1;
    }
    for (; i < len; i++) h = (h ^ c[i]) * M1;
    h ^= h >>> 29;
    h *= M2;
    return (int) (h ^ (h >>> 32));
  }

  private static int hash(String s) {
    char[] c = s.toCharArray();
    return hash(c, c.length);
  }

  /** The id of the key last built by {@link #keyOf}, or -1. Reads only. */
  int find() {
    int h = keyHash;
    int m = mask;
    for (int i = h & m; ; i = (i + 1) & m) {
      int e = table[i];
      if (e == 0) return -1;
      if (tableHashes[i] == h && sameKey(keys[e - 1])) return e - 1;
    }
  }

  private boolean sameKey(String k) {
    int len = keyLength;
    if (k.length() != len) return false;
    char[] c = key;
    for (int j = 0; j < len; j++) if (k.charAt(j) != c[j]) return false;
    return true;
  }

  /**
   * Drops every entity whose latest actual is more than {@code expire_after} behind
   * {@code clockMillis}, looking from the least recently updated one and stopping at the first
   * that is not (so an entity updated out of time order may outlive its age until it reaches the end).
   */
  void expire(long clockMillis) {
    while (oldest >= 0 && clockMillis != Long.MIN_VALUE && lastActual[oldest] < clockMillis - expireAfterMillis) {
      removeId(oldest);
      expired++;
    }
  }

  /**
   * The id of the key last built by {@link #keyOf}, made the most recently updated, with
   * {@code actualMillis} as its latest actual's time (the later of the two): a new entity gets a
   * free id (the least recently updated one's when full) and {@link Reset#reset} is called for it.
   */
  int update(long actualMillis) {
    int id = find();
    if (id < 0) {
      if (size == maxEntities) {
        removeId(oldest);
        dropped++;
      }
      id = freedCount > 0 ? freed[--freedCount] : nextFresh++;
      if (id >= keys.length) growIds(id + 1);
      insert(id, new String(key, 0, keyLength), keyHash);
      lastActual[id] = actualMillis;
      linkNewest(id);
      reset.reset(id);
      return id;
    }
    if (actualMillis > lastActual[id]) lastActual[id] = actualMillis;
    if (id != newest) {
      unlink(id);
      linkNewest(id);
    }
    return id;
  }

  private void insert(int id, String k, int h) {
    if (2 * (size + 1) > table.length) growTable();
    int m = mask;
    int i = h & m;
    while (table[i] != 0) i = (i + 1) & m;
    table[i] = id + 1;
    tableHashes[i] = h;
    keys[id] = k;
    size++;
  }

  private void removeId(int id) {
    String k = keys[id];
    int h = hash(k);
    int m = mask;
    int i = h & m;
    while (table[i] != id + 1) i = (i + 1) & m;
    // shift back every following entry of the run whose home is not in (i, j]
    int j = i;
    while (true) {
      j = (j + 1) & m;
      if (table[j] == 0) break;
      int home = tableHashes[j] & m;
      boolean stays = i <= j ? (i < home && home <= j) : (i < home || home <= j);
      if (!stays) {
        table[i] = table[j];
        tableHashes[i] = tableHashes[j];
        i = j;
      }
    }
    table[i] = 0;
    keys[id] = null;
    unlink(id);
    if (freedCount == freed.length) freed = Arrays.copyOf(freed, Math.max(16, freed.length * 2));
    freed[freedCount++] = id;
    size--;
  }

  private void linkNewest(int id) {
    older[id] = newest;
    newer[id] = -1;
    if (newest >= 0) newer[newest] = id;
    newest = id;
    if (oldest < 0) oldest = id;
  }

  private void unlink(int id) {
    int o = older[id];
    int n = newer[id];
    if (o >= 0) newer[o] = n; else oldest = n;
    if (n >= 0) older[n] = o; else newest = o;
  }

  private void allocateTable(int capacity) {
    table = new int[capacity];
    tableHashes = new int[capacity];
    mask = capacity - 1;
  }

  private void growTable() {
    int[] oldTable = table;
    int[] oldHashes = tableHashes;
    allocateTable(oldTable.length * 2);
    int m = mask;
    for (int s = 0; s < oldTable.length; s++) {
      if (oldTable[s] == 0) continue;
      int i = oldHashes[s] & m;
      while (table[i] != 0) i = (i + 1) & m;
      table[i] = oldTable[s];
      tableHashes[i] = oldHashes[s];
    }
  }

  /** Grows the id arrays to hold {@code need} ids (doubling, at most {@code maxEntities}). */
  private void growIds(int need) {
    int n = (int) Math.min(maxEntities, Math.max(need, Math.max(16L, 2L * keys.length)));
    keys = Arrays.copyOf(keys, n);
    lastActual = Arrays.copyOf(lastActual, n);
    newer = Arrays.copyOf(newer, n);
    older = Arrays.copyOf(older, n);
  }

  // ------------------------------------------------------------ checkpoint

  /** The ids in use from the least to the most recently updated (cold path). */
  int[] idsOldestFirst() {
    int[] out = new int[size];
    int k = 0;
    for (int id = oldest; id >= 0; id = newer[id]) out[k++] = id;
    return out;
  }

  /**
   * Writes the counts and, from the least to the most recently updated, each entity's key and
   * latest actual's time; the owner then writes its state per entity in {@link #idsOldestFirst} order.
   */
  void writeTo(DataOutput out) throws IOException {
    out.writeLong(dropped);
    out.writeLong(expired);
    out.writeInt(size);
    for (int id = oldest; id >= 0; id = newer[id]) {
      RollingVocabulary.writeString(out, keys[id]);
      out.writeLong(lastActual[id]);
    }
  }

  /**
   * Reads what {@link #writeTo} wrote into a fresh table: the entities get ids 0, 1, ... in the
   * order written (so the owner reads its state for id k at the k-th place).
   *
   * @return the number of entities read
   */
  int readFrom(DataInput in) throws IOException {
    if (size != 0 || nextFresh != 0) throw new IllegalStateException("readFrom needs a fresh entity table");
    dropped = in.readLong();
    expired = in.readLong();
    int n = in.readInt();
    if (n < 0 || n > maxEntities) throw new IOException("corrupt checkpoint: " + n + " entities, at most " + maxEntities);
    if (n > 0) growIds(n);
    for (int id = 0; id < n; id++) {
      String k = RollingVocabulary.readString(in);
      int h = hash(k);
      for (int i = h & mask; table[i] != 0; i = (i + 1) & mask) {
        if (tableHashes[i] == h && keys[table[i] - 1].equals(k)) throw new IOException("corrupt checkpoint: entity listed twice");
      }
      insert(id, k, h);
      lastActual[id] = in.readLong();
      linkNewest(id);
    }
    nextFresh = n;
    return n;
  }
}
