package dev.runnel.core.config;

/** A pre-transform of a numeric input, applied before scaling. */
public enum Transform {
  /** x. */
  NONE("none"),
  /** ln(1 + x); needs x > -1. */
  LOG1P("log1p"),
  /** sqrt(x); needs x >= 0. */
  SQRT("sqrt"),
  /** x^exponent; needs x >= 0 for a non-integer exponent and x != 0 for a negative one. */
  POWER("power");

  private final String word;
  Transform(String word) { this.word = word; }
  /** The configuration word. */
  public String word() { return word; }
}
