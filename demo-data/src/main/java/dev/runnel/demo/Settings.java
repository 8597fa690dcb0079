// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
package dev.runnel.demo;

import java.time.LocalDateTime;

/**
 * Settings of one generation of the invented Quillmarsh Charging stream. Immutable; every component
 * is checked in the constructor.
 *
 * @param start first hour, local time in {@link GroundTruth#ZONE}; must be at a whole hour and not in
 *     a daylight-saving gap
 * @param days number of local calendar days to generate, 1 to 36,600
 * @param seed seed of the {@link java.util.SplittableRandom} that drives everything
 * @param forecastHorizonHours hours ahead for which forecast records are issued each hour, 0 to 48
 * @param includeForecasts whether forecast records are written (leaving them out changes no actual
 *     record)
 * @param includeCorrupt whether the five planned corrupt lines replace their good lines (leaving
 *     them out changes no other line)
 */
public record Settings(
    LocalDateTime start, int days, long seed, int forecastHorizonHours,
    boolean includeForecasts, boolean includeCorrupt) {

  /** Default first hour: Monday 2026-01-05 00:00 local. */
  public static final LocalDateTime DEFAULT_START = LocalDateTime.of(2026, 1, 5, 0, 0);
  /** Default length: 364 days (52 weeks), so both 2026 daylight-saving changes are inside. */
  public static final int DEFAULT_DAYS = 364;
  /** Default seed. */
  public static final long DEFAULT_SEED = 20260105L;
  /** Default forecast horizon in hours. */
  public static final int DEFAULT_HORIZON_HOURS = 3;

  /** First hour of the committed sample {@code samples/quillmarsh-small.jsonl}. */
  public static final LocalDateTime SAMPLE_START = LocalDateTime.of(2026, 3, 25, 0, 0);
  /** Days of the committed sample (Wednesday 2026-03-25 to Monday 2026-03-30, with the spring-forward day). */
  public static final int SAMPLE_DAYS = 6;
  /** Forecast horizon of the committed sample (2, to keep the file near 5,000 lines and well under 1 MB). */
  public static final int SAMPLE_HORIZON_HOURS = 2;

  public Settings {
    if (start == null) {
      throw new IllegalArgumentException("start must not be null");
    }
    if (start.getMinute() != 0 || start.getSecond() != 0 || start.getNano() != 0) {
      throw new IllegalArgumentException("start must be at a whole hour (minutes and seconds 0), got " + start);
    }
    if (GroundTruth.ZONE.getRules().getValidOffsets(start).isEmpty()) {
      throw new IllegalArgumentException("start " + start + " falls in a daylight-saving gap in " + GroundTruth.ZONE);
    }
    if (start.getYear() < 1971 || start.getYear() > 2999) {
      throw new IllegalArgumentException("start year must be in 1971..2999, got " + start.getYear());
    }
    if (days < 1 || days > 36_600) {
      throw new IllegalArgumentException("days must be in 1..36600, got " + days);
    }
    if (forecastHorizonHours < 0 || forecastHorizonHours > 48) {
      throw new IllegalArgumentException("forecastHorizonHours must be in 0..48, got " + forecastHorizonHours);
    }
  }

  /** The default settings: {@link #DEFAULT_START}, {@link #DEFAULT_DAYS} days, seed {@link #DEFAULT_SEED}, horizon 3, forecasts and corrupt lines on. */
  public static Settings defaults() {
    return new Settings(DEFAULT_START, DEFAULT_DAYS, DEFAULT_SEED, DEFAULT_HORIZON_HOURS, true, true);
  }

  /** The settings of the committed sample file: {@link #SAMPLE_START}, {@link #SAMPLE_DAYS} days, default seed, horizon {@link #SAMPLE_HORIZON_HOURS}, everything on. */
  public static Settings sample() {
    return new Settings(SAMPLE_START, SAMPLE_DAYS, DEFAULT_SEED, SAMPLE_HORIZON_HOURS, true, true);
  }

  /** A copy with another start. */
  public Settings withStart(LocalDateTime value) { return new Settings(value, days, seed, forecastHorizonHours, includeForecasts, includeCorrupt); }

  /** A copy with another number of days. */
  public Settings withDays(int value) { return new Settings(start, value, seed, forecastHorizonHours, includeForecasts, includeCorrupt); }

  /** A copy with another seed. */
  public Settings withSeed(long value) { return new Settings(start, days, value, forecastHorizonHours, includeForecasts, includeCorrupt); }

  /** A copy with another forecast horizon. */
  public Settings withForecastHorizonHours(int value) { return new Settings(start, days, seed, value, includeForecasts, includeCorrupt); }

  /** A copy with forecasts on or off. */
  public Settings withForecasts(boolean value) { return new Settings(start, days, seed, forecastHorizonHours, value, includeCorrupt); }

  /** A copy with the corrupt lines on or off. */
  public Settings withCorrupt(boolean value) { return new Settings(start, days, seed, forecastHorizonHours, includeForecasts, value); }
}
