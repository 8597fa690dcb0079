package dev.runnel.core.evaluate;

/** The loss of one forecast error in a comparison of predictive accuracy. Ids are stable (JSON). */
public enum Loss {
  /** e². */
  SQUARED("squared"),
  /** |e|. */
  ABSOLUTE("absolute");

  private final String id;

  Loss(String id) { this.id = id; }

  public String id() { return id; }

  /** The loss of error {@code e}. */
  public double of(double e) {
    return this == SQUARED ? e * e : Math.abs(e);
  }
}
