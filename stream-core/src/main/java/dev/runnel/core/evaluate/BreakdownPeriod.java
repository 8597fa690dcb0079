package dev.runnel.core.evaluate;

import java.time.LocalDate;
import java.time.temporal.IsoFields;
import java.util.Locale;

/**
 * The calendar period of a simulated forecast's target time in the per-horizon breakdown
 * ({@code backtest --breakdown-period}; docs/backtesting.md, "Where within a horizon"). Ids are
 * stable (JSON, command line).
 */
public enum BreakdownPeriod {
  /** The ISO 8601 week (Monday to Sunday, weeks of the week-based year), labelled e.g. 2026-W22. */
  WEEK("week"),
  /** The calendar month, labelled e.g. 2026-05 (ISO 8601). */
  MONTH("month");

  private final String id;

  BreakdownPeriod(String id) { this.id = id; }

  /** The id used on the command line and in the JSON report. */
  public String id() { return id; }

  /**
   * The period with this id.
   *
   * @throws IllegalArgumentException naming {@code --breakdown-period}, the value and the choices
   */
  public static BreakdownPeriod of(String id) {
    for (BreakdownPeriod p : values()) {
      if (p.id.equals(id)) {
        return p;
      }
    }
    throw new IllegalArgumentException("--breakdown-period " + id + ": not a period; use week (ISO 8601 weeks) or month");
  }

  /** The local date (days since 1970-01-01) the period holding {@code epochDay} starts on. */
  long start(long epochDay) {
    LocalDate d = LocalDate.ofEpochDay(epochDay);
    return switch (this) {
      case WEEK -> epochDay - (d.getDayOfWeek().getValue() - 1); // ISO 8601: Monday = 1
      case MONTH -> d.withDayOfMonth(1).toEpochDay();
    };
  }

  /** The label of the period starting on {@code startEpochDay} (as {@link #start} gives). */
  String label(long startEpochDay) {
    LocalDate d = LocalDate.ofEpochDay(startEpochDay);
    return switch (this) {
      case WEEK -> String.format(Locale.ROOT, "%d-W%02d", d.get(IsoFields.WEEK_BASED_YEAR), d.get(IsoFields.WEEK_OF_WEEK_BASED_YEAR));
      case MONTH -> String.format(Locale.ROOT, "%d-%02d", d.getYear(), d.getMonthValue());
    };
  }
}
