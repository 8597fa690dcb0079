// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
package dev.runnel.demo;

/**
 * Locale-free, JDK-version-free number and string formatting for the hand-written JSON and
 * Markdown files. Numbers are rounded half away from zero to a fixed number of decimals with
 * {@link Math#round(double)} on {@code x * 10^d}, so the same double always gives the same text.
 */
final class JsonText {
  private static final long[] POW10 = {1L, 10L, 100L, 1_000L, 10_000L, 100_000L, 1_000_000L};

  private JsonText() {}

  /**
   * Appends {@code x} with exactly {@code decimals} digits after the point ("-0.3", "12.0").
   * @param out destination. Modified.
   * @param x a finite value. Not modified.
   * @param decimals 0 to 6
   */
  static void appendFixed(StringBuilder out, double x, int decimals) {
    if (!Double.isFinite(x)) {
      throw new IllegalArgumentException("x must be finite, got " + x);
    }
    if (decimals < 0 || decimals >= POW10.length) {
      throw new IllegalArgumentException("decimals must be in 0..6, got " + decimals);
    }
    long scale = POW10[decimals];
    long scaled = Math.round(x * scale);
    if (scaled < 0) {
      out.append('-');
      scaled = -scaled;
    }
    out.append(scaled / scale);
    if (decimals > 0) {
      out.append('.');
      String frac = Long.toString(scaled % scale);
      for (int i = frac.length(); i < decimals; i++) {
        out.append('0');
      }
      out.append(frac);
    }
  }

  /** {@code x} with exactly {@code decimals} decimals, as a String. */
  static String fixed(double x, int decimals) {
    StringBuilder sb = new StringBuilder(16);
    appendFixed(sb, x, decimals);
    return sb.toString();
  }

  /** {@code x} rounded to at most {@code maxDecimals} decimals, trailing zeros dropped but one kept ("44.0", "0.35"). */
  static String compact(double x, int maxDecimals) {
    String s = fixed(x, maxDecimals);
    if (maxDecimals == 0) {
      return s;
    }
    int end = s.length();
    while (s.charAt(end - 1) == '0' && s.charAt(end - 2) != '.') {
      end--;
    }
    return s.substring(0, end);
  }

  /** A JSON string literal for {@code s}, with quotes, escaping quote, backslash and control characters. */
  static String quote(String s) {
    StringBuilder sb = new StringBuilder(s.length() + 2);
    sb.append('"');
    for (int i = 0; i < s.length(); i++) {
      char c = s.charAt(i);
      if (c == '"' || c == '\\') {
        sb.append('\\').append(c);
      } else if (c < 0x20) {
        sb.append(String.format(java.util.Locale.ROOT, "\\u%04x", (int) c));
      } else {
        sb.append(c);
      }
    }
    return sb.append('"').toString();
  }
}
