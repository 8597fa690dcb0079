// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
package dev.runnel.demo;

import java.time.OffsetDateTime;

/**
 * One line of the invented Quillmarsh Charging stream together with the hidden values behind it.
 * The line is what a consumer sees; the other components are for tests and demo summaries.
 *
 * @param lineNumber 1-based line number in the stream
 * @param issueHour hour index at which the line is emitted
 * @param targetHour hour index of {@code observed_at} (equal to {@code issueHour} for actuals)
 * @param forecast true for {@code "kind":"forecast"}
 * @param hubIndex index in {@link GroundTruth#HUBS}
 * @param observedAt local time with offset of {@code observed_at}
 * @param weather weather category written
 * @param temperatureC temperature in degC behind the line (for a forecast: the forecast value); during
 *     the degF incident the line carries {@code temperatureC * 9/5 + 32} instead
 * @param publishedTemperature the number written in {@code temperature_c}
 * @param pricePerKwh the price written
 * @param sessions the sessions written; NaN for a forecast
 * @param expectedSessions the truth's noise-free mean at the line's features (for a forecast: at the
 *     forecast features, i.e. what an exact model would predict from the line)
 * @param corrupt what is wrong with the line, or null for a good line
 * @param line the JSON text, without the line separator
 */
public record GeneratedRecord(long lineNumber, int issueHour, int targetHour, boolean forecast, int hubIndex,
    OffsetDateTime observedAt, Weather weather, double temperatureC, double publishedTemperature,
    double pricePerKwh, double sessions, double expectedSessions, CorruptKind corrupt, String line) {

  /** The hub id, e.g. {@code QM-03}. */
  public String hubId() { return GroundTruth.HUBS.get(hubIndex).id(); }

  /** Whether the line is one of the planned corrupt lines. */
  public boolean isCorrupt() { return corrupt != null; }
}
