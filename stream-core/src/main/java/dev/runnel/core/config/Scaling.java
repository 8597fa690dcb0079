package dev.runnel.core.config;

/** How a numeric column is scaled before the model sees it. */
public enum Scaling {
  /** z = (x - running mean) / running sd; needs the constant term to absorb the centre. */
  STANDARDIZE("standardize"),
  /** z = x / running root mean square; no centring, so it works without a constant term. */
  SCALE("scale"),
  /** z = x. */
  NONE("none");

  private final String word;
  Scaling(String word) { this.word = word; }
  /** The configuration word. */
  public String word() { return word; }
}
