package dev.runnel.core.drift;

/**
 * The drift monitor's state as published in a snapshot. Immutable.
 *
 * @param errorTest the test's configuration word ({@code page_hinkley} or {@code off})
 * @param upStatistic the Page–Hinkley "up" statistic now
 * @param downStatistic the Page–Hinkley "down" statistic now
 * @param threshold λ
 * @param meanAbsError the test's running mean of the absolute standardized a priori errors since its last reset
 * @param errorCount values the test has seen since its last reset
 * @param weightAlarmsFired weight alarms fired since the pipeline began
 * @param errorAlarmsFired error-level alarms fired since the pipeline began
 * @param baseline the weight alarm's baseline word
 * @param weightAlarmSe k
 */
public record DriftStatus(String errorTest, double upStatistic, double downStatistic, double threshold,
                          double meanAbsError, long errorCount, long weightAlarmsFired, long errorAlarmsFired,
                          String baseline, double weightAlarmSe) { }
