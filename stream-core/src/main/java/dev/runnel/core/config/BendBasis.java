package dev.runnel.core.config;

/** The basis of a {@code kind: bends} feature (docs/configuration.md, docs/model.md). */
public enum BendBasis {
  /** x and max(0, x − k) for each knot k: a piecewise-linear curve that bends at the knots. */
  HINGE("hinge"),
  /** x and K − 2 cubic columns: a cubic spline with K knots that is linear beyond the outer knots. */
  NATURAL_SPLINE("natural_spline");

  private final String word;
  BendBasis(String word) { this.word = word; }
  /** The configuration word. */
  public String word() { return word; }
}
