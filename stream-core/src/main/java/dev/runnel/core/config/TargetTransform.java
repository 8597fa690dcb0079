package dev.runnel.core.config;

/**
 * The scale the model learns the target in ({@code model.target_transform}); predictions are
 * published back in the target's own units (docs/model.md, "Transformed target").
 */
public enum TargetTransform {
  /** y: the model learns the target as it is. */
  NONE("none"),
  /** ln(1 + y); needs y &gt; -1. Back: e^z − 1. */
  LOG1P("log1p"),
  /** √y; needs y ≥ 0. Back: max(0, z)². */
  SQRT("sqrt");

  private final String word;
  TargetTransform(String word) { this.word = word; }
  /** The configuration word. */
  public String word() { return word; }
}
