package dev.runnel.core.config;

/** Which earlier snapshot a weight is compared with by the weight alarm ({@code drift.baseline}). */
public enum DriftBaseline {
  /** The first snapshot in which the column had a finite weight and standard error. */
  FIRST_READY_SNAPSHOT("first_ready_snapshot"),
  /** The snapshot just before. */
  PREVIOUS_SNAPSHOT("previous_snapshot"),
  /** The snapshot {@code drift.baseline_snapshots} before (a rolling baseline). */
  SNAPSHOTS_AGO("snapshots_ago");

  private final String word;
  DriftBaseline(String word) { this.word = word; }
  /** The configuration word. */
  public String word() { return word; }
}
