package dev.runnel.core.record;

import java.time.OffsetDateTime;
import java.time.format.DateTimeParseException;

/**
 * Event-time parsing and calendar arithmetic on epoch days, without exceptions or allocation on
 * the common path. Every parser returns epoch millis, or {@link #INVALID} when the text is not a
 * time in the expected format.
 *
 * <p>Implementation notes: the ISO 8601 fast path accepts exactly
 * {@code YYYY-MM-DDTHH:MM:SS[.fraction](Z|+HH:MM|-HH:MM)} (fraction of 1 to 9 digits, truncated to
 * milliseconds) and checks every field's range, including the day against the month's length.
 * Any other shape goes to {@link OffsetDateTime#parse} (e.g. no seconds, {@code +0200}), which
 * allocates and costs an exception on failure. Leap seconds (:60) are not accepted. The civil
 * calendar conversions are the proleptic Gregorian days-from-civil algorithm (common practice).
 */
public final class EventTimes {

  /** Returned by every parser on failure. Not a time any accepted record can have. */
  public static final long INVALID = Long.MIN_VALUE;
  /** Milliseconds per day. */
  public static final long MILLIS_PER_DAY = 86_400_000L;
  /**
   * Largest |epoch millis| read from an epoch number (about the year 318,857), so later arithmetic
   * cannot overflow. Far past any accepted year on purpose: today's epoch milliseconds read as
   * seconds (about 1.8e15 ms) must still come out as a time, so that the decoder can say they look
   * like milliseconds ({@link #looksLikeOtherUnit}) instead of "not a time".
   */
  public static final long MAX_ABS_EPOCH_MILLIS = 10_000_000_000_000_000L;

  /**
   * 1973-01-01T00:00Z in epoch millis. An event time given in epoch milliseconds that lands in
   * [1970-01-01, 1973-01-01) is taken for seconds written where milliseconds were expected: today's
   * epoch seconds (about 1.8e9) read as milliseconds land in January 1970. Telling the units apart
   * by magnitude is common practice; the year 1973 is this project's choice (a feed with real data
   * from 1970 to 1972 in epoch milliseconds cannot be read).
   */
  public static final long EPOCH_MILLIS_PLAUSIBLE_FROM = 94_694_400_000L;

  private EventTimes() { }

  /**
   * Whether an event time read from an epoch number looks written in the other unit: with
   * {@code EPOCH_MILLIS}, it lands in [1970, 1973) ({@link #EPOCH_MILLIS_PLAUSIBLE_FROM}); with
   * {@code EPOCH_SECONDS}, it lands at or after {@code endMillis} while the same number read as
   * milliseconds lands in [{@code minMillis}, {@code endMillis}) and not before 1973. Always false
   * for ISO 8601.
   *
   * @param ms the time as read in {@code format}, in epoch millis (not {@link #INVALID})
   * @param minMillis first accepted instant (min_year)
   * @param endMillis first instant past the accepted range (max_year + 1)
   */
  public static boolean looksLikeOtherUnit(long ms, TimeFormat format, long minMillis, long endMillis) {
    if (format == TimeFormat.EPOCH_MILLIS) return ms >= 0 && ms < EPOCH_MILLIS_PLAUSIBLE_FROM;
    if (format == TimeFormat.EPOCH_SECONDS && ms >= endMillis) {
      long asMillis = Math.floorDiv(ms, 1000L);
      return asMillis >= Math.max(minMillis, EPOCH_MILLIS_PLAUSIBLE_FROM) && asMillis < endMillis;
    }
    return false;
  }

  /** Parses ISO 8601 text with an offset. @return epoch millis or {@link #INVALID} */
  public static long parseIso8601(CharSequence s) {
    int n = s.length();
    if (n >= 20 && n <= 35) {
      char[] c = new char[n];
      for (int i = 0; i < n; i++) c[i] = s.charAt(i);
      return parseIso8601(c, 0, n);
    }
    return slowIso(s.toString());
  }

  /**
   * Parses ISO 8601 text with an offset from {@code c[off .. off+len)}. Allocates nothing when the
   * text has the fixed shape. @param c not modified. @return epoch millis or {@link #INVALID}
   */
  public static long parseIso8601(char[] c, int off, int len) {
    long fast = fastIso(c, off, len);
    if (fast != INVALID) return fast;
    if (len < 16 || len > 64) return INVALID;
    return slowIso(new String(c, off, len));
  }

  private static long slowIso(String s) {
    try {
      OffsetDateTime t = OffsetDateTime.parse(s);
      return t.toInstant().toEpochMilli();
    } catch (DateTimeParseException | ArithmeticException e) {
      return INVALID;
    }
  }

  private static int digits(char[] c, int at, int count) {
    int v = 0;
    for (int i = 0; i < count; i++) {
      int d = c[at + i] - '0';
      if (d < 0 || d > 9) return -1;
      v = v * 10 + d;
    }
    return v;
  }

  /** Fast path; INVALID when the shape differs (the slow path then decides). */
  private static long fastIso(char[] c, int off, int len) {
    if (len < 20) return INVALID;
    if (c[off + 4] != '-' || c[off + 7] != '-' || (c[off + 10] != 'T' && c[off + 10] != 't')
        || c[off + 13] != ':' || c[off + 16] != ':') return INVALID;
    int year = digits(c, off, 4);
    int month = digits(c, off + 5, 2);
    int day = digits(c, off + 8, 2);
    int hour = digits(c, off + 11, 2);
    int minute = digits(c, off + 14, 2);
    int second = digits(c, off + 17, 2);
    if (year < 0 || month < 1 || month > 12 || day < 1 || hour < 0 || hour > 23
        || minute < 0 || minute > 59 || second < 0 || second > 59) return INVALID;
    if (day > daysInMonth(year, month)) return INVALID;
    int i = off + 19;
    int end = off + len;
    int millis = 0;
    if (c[i] == '.' || c[i] == ',') {
      i++;
      int start = i;
      while (i < end && c[i] >= '0' && c[i] <= '9') {
        int k = i - start;
        if (k < 3) millis = millis * 10 + (c[i] - '0');
        i++;
      }
      int count = i - start;
      if (count == 0 || count > 9) return INVALID;
      for (int k = count; k < 3; k++) millis *= 10;
    }
    if (i >= end) return INVALID;
    int offsetSeconds;
    char z = c[i];
    if (z == 'Z' || z == 'z') {
      if (i + 1 != end) return INVALID;
      offsetSeconds = 0;
    } else if (z == '+' || z == '-') {
      if (i + 6 != end || c[i + 3] != ':') return INVALID;
      int oh = digits(c, i + 1, 2);
      int om = digits(c, i + 4, 2);
      if (oh < 0 || oh > 18 || om < 0 || om > 59 || (oh == 18 && om != 0)) return INVALID;
      offsetSeconds = (oh * 3600 + om * 60) * (z == '-' ? -1 : 1);
    } else {
      return INVALID;
    }
    long days = daysFromCivil(year, month, day);
    long secs = days * 86_400L + hour * 3600L + minute * 60L + second - offsetSeconds;
    return secs * 1000L + millis;
  }

  /**
   * Epoch millis from a number in {@code format} units (epoch millis or seconds, fraction allowed,
   * rounded to the nearest millisecond). @return epoch millis or {@link #INVALID} when not finite
   * or beyond ±{@link #MAX_ABS_EPOCH_MILLIS}
   */
  public static long fromEpochNumber(double value, TimeFormat format) {
    double ms = format == TimeFormat.EPOCH_SECONDS ? value * 1000.0 : value;
    if (!(Math.abs(ms) <= MAX_ABS_EPOCH_MILLIS)) return INVALID;
    return Math.round(ms);
  }

  /**
   * Epoch millis from numeric text in {@code format} units. Plain integers are parsed without
   * allocation; other numeric text goes through {@link Double#parseDouble}.
   * @param c not modified. @return epoch millis or {@link #INVALID}
   */
  public static long fromEpochText(char[] c, int off, int len, TimeFormat format) {
    if (len == 0 || len > 40) return INVALID;
    int i = off;
    int end = off + len;
    boolean neg = false;
    if (c[i] == '-' || c[i] == '+') { neg = c[i] == '-'; i++; }
    if (i < end && end - i <= 17) {
      long v = 0;
      int j = i;
      while (j < end && c[j] >= '0' && c[j] <= '9') { v = v * 10 + (c[j] - '0'); j++; }
      if (j == end) return fromEpochNumber(neg ? -v : v, format);
    }
    try {
      String s = new String(c, off, len);
      for (int k = 0; k < s.length(); k++) {
        char ch = s.charAt(k);
        if (!(ch >= '0' && ch <= '9') && ch != '.' && ch != '-' && ch != '+' && ch != 'e' && ch != 'E') return INVALID;
      }
      return fromEpochNumber(Double.parseDouble(s), format);
    } catch (NumberFormatException e) {
      return INVALID;
    }
  }

  /** Whether {@code year} is a leap year in the proleptic Gregorian calendar. */
  public static boolean isLeapYear(long year) {
    return (year & 3) == 0 && (year % 100 != 0 || year % 400 == 0);
  }

  /** Days in {@code month} (1..12) of {@code year}. */
  public static int daysInMonth(long year, int month) {
    switch (month) {
      case 2: return isLeapYear(year) ? 29 : 28;
      case 4: case 6: case 9: case 11: return 30;
      default: return 31;
    }
  }

  /** Days since 1970-01-01 of the civil date year-month-day (proleptic Gregorian; common practice). */
  public static long daysFromCivil(long year, int month, int day) {
    long y = month <= 2 ? year - 1 : year;
    long era = (y >= 0 ? y : y - 399) / 400;
    long yoe = y - era * 400;
    long doy = (153L * (month + (month > 2 ? -3 : 9)) + 2) / 5 + day - 1;
    long doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    return era * 146_097 + doe - 719_468;
  }

  /** The civil year of epoch day {@code epochDay}. */
  public static long yearOfEpochDay(long epochDay) {
    long z = epochDay + 719_468;
    long era = (z >= 0 ? z : z - 146_096) / 146_097;
    long doe = z - era * 146_097;
    long yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    long y = yoe + era * 400;
    long doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    long mp = (5 * doy + 2) / 153;
    long m = mp < 10 ? mp + 3 : mp - 9;
    return m <= 2 ? y + 1 : y;
  }

  /** ISO day of week of epoch day {@code epochDay}: Monday = 1 ... Sunday = 7 (1970-01-01 was a Thursday). */
  public static int isoDayOfWeek(long epochDay) {
    return (int) Math.floorMod(epochDay + 3, 7L) + 1;
  }
}
