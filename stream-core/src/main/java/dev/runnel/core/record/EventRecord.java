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
 */
public final class EventRecord {

  private final RecordSchema schema;
  private final double[] numbers;
  private final String[] texts;
  private final boolean[] flags;
  private final long[] times;
  private final boolean[] present;
  private long eventTimeMillis;
  private boolean hasEventTime;

  /** @param schema the declared fields; decides the number of slots. Not modified. */
  public EventRecord(RecordSchema schema) {
    this.schema = schema;
    int n = schema.size();
    numbers = new double[n];
    texts = new String[n];
    flags = new boolean[n];
    times = new long[n];
    present = new boolean[n];
  }

  /** The schema this record was sized from. */
  public RecordSchema schema() { return schema; }

  /** Marks every slot absent, drops text references and the event time. */
  public void clear() {
    Arrays.fill(present, false);
    Arrays.fill(texts, null);
    hasEventTime = false;
    eventTimeMillis = 0L;
  }

  /** Whether slot {@code slot} holds a value. */
  public boolean present(int slot) { return present[slot]; }

  /** Marks slot {@code slot} absent. */
  public void setAbsent(int slot) { present[slot] = false; texts[slot] = null; }

  /** The number in slot {@code slot} (meaningful when present and NUMBER). */
  public double number(int slot) { return numbers[slot]; }

  /** The text in slot {@code slot} (meaningful when present and TEXT). */
  public String text(int slot) { return texts[slot]; }

  /** The flag in slot {@code slot} (meaningful when present and FLAG). */
  public boolean flag(int slot) { return flags[slot]; }

  /** The time in epoch millis in slot {@code slot} (meaningful when present and TIME). */
  public long timeMillis(int slot) { return times[slot]; }

  /** Stores a number and marks the slot present. */
  public void setNumber(int slot, double value) { numbers[slot] = value; present[slot] = true; }

  /** Stores a text and marks the slot present. @param value not null */
  public void setText(int slot, String value) { texts[slot] = value; present[slot] = true; }

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
