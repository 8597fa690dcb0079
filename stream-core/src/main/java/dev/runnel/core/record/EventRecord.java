package dev.runnel.core.record;

import java.util.Arrays;

/**
 * One decoded record, reused for every record of a thread: per declared slot a number, a text, a
 * flag or a time, and whether the slot is present; plus the record's event time. No boxing.
 * Not thread-safe.
 *
 * <p>A NUMBER slot holds {@link #number}; TEXT holds {@link #text}; FLAG holds {@link #flag}; TIME
 * holds {@link #timeMillis} (epoch millis). A NUMBER field that is also the event time holds both
 * its number and the derived time.
 *
 * <p>Text is kept as chars in a buffer per slot ({@link #textChars}, {@link #textLength}), which
 * the hot path reads without creating a {@code String}; {@link #text} makes the {@code String} on
 * first call for the current value (cold paths). A slot's buffer grows to the longest text it has
 * held and is then reused.
 */
public final class EventRecord {

  private final RecordSchema schema;
  private final double[] numbers;
  private final char[][] textChars;
  private final int[] textLengths;
  private final String[] texts;
  private final boolean[] flags;
  private final long[] times;
  private final boolean[] present;
  private long eventTimeMillis;
  private boolean hasEventTime;
  /** Whether some element of {@link #texts} may be non-null (false: all are null, nothing to drop). */
  private boolean stringsHeld;

  /** @param schema the declared fields; decides the number of slots. Not modified. */
  public EventRecord(RecordSchema schema) {
    this.schema = schema;
    int n = schema.size();
    numbers = new double[n];
    textChars = new char[n][];
    textLengths = new int[n];
    Arrays.fill(textLengths, -1);
    texts = new String[n];
    flags = new boolean[n];
    times = new long[n];
    present = new boolean[n];
  }

  /** The schema this record was sized from. */
  public RecordSchema schema() { return schema; }

  /** Marks every slot absent, drops the texts (keeping their buffers) and the event time. */
  public void clear() {
    Arrays.fill(present, false);
    Arrays.fill(textLengths, -1);
    if (stringsHeld) {
      Arrays.fill(texts, null);
      stringsHeld = false;
    }
    hasEventTime = false;
    eventTimeMillis = 0L;
  }

  /** Whether slot {@code slot} holds a value. */
  public boolean present(int slot) { return present[slot]; }

  /** Marks slot {@code slot} absent. */
  public void setAbsent(int slot) { present[slot] = false; textLengths[slot] = -1; texts[slot] = null; }

  /** The number in slot {@code slot} (meaningful when present and NUMBER). */
  public double number(int slot) { return numbers[slot]; }

  /**
   * The text in slot {@code slot} as a {@code String}, or null when the slot holds no text. Made
   * from the chars on the first call for the current value, then cached (allocates once; cold
   * paths and tests). The hot path reads {@link #textChars} and {@link #textLength} instead.
   */
  public String text(int slot) {
    String s = texts[slot];
    if (s == null) {
      int n = textLengths[slot];
      if (n < 0) return null;
      s = new String(textChars[slot], 0, n);
      texts[slot] = s;
      stringsHeld = true;
    }
    return s;
  }

  /**
   * The buffer holding the text of slot {@code slot} in {@code [0, textLength(slot))}; may be
   * longer, and may be null when the slot never held a text. Valid until the slot's text changes.
   * Not to be modified by the caller.
   */
  public char[] textChars(int slot) { return textChars[slot]; }

  /** Chars of the text in slot {@code slot}, or -1 when it holds no text. */
  public int textLength(int slot) { return textLengths[slot]; }

  /** The flag in slot {@code slot} (meaningful when present and FLAG). */
  public boolean flag(int slot) { return flags[slot]; }

  /** The time in epoch millis in slot {@code slot} (meaningful when present and TIME). */
  public long timeMillis(int slot) { return times[slot]; }

  /** Stores a number and marks the slot present. */
  public void setNumber(int slot, double value) { numbers[slot] = value; present[slot] = true; }

  /** Stores a text and marks the slot present. @param value not null */
  public void setText(int slot, String value) {
    int n = value.length();
    char[] b = textBuffer(slot, n);
    value.getChars(0, n, b, 0);
    textLengths[slot] = n;
    texts[slot] = value;
    stringsHeld = true;
    present[slot] = true;
  }

  /**
   * Stores a text given as chars (copied) and marks the slot present. Allocates nothing once the
   * slot's buffer is long enough.
   *
   * @param c the chars {@code c[off .. off+len)}. Not modified.
   */
  public void setText(int slot, char[] c, int off, int len) {
    char[] b = textBuffer(slot, len);
    System.arraycopy(c, off, b, 0, len);
    textLengths[slot] = len;
    texts[slot] = null;
    present[slot] = true;
  }

  /**
   * The buffer of slot {@code slot} with room for at least {@code capacity} chars, for a decoder
   * that writes a text in place and then calls {@link #setTextLength}. Its content is undefined.
   */
  char[] textBuffer(int slot, int capacity) {
    char[] b = textChars[slot];
    if (b == null || b.length < capacity) {
      int grown = b == null ? 16 : (int) Math.min(Integer.MAX_VALUE - 8, 2L * b.length);
      b = new char[Math.max(capacity, grown)];
      textChars[slot] = b;
    }
    return b;
  }

  /** Marks the first {@code len} chars of the slot's buffer as its text and the slot present. */
  void setTextLength(int slot, int len) {
    textLengths[slot] = len;
    if (stringsHeld) texts[slot] = null;
    present[slot] = true;
  }

  /** Stores a flag and marks the slot present. */
  public void setFlag(int slot, boolean value) { flags[slot] = value; present[slot] = true; }

  /** Stores a time in epoch millis and marks the slot present. */
  public void setTimeMillis(int slot, long epochMillis) { times[slot] = epochMillis; present[slot] = true; }

  /** The record's event time in epoch millis (meaningful when {@link #hasEventTime()}). */
  public long eventTimeMillis() { return eventTimeMillis; }

  /** Whether the record carried a valid event time. */
  public boolean hasEventTime() { return hasEventTime; }

  /** Sets the event time. */
  public void setEventTimeMillis(long epochMillis) { eventTimeMillis = epochMillis; hasEventTime = true; }

  /** Forgets the event time. */
  public void clearEventTime() { hasEventTime = false; eventTimeMillis = 0L; }
}
