package dev.runnel.core.config;

/**
 * What the step does with a correction: an actual for an (entity, target time) it has already
 * learned, with a different value ({@code input.forecast.corrections}, docs/forecasting.md).
 */
public enum Correction {
  /** Rejected ({@code corrected_actual}): the value learned first stays; nothing changes. */
  REJECT("reject"),
  /** Learned as one more record, beside the first value (the behaviour before the memory existed). */
  LEARN_AS_NEW("learn_as_new"),
  /**
   * The first value's information is removed from the model exactly (downdated) and the new value
   * is learned; the forecasts for the key are settled again against the corrected actual.
   */
  REPLACE("replace");

  private final String word;
  Correction(String word) { this.word = word; }
  /** The configuration word. */
  public String word() { return word; }
}
