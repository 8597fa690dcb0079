// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
package dev.runnel.demo;

/**
 * The five planned corrupt records of the invented Quillmarsh Charging scenario, in the order they
 * occur in the stream. Each replaces one good {@code actual} line. {@link #expectedRejectId()} names
 * the reject id a strict decoder should report (the ids of stream-core's reject reasons, written as
 * plain strings so this module does not depend on stream-core classes).
 */
public enum CorruptKind {
  /** The line is cut after {@value GroundTruth#TRUNCATE_AT_CHARS} characters: no closing brace. */
  TRUNCATED_JSON("malformed_json"),
  /** {@code "temperature_c"} is a JSON string ({@code "7.4"}) instead of a number. */
  STRING_TEMPERATURE("wrong_type"),
  /**
   * {@code "sessions":NaN} as a bare token. Not JSON: a strict parser reports {@code malformed_json};
   * a decoder that admits non-numeric tokens must report {@code not_finite}.
   */
  NAN_TOKEN("not_finite"),
  /** The {@code "hub"} field is absent. */
  MISSING_HUB("missing_field"),
  /** {@code issued_at} and {@code observed_at} have the year 9026 instead of 2026 (first digit mistyped). */
  ABSURD_YEAR("absurd_time");

  private final String expectedRejectId;

  CorruptKind(String expectedRejectId) { this.expectedRejectId = expectedRejectId; }

  /** The reject id a decoder should report for this line. */
  public String expectedRejectId() { return expectedRejectId; }
}
