package dev.runnel.core.record;

/** The declared type of one input field. */
public enum FieldType {
  /** A JSON string. */
  TEXT("text"),
  /** A finite JSON number, stored as a double. */
  NUMBER("number"),
  /** A JSON boolean. */
  FLAG("flag"),
  /** A point in time: an ISO 8601 string with offset, or epoch millis/seconds when so configured. */
  TIME("time");

  private final String word;

  FieldType(String word) { this.word = word; }

  /** The word used for this type in the configuration, e.g. {@code number}. */
  public String word() { return word; }

  /** The type named by a configuration word, or {@code null} if there is none. */
  public static FieldType ofWord(String word) {
    for (FieldType t : values()) {
      if (t.word.equals(word)) return t;
    }
    return null;
  }
}
