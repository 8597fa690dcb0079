package dev.runnel.core.config;

/** The sequential test watching the level of the a priori errors ({@code drift.error_test}). */
public enum ErrorTest {
  /** Two-sided Page–Hinkley test on the absolute standardized a priori errors. */
  PAGE_HINKLEY("page_hinkley"),
  /** No error-level test. */
  OFF("off");

  private final String word;
  ErrorTest(String word) { this.word = word; }
  /** The configuration word. */
  public String word() { return word; }
}
