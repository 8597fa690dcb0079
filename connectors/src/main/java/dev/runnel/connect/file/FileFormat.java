package dev.runnel.connect.file;

import java.io.IOException;
import java.io.InputStream;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Locale;

/**
 * What a record file holds, told from its name and first line before any record is read, so a
 * file that is neither JSON Lines nor CSV stops with a message instead of becoming a run of rejects
 * and NaN metrics.
 */
public enum FileFormat {
  /** One JSON object a line (a recording made by {@code runnel record} is one too). */
  JSON_LINES,
  /** A {@code .csv} file: a header row naming the fields, then one record a row. */
  CSV;

  /** Bytes of the file looked at to tell its format. */
  static final int SNIFF_BYTES = 4096;

  /**
   * Tells the format: a name ending in {@code .csv} (any case) is CSV; otherwise a file with a line
   * starting with <code>{</code> among its first {@value #SNIFF_BYTES} bytes is JSON Lines.
   *
   * @param file the file
   * @param option the option that named it, for the message (e.g. {@code --source})
   * @throws IllegalArgumentException if it is neither: names the file, what its start looks like and
   *     what was expected
   */
  public static FileFormat of(Path file, String option) throws IOException {
    String name = file.getFileName() == null ? "" : file.getFileName().toString().toLowerCase(Locale.ROOT);
    if (name.endsWith(".csv")) {
      return CSV;
    }
    byte[] head;
    try (InputStream in = Files.newInputStream(file)) {
      head = in.readNBytes(SNIFF_BYTES);
    }
    int i = 0;
    if (head.length >= 3 && (head[0] & 0xff) == 0xEF && (head[1] & 0xff) == 0xBB && (head[2] & 0xff) == 0xBF) {
      i = 3;
    }
    int first = -1;
    // JSON Lines when a line among the first ones starts with '{' (a broken first record is a reject, not a wrong file)
    for (int j = i; j < head.length; j++) {
      boolean lineStart = j == i || head[j - 1] == '\n';
      if (!lineStart) {
        continue;
      }
      int k = j;
      while (k < head.length && (head[k] == ' ' || head[k] == '\t' || head[k] == '\r')) {
        k++;
      }
      if (k < head.length && head[k] != '\n') {
        if (head[k] == '{') {
          return JSON_LINES;
        }
        if (first < 0) {
          first = k;
        }
      }
    }
    if (first < 0) {
      return JSON_LINES; // empty or blank: refused later with its own message
    }
    i = first;
    throw new IllegalArgumentException(option + " " + file + ": neither JSON Lines nor CSV: its first line starts with "
        + shown(head, i) + " and no line of its first " + SNIFF_BYTES + " bytes starts with '{'. Expected JSON Lines (one JSON object a line, each starting with '{') or CSV"
        + " (a file named *.csv whose first line is a header row naming the fields)");
  }

  /** Up to 40 characters from {@code from}, quoted, control characters and non-ASCII bytes escaped. */
  private static String shown(byte[] b, int from) {
    StringBuilder s = new StringBuilder("\"");
    for (int i = from; i < b.length && i < from + 40 && b[i] != '\n' && b[i] != '\r'; i++) {
      int c = b[i] & 0xff;
      if (c >= 0x20 && c < 0x7f && c != '"' && c != '\\') {
        s.append((char) c);
      } else {
        s.append(String.format(Locale.ROOT, "\\x%02x", c));
      }
    }
    return s.append('"').toString();
  }
}
