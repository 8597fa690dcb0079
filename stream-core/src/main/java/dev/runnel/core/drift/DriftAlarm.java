package dev.runnel.core.drift;

/**
 * One raised alarm, as carried in a snapshot. Immutable.
 *
 * @param kind {@link #WEIGHT}, {@link #ERROR_LEVEL}, {@link #CHANGED_WEIGHT} or {@link #WEIGHT_BREAK}
 * @param column the column for a weight or changed-weight alarm; null for an error-level alarm
 * @param direction {@code up} or {@code down}: the weight rose or fell; the error level rose or fell
 * @param firedAtMillis event time at which it fired (the snapshot's time for a weight alarm, the
 *     record's time for an error-level alarm)
 * @param firedAtSnapshot index of the first snapshot that carried it
 * @param firedAtRecord the pipeline's count of trained records when it fired
 * @param score for a weight: {@code |w − w_b| / √(se² + se_b²)} now; for the error level: the
 *     Page–Hinkley statistic when it fired; for a changed weight: {@code |z|} of the before/after
 *     comparison ({@link ChangeAttribution})
 * @param threshold the threshold it crossed (k or λ)
 * @param baselineValue the baseline raw weight (for a changed weight: the weight at the error-level
 *     alarm), or the mean absolute standardized error before the change
 * @param currentValue the current raw weight (for a changed weight: the fit of the records after
 *     the alarm); NaN for an error-level alarm
 */
public record DriftAlarm(String kind, String column, String direction, long firedAtMillis, long firedAtSnapshot,
                         long firedAtRecord, double score, double threshold, double baselineValue, double currentValue) {

  /** Kind of a weight alarm. */
  public static final String WEIGHT = "weight";
  /** Kind of an error-level alarm. */
  public static final String ERROR_LEVEL = "error_level";
  /**
   * Kind of a changed-weight alarm: a column named by the before/after comparison that follows an
   * error-level alarm ({@link ChangeAttribution}); listed, largest score first, like an error-level alarm.
   */
  public static final String CHANGED_WEIGHT = "changed_weight";
  /**
   * Kind of a weight-break alarm: a column named by the stability scan kept all the time
   * ({@link WeightBreakScan}); {@code baselineValue} is its raw weight in the older stretch,
   * {@code currentValue} in the recent one, {@code score} the {@code |z|} of their difference.
   */
  public static final String WEIGHT_BREAK = "weight_break";

  /** The same alarm with a new score and current value (a weight alarm that is still raised). */
  DriftAlarm withScore(double newScore, double newCurrent, String newDirection) {
    return new DriftAlarm(kind, column, newDirection, firedAtMillis, firedAtSnapshot, firedAtRecord, newScore,
        threshold, baselineValue, newCurrent);
  }
}
