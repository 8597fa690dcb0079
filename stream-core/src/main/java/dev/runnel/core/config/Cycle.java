package dev.runnel.core.config;

/** A calendar cycle encoded as sin/cos pairs. */
public enum Cycle {
  /** Local hour of day, fractional, period 24 h. */
  HOUR_OF_DAY("hour_of_day"),
  /** ISO day of week (Monday = 1), period 7 days. */
  DAY_OF_WEEK("day_of_week"),
  /** Local day of year, period the number of days in that year. */
  DAY_OF_YEAR("day_of_year");

  private final String word;
  Cycle(String word) { this.word = word; }
  /** The configuration word. */
  public String word() { return word; }
}
