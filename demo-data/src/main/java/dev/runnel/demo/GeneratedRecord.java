// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
package dev.runnel.demo;

import java.time.OffsetDateTime;

/**
 * One line of the invented Quillmarsh Charging stream together with the hidden values behind it.
 * The line is what a consumer sees; the other components are for tests and demo summaries.
 *
 * @param lineNumber 1-based line number in the stream
 * @param issueHour hour index of the line's event time {@code issued_at}: when a request was issued or
 *     an actual arrived
 * @param targetHour hour index of {@code observed_at}, the hour the line is about
 * @param forecast true for a forecast request ({@code "kind":"forecast"}, no sessions)
 * @param hubIndex index in {@link GroundTruth#HUBS}
 * @param observedAt local time with offset of {@code observed_at} (start of the target hour)
 * @param weather weather category written
 * @param temperatureC temperature in degC behind the line (for a request: the forecast value); during
 *     the degF incident the line carries {@code temperatureC * 9/5 + 32} instead
 * @param publishedTemperature the number written in {@code temperature_c}
 * @param pricePerKwh the price written
 * @param sessions the sessions written; NaN for a request
 * @param expectedSessions for an actual or correction: the truth's noise-free mean of its hour (with the
 *     holiday effect and the hub's level); for a request: what a perfect model forecasts from the line
 *     (the truth at the line's fields, with the hub's level as known at the issue time:
 *     {@code LEVEL_AR^days} times the level of the issue day)
 * @param corrupt what is wrong with the line, or null for a good line
 * @param line the JSON text, without the line separator
 * @param issuedAt local time with offset of {@code issued_at} (the event time)
 * @param kind what the line is
 * @param holiday whether the target hour's local day is a public holiday ({@link GroundTruth#isHoliday})
 * @param level the hub's true daily level on the target hour's local day
 */
public record GeneratedRecord(long lineNumber, int issueHour, int targetHour, boolean forecast, int hubIndex,
    OffsetDateTime observedAt, Weather weather, double temperatureC, double publishedTemperature,
    double pricePerKwh, double sessions, double expectedSessions, CorruptKind corrupt, String line,
    OffsetDateTime issuedAt, Kind kind, boolean holiday, double level) {

  /** What a line is. */
  public enum Kind {
    /** An actual that arrived on time: {@link GroundTruth#ACTUAL_DELAY_HOURS} after its hour ended. */
    ACTUAL,
    /** An actual that arrived {@link GroundTruth#LATE_EXTRA_HOURS} hours later than on time. */
    LATE_ACTUAL,
    /** A second actual for a hub and hour with a revised value, {@link GroundTruth#CORRECTION_AFTER_HOURS} after the first. */
    CORRECTION,
    /** A request issued every hour for 1..{@link Settings#forecastHorizonHours()} hours ahead. */
    HOUR_AHEAD_REQUEST,
    /** A request issued at {@link Settings#dayAheadIssueHour()} for an hour of the next local day. */
    DAY_AHEAD_REQUEST
  }

  /** The hub id, e.g. {@code QM-03}. */
  public String hubId() { return GroundTruth.HUBS.get(hubIndex).id(); }

  /** Whether the line is one of the planned corrupt lines. */
  public boolean isCorrupt() { return corrupt != null; }

  /** Horizon in hours: target hour minus issue hour (negative for an actual, which arrives after its hour). */
  public int horizonHours() { return targetHour - issueHour; }
}
