package dev.runnel.core.record;

/**
 * Bounds that decide when input data is rejected rather than used. Immutable.
 *
 * @param maxTextLength longest accepted string, in chars, 1..1000000
 * @param maxRecordBytes largest accepted record, in bytes, 64..16777216
 * @param maxAbsValue largest accepted magnitude of a number, positive
 * @param minYear earliest accepted year (UTC) of a time value
 * @param maxYear latest accepted year (UTC) of a time value, at least {@code minYear}
 */
public record RecordLimits(int maxTextLength, int maxRecordBytes, double maxAbsValue, int minYear, int maxYear) {

  /** The defaults documented in docs/configuration.md. */
  public static final RecordLimits DEFAULTS = new RecordLimits(256, 65536, 1.0e12, 1970, 2200);

  /** Checks each bound. @throws IllegalArgumentException naming the bound and its value */
  public RecordLimits {
    if (maxTextLength < 1 || maxTextLength > 1_000_000) {
      throw new IllegalArgumentException("maxTextLength must be in 1..1000000, got " + maxTextLength);
    }
    if (maxRecordBytes < 64 || maxRecordBytes > 16_777_216) {
      throw new IllegalArgumentException("maxRecordBytes must be in 64..16777216, got " + maxRecordBytes);
    }
    if (!(maxAbsValue > 0) || Double.isInfinite(maxAbsValue)) {
      throw new IllegalArgumentException("maxAbsValue must be positive and finite, got " + maxAbsValue);
    }
    if (minYear < 1 || maxYear > 9999 || minYear > maxYear) {
      throw new IllegalArgumentException("years must satisfy 1 <= minYear <= maxYear <= 9999, got " + minYear + ".." + maxYear);
    }
  }

  /** First accepted instant: {@code minYear}-01-01T00:00Z in epoch millis. */
  public long minTimeMillis() { return EventTimes.daysFromCivil(minYear, 1, 1) * EventTimes.MILLIS_PER_DAY; }

  /** First instant past the accepted range: ({@code maxYear}+1)-01-01T00:00Z in epoch millis. */
  public long endTimeMillis() { return EventTimes.daysFromCivil(maxYear + 1, 1, 1) * EventTimes.MILLIS_PER_DAY; }
}
