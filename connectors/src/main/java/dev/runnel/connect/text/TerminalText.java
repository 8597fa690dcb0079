package dev.runnel.connect.text;

/**
 * Makes text safe to print on a terminal. Text that comes from data (a category level, a column
 * name built from one, a configuration label, a reject detail) may hold control characters; a
 * terminal obeys them (an escape sequence can clear the screen, move the cursor or retitle the
 * window), so every terminal writer passes its lines through {@link #safe}. Stateless.
 *
 * <p>Replaced, each by a visible escape: the C0 controls U+0000–U+001F (newline and tab too: a
 * printed line stays one line), DEL U+007F, the C1 controls U+0080–U+009F (a terminal may read
 * U+009B as the start of a control sequence), and the bidirectional overrides and isolates
 * U+202A–U+202E, U+2066–U+2069 (they reorder what follows them on screen). Common practice for
 * printing untrusted text; the ranges are those of the Unicode character database's Cc category
 * and the bidi control characters named in Unicode's UAX #9.
 */
public final class TerminalText {

  private TerminalText() { }

  /**
   * @param text any text, or null
   * @return the text with every character above replaced by {@code \xHH} (below U+0100) or
   *     {@code \}{@code uHHHH}; the same instance when nothing needed replacing; "null" for null
   */
  public static String safe(CharSequence text) {
    if (text == null) {
      return "null";
    }
    int n = text.length();
    int i = 0;
    while (i < n && !unsafe(text.charAt(i))) {
      i++;
    }
    if (i == n) {
      return text.toString();
    }
    StringBuilder sb = new StringBuilder(n + 16);
    sb.append(text, 0, i);
    for (; i < n; i++) {
      char c = text.charAt(i);
      if (!unsafe(c)) {
        sb.append(c);
      } else if (c < 0x100) {
        sb.append("\\x").append(hex(c >> 4)).append(hex(c));
      } else {
        sb.append("\\u").append(hex(c >> 12)).append(hex(c >> 8)).append(hex(c >> 4)).append(hex(c));
      }
    }
    return sb.toString();
  }

  /**
   * Like {@link #safe} for a text of several lines: each line feed is kept, everything else is
   * replaced as there.
   *
   * @param text lines ending in {@code \n}, or null
   */
  public static String lines(CharSequence text) {
    if (text == null) {
      return "null";
    }
    String s = text.toString();
    if (s.indexOf('\n') < 0) {
      return safe(s);
    }
    StringBuilder sb = new StringBuilder(s.length() + 16);
    int start = 0;
    for (int nl = s.indexOf('\n'); nl >= 0; nl = s.indexOf('\n', start)) {
      sb.append(safe(s.substring(start, nl))).append('\n');
      start = nl + 1;
    }
    sb.append(safe(s.substring(start)));
    return sb.toString();
  }

  /** Whether {@link #safe} would replace this character. */
  public static boolean unsafe(char c) {
    return c < 0x20 || (c >= 0x7F && c <= 0x9F) || (c >= 0x202A && c <= 0x202E) || (c >= 0x2066 && c <= 0x2069);
  }

  private static char hex(int v) {
    return "0123456789ABCDEF".charAt(v & 0xF);
  }
}
