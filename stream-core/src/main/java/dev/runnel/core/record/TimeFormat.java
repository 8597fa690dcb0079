package dev.runnel.core.record;

/** How an event-time field is written in the input. */
public enum TimeFormat {
  /** ISO 8601 date-time with an offset, e.g. {@code 2026-03-29T02:30:00+02:00} or {@code ...Z}. */
  ISO8601("iso8601"),
  /** Milliseconds since 1970-01-01T00:00Z, as a number or a numeric string. */
  EPOCH_MILLIS("epoch_millis"),
  /** Seconds since 1970-01-01T00:00Z (fraction allowed), as a number or a numeric string. */
  EPOCH_SECONDS("epoch_seconds");

  private final String word;

  TimeFormat(String word) { this.word = word; }

  /** The word used in the configuration. */
  public String word() { return word; }
}
