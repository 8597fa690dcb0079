package dev.runnel.core.config;

/**
 * Which point of the back-transformed predictive distribution is published as the prediction
 * ({@code model.target_point}); with {@code target_transform: none} both are the same value.
 */
public enum TargetPoint {
  /** The median: the back-transform of the point in the model's scale. */
  MEDIAN("median"),
  /** The mean: the median corrected for the spread of the predictive distribution (docs/model.md). */
  MEAN("mean");

  private final String word;
  TargetPoint(String word) { this.word = word; }
  /** The configuration word. */
  public String word() { return word; }
}
