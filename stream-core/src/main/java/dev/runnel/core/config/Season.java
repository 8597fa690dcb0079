package dev.runnel.core.config;

/** Which past hours a smoothed history averages ({@code kind: smoothed}, key {@code season}). */
public enum Season {
  /** Every actual of the entity, one mean. */
  NONE("none", 1),
  /** Only actuals of the same local hour of day as the target time: 24 means per entity. */
  HOUR_OF_DAY("hour_of_day", 24),
  /** Only actuals of the same local hour of the ISO week (Monday 00:00 = 0): 168 means per entity. */
  HOUR_OF_WEEK("hour_of_week", 168);

  private final String word;
  private final int slots;
  Season(String word, int slots) {
    this.word = word;
    this.slots = slots;
  }
  /** The configuration word. */
  public String word() { return word; }
  /** The number of separate means per entity. */
  public int slots() { return slots; }
}
