package dev.runnel.core.feature;

import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;

/**
 * The admitted levels of one categorical field, with admission, expiry and a cap. One writer thread.
 * It makes no columns: the one-hot feature that owns it turns its answers into layout changes
 * and keeps each level's column in the level.
 *
 * <p>Admission: a level not admitted yet is admitted at its {@code minCount}-th sighting in a
 * training record, if fewer than {@code maxLevels} levels are admitted; otherwise the record
 * counts towards the shared "other" level. With {@code minCount > 1}, sightings of levels not yet
 * admitted are counted in a candidate table of at most {@link #candidateCapacity()} entries; when
 * it is full, the least recently seen candidate is dropped (its count is lost).
 *
 * <p>Expiry: a level expires when the stream time (largest event time seen) is more than
 * {@code expireAfterMillis} past its last sighting, or when more than {@code expireAfterRecords}
 * training records have passed since its last sighting (either limit 0 = off). Levels are kept in
 * order of last sighting (a doubly linked list threaded through the entries); only the least
 * recently seen end is checked, so each record costs O(1) amortized. With event times out of
 * order, "least recently seen" is by arrival, and a level is expired only when it is at that end.
 * A level seen in the current record is never expired by that record.
 *
 * <p>Memory: at most {@code maxLevels} levels and {@link #candidateCapacity()} candidates are
 * retained, whatever the input.
 *
 * <p>Lookups take a level's text as a {@code String} or as a range of chars (the record's text
 * buffer); the two give the same answers. The char forms allocate nothing unless they create a
 * level or a candidate, whose key {@code String} is then made once.
 *
 * <p>Outside this package the vocabulary is read-only: its mutators ({@code touch},
 * {@code expireOne}, {@code sight}) are driven by the one-hot feature that owns it, which turns
 * their answers into layout events.
 */
public final class RollingVocabulary {

  /** One admitted level. Its fields are read-only outside this package. */
  public static final class Level {
    final String key;
    long count;
    long firstSeenMillis;
    long lastSeenMillis;
    long lastSeenRecord;
    Level prev;
    Level next;
    /** The column of this level; managed by the one-hot feature that owns the vocabulary. */
    Column column;

    Level(String key) { this.key = key; }

    /** The level's text. */
    public String key() { return key; }
    /** Training records with this level since its admission (counting the admitting one). */
    public long count() { return count; }
    /** Event time of its admission. */
    public long firstSeenMillis() { return firstSeenMillis; }
    /** Largest event time it was seen at. */
    public long lastSeenMillis() { return lastSeenMillis; }
    /** Index (1-based) of the training record it was last seen in. */
    public long lastSeenRecord() { return lastSeenRecord; }
  }

  private static final class Candidate {
    final String key;
    long count;
    Candidate prev;
    Candidate next;
    Candidate(String key) { this.key = key; }
  }

  private final int maxLevels;
  private final int minCount;
  private final long expireAfterMillis;
  private final long expireAfterRecords;
  private final int candidateCapacity;

  private final TextKeyTable<Level> levels;
  private Level head;
  private Level tail;
  private final TextKeyTable<Candidate> candidates;
  private Candidate cHead;
  private Candidate cTail;
  private long otherCount;

  /**
   * @param maxLevels most admitted levels, at least 1
   * @param minCount sightings before admission, at least 1
   * @param expireAfterMillis event-time span without a sighting before expiry; 0 = never
   * @param expireAfterRecords training records without a sighting before expiry; 0 = never
   * @throws IllegalArgumentException for values out of range
   */
  public RollingVocabulary(int maxLevels, int minCount, long expireAfterMillis, long expireAfterRecords) {
    if (maxLevels < 1) throw new IllegalArgumentException("max_levels must be at least 1, got " + maxLevels);
    if (minCount < 1) throw new IllegalArgumentException("min_count must be at least 1, got " + minCount);
    if (expireAfterMillis < 0) throw new IllegalArgumentException("expire_after must not be negative, got " + expireAfterMillis);
    if (expireAfterRecords < 0) throw new IllegalArgumentException("expire_after_records must not be negative, got " + expireAfterRecords);
    this.maxLevels = maxLevels;
    this.minCount = minCount;
    this.expireAfterMillis = expireAfterMillis;
    this.expireAfterRecords = expireAfterRecords;
    this.candidateCapacity = minCount == 1 ? 0 : (int) Math.min(1_000_000L, Math.max(64L, 2L * maxLevels));
    this.levels = new TextKeyTable<>();
    this.candidates = new TextKeyTable<>();
  }

  /** Most candidates retained: 0 when {@code minCount == 1}, else {@code 2 * maxLevels} clamped to [64, 1000000]. */
  public int candidateCapacity() { return candidateCapacity; }

  /** Number of admitted levels. */
  public int size() { return levels.size(); }

  /** Number of retained candidates. */
  public int candidateCount() { return candidates.size(); }

  /** Training records that went to the "other" level. */
  public long otherCount() { return otherCount; }

  /** The most admitted levels. */
  public int maxLevels() { return maxLevels; }

  /** The admitted level {@code key}, or null. Reads state only. */
  public Level find(String key) { return levels.get(key); }

  /**
   * The admitted level whose text is {@code c[off .. off+len)}, or null. Reads state only;
   * allocates nothing. @param c not modified
   */
  public Level find(char[] c, int off, int len) { return levels.get(c, off, len); }

  /**
   * Records a sighting of an admitted level in a training record: updates its count and times and
   * moves it to the most recently seen end.
   *
   * @return the level, or null if {@code key} is not admitted (then nothing changed)
   */
  Level touch(String key, long eventTimeMillis, long recordIndex) {
    return touched(levels.get(key), eventTimeMillis, recordIndex);
  }

  /** {@link #touch(String, long, long)} for the text {@code c[off .. off+len)}; allocates nothing. */
  Level touch(char[] c, int off, int len, long eventTimeMillis, long recordIndex) {
    return touched(levels.get(c, off, len), eventTimeMillis, recordIndex);
  }

  private Level touched(Level l, long eventTimeMillis, long recordIndex) {
    if (l == null) return null;
    l.count++;
    if (eventTimeMillis > l.lastSeenMillis) l.lastSeenMillis = eventTimeMillis;
    l.lastSeenRecord = recordIndex;
    if (l != tail) {
      unlink(l);
      append(l);
    }
    return l;
  }

  /**
   * Removes and returns the least recently seen level if it has expired.
   *
   * @param streamTimeMillis largest event time seen so far
   * @param recordIndex index (1-based) of the current training record
   * @param keep a level seen in the current record, never expired by this call (may be null)
   * @return the expired level (already removed), or null when the least recently seen one is
   *     current or is {@code keep}
   */
  Level expireOne(long streamTimeMillis, long recordIndex, Level keep) {
    Level h = head;
    if (h == null || h == keep) return null;
    boolean stale = (expireAfterMillis > 0 && streamTimeMillis - h.lastSeenMillis > expireAfterMillis)
        || (expireAfterRecords > 0 && recordIndex - h.lastSeenRecord > expireAfterRecords);
    if (!stale) return null;
    unlink(h);
    levels.remove(h.key);
    return h;
  }

  /**
   * Counts a sighting of a level that is not admitted, in a training record, and admits it when
   * it has reached {@code minCount} sightings and there is room.
   *
   * @return the newly admitted level, or null (the record then belongs to "other")
   */
  Level sight(String key, long eventTimeMillis, long recordIndex) {
    return sight(key, null, 0, key.length(), eventTimeMillis, recordIndex);
  }

  /**
   * {@link #sight(String, long, long)} for the text {@code chars[off .. off+len)}; makes the key's
   * {@code String} only when it creates a candidate or a level.
   */
  Level sight(char[] chars, int off, int len, long eventTimeMillis, long recordIndex) {
    return sight(null, chars, off, len, eventTimeMillis, recordIndex);
  }

  /** The key is {@code key} when not null, else {@code chars[off .. off+len)}. */
  private Level sight(String key, char[] chars, int off, int len, long eventTimeMillis, long recordIndex) {
    boolean room = levels.size() < maxLevels;
    if (minCount > 1) {
      Candidate c = key != null ? candidates.get(key) : candidates.get(chars, off, len);
      if (c == null) {
        if (key == null) key = new String(chars, off, len);
        if (candidates.size() >= candidateCapacity) {
          Candidate old = cHead;
          unlinkCandidate(old);
          candidates.remove(old.key);
        }
        c = new Candidate(key);
        candidates.put(key, c);
        appendCandidate(c);
      } else if (c != cTail) {
        unlinkCandidate(c);
        appendCandidate(c);
      }
      if (c.count < minCount) c.count++;
      if (c.count < minCount || !room) {
        otherCount++;
        return null;
      }
      unlinkCandidate(c);
      candidates.remove(c.key);
      key = c.key;
    } else if (!room) {
      otherCount++;
      return null;
    }
    if (key == null) key = new String(chars, off, len);
    Level l = new Level(key);
    l.count = 1;
    l.firstSeenMillis = eventTimeMillis;
    l.lastSeenMillis = eventTimeMillis;
    l.lastSeenRecord = recordIndex;
    levels.put(key, l);
    append(l);
    return l;
  }

  /** The admitted levels from least to most recently seen (a copy; cold path). */
  public List<Level> levelsInOrder() {
    List<Level> out = new ArrayList<>(levels.size());
    for (Level l = head; l != null; l = l.next) out.add(l);
    return out;
  }

  private void unlink(Level l) {
    if (l.prev == null) head = l.next; else l.prev.next = l.next;
    if (l.next == null) tail = l.prev; else l.next.prev = l.prev;
    l.prev = null;
    l.next = null;
  }

  private void append(Level l) {
    l.prev = tail;
    l.next = null;
    if (tail == null) head = l; else tail.next = l;
    tail = l;
  }

  private void unlinkCandidate(Candidate c) {
    if (c.prev == null) cHead = c.next; else c.prev.next = c.next;
    if (c.next == null) cTail = c.prev; else c.next.prev = c.prev;
    c.prev = null;
    c.next = null;
  }

  private void appendCandidate(Candidate c) {
    c.prev = cTail;
    c.next = null;
    if (cTail == null) cHead = c; else cTail.next = c;
    cTail = c;
  }

  static void writeString(DataOutput out, String s) throws IOException {
    byte[] b = s.getBytes(StandardCharsets.UTF_8);
    out.writeInt(b.length);
    out.write(b);
  }

  static String readString(DataInput in) throws IOException {
    int n = in.readInt();
    if (n < 0 || n > 64 * 1024 * 1024) throw new IOException("corrupt checkpoint: string of " + n + " bytes");
    byte[] b = new byte[n];
    in.readFully(b);
    return new String(b, StandardCharsets.UTF_8);
  }

  void writeTo(DataOutput out) throws IOException {
    out.writeLong(otherCount);
    out.writeInt(levels.size());
    for (Level l = head; l != null; l = l.next) {
      writeString(out, l.key);
      out.writeLong(l.count);
      out.writeLong(l.firstSeenMillis);
      out.writeLong(l.lastSeenMillis);
      out.writeLong(l.lastSeenRecord);
    }
    out.writeInt(candidates.size());
    for (Candidate c = cHead; c != null; c = c.next) {
      writeString(out, c.key);
      out.writeLong(c.count);
    }
  }

  void readFrom(DataInput in) throws IOException {
    if (head != null || cHead != null) throw new IllegalStateException("restore needs a fresh vocabulary");
    otherCount = in.readLong();
    if (otherCount < 0) throw new IOException("corrupt checkpoint: other count " + otherCount);
    int n = in.readInt();
    if (n < 0 || n > maxLevels) throw new IOException("corrupt checkpoint: " + n + " levels for max_levels " + maxLevels);
    for (int i = 0; i < n; i++) {
      Level l = new Level(readString(in));
      l.count = in.readLong();
      l.firstSeenMillis = in.readLong();
      l.lastSeenMillis = in.readLong();
      l.lastSeenRecord = in.readLong();
      if (l.count < 0) throw new IOException("corrupt checkpoint: level " + l.key + " count " + l.count);
      if (levels.get(l.key) != null) throw new IOException("corrupt checkpoint: level " + l.key + " twice");
      levels.put(l.key, l);
      append(l);
    }
    int m = in.readInt();
    if (m < 0 || m > candidateCapacity) throw new IOException("corrupt checkpoint: " + m + " candidates for capacity " + candidateCapacity);
    for (int i = 0; i < m; i++) {
      Candidate c = new Candidate(readString(in));
      c.count = in.readLong();
      if (c.count < 0) throw new IOException("corrupt checkpoint: candidate " + c.key + " count " + c.count);
      if (candidates.get(c.key) != null) throw new IOException("corrupt checkpoint: candidate " + c.key + " twice");
      candidates.put(c.key, c);
      appendCandidate(c);
    }
  }
}
