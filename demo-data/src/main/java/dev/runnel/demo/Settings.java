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
 * @param forecastHorizonHours hours ahead for which short-horizon forecast requests are issued every
 *     hour (1..h hours ahead), 0 to 48
 * @param includeForecasts whether forecast requests (short-horizon and day-ahead) are written
 *     (leaving them out changes no actual record)
 * @param includeCorrupt whether the five planned corrupt lines replace their good lines (leaving
 *     them out changes no other line)
 * @param dayAheadIssueHour local hour of day (0..23) at which, every day, the requests for each hour
 *     of the next local day are issued for every hub; -1 for none
 * @param lateShare share of actuals that arrive {@link GroundTruth#LATE_EXTRA_HOURS} hours late, 0 to 1
 * @param correctionShare share of actuals followed by a correction {@link GroundTruth#CORRECTION_AFTER_HOURS}
 *     hours after them (a second actual for the same hub and hour with another value), 0 to 1
 */
public record Settings(
    LocalDateTime start, int days, long seed, int forecastHorizonHours,
    boolean includeForecasts, boolean includeCorrupt, int dayAheadIssueHour, double lateShare,
    double correctionShare) {

  /** Default first hour: Monday 2026-01-05 00:00 local. */
  public static final LocalDateTime DEFAULT_START = LocalDateTime.of(2026, 1, 5, 0, 0);
  /** Default length: 364 days (52 weeks), so both 2026 daylight-saving changes are inside. */
  public static final int DEFAULT_DAYS = 364;
  /** Default seed. */
  public static final long DEFAULT_SEED = 20260105L;
  /** Default short forecast horizon in hours: one request per hub for the next hour, every hour. */
  public static final int DEFAULT_HORIZON_HOURS = 1;
  /** Default local hour of the evening's day-ahead requests: 18:00. */
  public static final int DEFAULT_DAY_AHEAD_ISSUE_HOUR = 18;
  /** Default share of actuals that arrive a day late: 3 %. */
  public static final double DEFAULT_LATE_SHARE = 0.03;
  /** Default share of actuals corrected later: 0.5 %. */
  public static final double DEFAULT_CORRECTION_SHARE = 0.005;

  /** First hour of the committed sample {@code samples/quillmarsh-small.jsonl}. */
  public static final LocalDateTime SAMPLE_START = LocalDateTime.of(2026, 3, 25, 0, 0);
  /** Days of the committed sample (Wednesday 2026-03-25 to Monday 2026-03-30, with the spring-forward day). */
  public static final int SAMPLE_DAYS = 6;
  /** Short forecast horizon of the committed sample (1, as the default; the file stays near 5,000 lines and under 1 MB). */
  public static final int SAMPLE_HORIZON_HOURS = 1;

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
    if (dayAheadIssueHour < -1 || dayAheadIssueHour > 23) {
      throw new IllegalArgumentException("dayAheadIssueHour must be a local hour 0..23, or -1 for no day-ahead requests, got " + dayAheadIssueHour);
    }
    if (!(lateShare >= 0.0 && lateShare <= 1.0)) {
      throw new IllegalArgumentException("lateShare must be a share from 0 to 1, got " + lateShare);
    }
    if (!(correctionShare >= 0.0 && correctionShare <= 1.0)) {
      throw new IllegalArgumentException("correctionShare must be a share from 0 to 1, got " + correctionShare);
    }
  }

  /** Settings with the default day-ahead hour and shares ({@link #DEFAULT_DAY_AHEAD_ISSUE_HOUR}, {@link #DEFAULT_LATE_SHARE}, {@link #DEFAULT_CORRECTION_SHARE}). */
  public Settings(LocalDateTime start, int days, long seed, int forecastHorizonHours, boolean includeForecasts, boolean includeCorrupt) {
    this(start, days, seed, forecastHorizonHours, includeForecasts, includeCorrupt,
        DEFAULT_DAY_AHEAD_ISSUE_HOUR, DEFAULT_LATE_SHARE, DEFAULT_CORRECTION_SHARE);
  }

  /** The default settings: {@link #DEFAULT_START}, {@link #DEFAULT_DAYS} days, seed {@link #DEFAULT_SEED}, horizon 1, day-ahead requests at 18:00, 3 % late, 0.5 % corrected, forecasts and corrupt lines on. */
  public static Settings defaults() {
    return new Settings(DEFAULT_START, DEFAULT_DAYS, DEFAULT_SEED, DEFAULT_HORIZON_HOURS, true, true);
  }

  /** The settings of the committed sample file: {@link #SAMPLE_START}, {@link #SAMPLE_DAYS} days, default seed, horizon {@link #SAMPLE_HORIZON_HOURS}, everything on. */
  public static Settings sample() {
    return new Settings(SAMPLE_START, SAMPLE_DAYS, DEFAULT_SEED, SAMPLE_HORIZON_HOURS, true, true);
  }

  /** A copy with another start. */
  public Settings withStart(LocalDateTime value) { return new Settings(value, days, seed, forecastHorizonHours, includeForecasts, includeCorrupt, dayAheadIssueHour, lateShare, correctionShare); }

  /** A copy with another number of days. */
  public Settings withDays(int value) { return new Settings(start, value, seed, forecastHorizonHours, includeForecasts, includeCorrupt, dayAheadIssueHour, lateShare, correctionShare); }

  /** A copy with another seed. */
  public Settings withSeed(long value) { return new Settings(start, days, value, forecastHorizonHours, includeForecasts, includeCorrupt, dayAheadIssueHour, lateShare, correctionShare); }

  /** A copy with another short forecast horizon. */
  public Settings withForecastHorizonHours(int value) { return new Settings(start, days, seed, value, includeForecasts, includeCorrupt, dayAheadIssueHour, lateShare, correctionShare); }

  /** A copy with forecasts on or off. */
  public Settings withForecasts(boolean value) { return new Settings(start, days, seed, forecastHorizonHours, value, includeCorrupt, dayAheadIssueHour, lateShare, correctionShare); }

  /** A copy with the corrupt lines on or off. */
  public Settings withCorrupt(boolean value) { return new Settings(start, days, seed, forecastHorizonHours, includeForecasts, value, dayAheadIssueHour, lateShare, correctionShare); }

  /** A copy with another local hour for the day-ahead requests (-1: none). */
  public Settings withDayAheadIssueHour(int value) { return new Settings(start, days, seed, forecastHorizonHours, includeForecasts, includeCorrupt, value, lateShare, correctionShare); }

  /** A copy with another share of late actuals. */
  public Settings withLateShare(double value) { return new Settings(start, days, seed, forecastHorizonHours, includeForecasts, includeCorrupt, dayAheadIssueHour, value, correctionShare); }

  /** A copy with another share of corrected actuals. */
  public Settings withCorrectionShare(double value) { return new Settings(start, days, seed, forecastHorizonHours, includeForecasts, includeCorrupt, dayAheadIssueHour, lateShare, value); }
}
