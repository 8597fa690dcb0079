package dev.runnel.core.record;

import static org.junit.jupiter.api.Assertions.assertEquals;

import java.time.DayOfWeek;
import java.time.Instant;
import java.time.LocalDate;
import java.time.OffsetDateTime;
import java.time.Year;
import java.time.format.DateTimeParseException;
import org.junit.jupiter.api.Test;

/**
 * {@link EventTimes} at the exact ends of every range it checks, where a {@code <} written for
 * {@code <=} would differ: each field of the ISO 8601 fast path at its last valid value and the
 * next one, the offset's ±18:00 limit, the fraction's 9 digits, the epoch-number limit and
 * rounding, the plain-integer path of epoch text at its 17-digit edge, and the "other unit" rule at
 * each of its bounds. References: {@link OffsetDateTime#parse} and {@link LocalDate} (java.time);
 * the "other unit" bounds are the project's rule as its javadoc states it.
 */
class EventTimesEdgesTest {

  /** Epoch millis by java.time, or INVALID when it does not parse (a comma fraction read as a point). */
  private static long reference(String text) {
    try {
      String t = text.length() > 19 && text.charAt(19) == ',' ? text.substring(0, 19) + "." + text.substring(20) : text;
      return OffsetDateTime.parse(t).toInstant().toEpochMilli();
    } catch (DateTimeParseException e) {
      return EventTimes.INVALID;
    }
  }

  @Test void iso8601_eachFieldAtItsEnds_agreesWithJavaTime() {
    String[] texts = {
      "2024-01-01T00:00:00Z", "2024-12-31T23:59:59Z", "2024-13-01T00:00:00Z", "2024-00-10T00:00:00Z",
      "2024-01-00T00:00:00Z", "2024-01-31T00:00:00Z", "2024-01-32T00:00:00Z", "2024-04-30T00:00:00Z", "2024-04-31T00:00:00Z",
      "2024-02-29T12:00:00Z", "2023-02-29T12:00:00Z", "2000-02-29T12:00:00Z", "1900-02-29T12:00:00Z", "2023-02-28T12:00:00Z",
      "2024-05-05T24:00:00Z", "2024-05-05T23:60:00Z", "2024-05-05T23:59:60Z", "2024-05-05T00:00:00z", "2024-05-05t01:02:03Z",
      "2024-05-05T01:02:03+18:00", "2024-05-05T01:02:03-18:00", "2024-05-05T01:02:03+18:01", "2024-05-05T01:02:03+19:00",
      "2024-05-05T01:02:03+17:59", "2024-05-05T01:02:03-17:59", "2024-05-05T01:02:03+05:60", "2024-05-05T01:02:03+00:00",
      "2024-05-05T01:02:03.1Z", "2024-05-05T01:02:03.12Z", "2024-05-05T01:02:03.123Z", "2024-05-05T01:02:03.1239Z",
      "2024-05-05T01:02:03.123456789Z", "2024-05-05T01:02:03.1234567891Z", "2024-05-05T01:02:03.Z", "2024-05-05T01:02:03,5Z",
      "2024-05-05T01:02:03.999-00:30", "1969-12-31T23:59:59.999Z", "0001-01-01T00:00:00Z", "9999-12-31T23:59:59.999+14:00",
      "2024-05-05T01:02:03", "2024-05-05T01:02:03+0530", "2024-05-05T01:02:03+05:30x", "2024-05-05T01:02:03Zx",
      "2024-05-05T01:02:03x05:30", "2024/05/05T01:02:03Z", "2024-05-05 01:02:03Z", "2024-05-05T01-02:03Z", "2024-05-05T01:02-03Z",
      "2024-05-05T1:02:03Z", "2024-05-05T01:02:03+5:30", "2024-5-05T01:02:03Z",
    };
    for (String t : texts) {
      assertEquals(reference(t), EventTimes.parseIso8601(t), t);
      char[] c = ("##" + t + "##").toCharArray();
      assertEquals(reference(t), EventTimes.parseIso8601(c, 2, t.length()), t + " inside a larger buffer");
    }
  }

  @Test void epochNumber_limitAndRounding() {
    long max = EventTimes.MAX_ABS_EPOCH_MILLIS;
    assertEquals(max, EventTimes.fromEpochNumber(max, TimeFormat.EPOCH_MILLIS));
    assertEquals(-max, EventTimes.fromEpochNumber(-max, TimeFormat.EPOCH_MILLIS));
    assertEquals(EventTimes.INVALID, EventTimes.fromEpochNumber(Math.nextUp((double) max), TimeFormat.EPOCH_MILLIS));
    assertEquals(EventTimes.INVALID, EventTimes.fromEpochNumber(-Math.nextUp((double) max), TimeFormat.EPOCH_MILLIS));
    assertEquals(max, EventTimes.fromEpochNumber(max / 1000.0, TimeFormat.EPOCH_SECONDS));
    assertEquals(EventTimes.INVALID, EventTimes.fromEpochNumber(Double.NaN, TimeFormat.EPOCH_SECONDS));
    assertEquals(EventTimes.INVALID, EventTimes.fromEpochNumber(Double.POSITIVE_INFINITY, TimeFormat.EPOCH_MILLIS));
    // rounded to the nearest millisecond (Math.round: halves up)
    assertEquals(1_700_000_000_123L, EventTimes.fromEpochNumber(1_700_000_000.1234, TimeFormat.EPOCH_SECONDS));
    assertEquals(1_700_000_000_124L, EventTimes.fromEpochNumber(1_700_000_000.1236, TimeFormat.EPOCH_SECONDS));
    assertEquals(3L, EventTimes.fromEpochNumber(2.5, TimeFormat.EPOCH_MILLIS));
    assertEquals(-2L, EventTimes.fromEpochNumber(-2.5, TimeFormat.EPOCH_MILLIS));
  }

  private static long text(String s, TimeFormat f) {
    char[] c = ("  " + s + " ").toCharArray();
    return EventTimes.fromEpochText(c, 2, s.length(), f);
  }

  @Test void epochText_plainIntegersAndOtherNumbers() {
    // 17 digits read as a whole number; 18 digits and fractions go through Double.parseDouble, the reference
    String[] texts = {"0", "7", "+7", "-7", "12345678901234567", "-12345678901234567", "123456789012345678",
      "1700000000.5", "1.7e9", "-1.7E9", "1700000000123", "+", "-", "", "1 2", "0x10", "12a", "1_000", "NaN", "Infinity",
      "00000000000000000000000000000000000001", "0000000000000000000000000000000000000001"};
    for (String s : texts) {
      for (TimeFormat f : new TimeFormat[] {TimeFormat.EPOCH_MILLIS, TimeFormat.EPOCH_SECONDS}) {
        long expected;
        if (s.isEmpty() || s.length() > 40 || !s.matches("[0-9.eE+-]+")) {
          expected = EventTimes.INVALID;
        } else {
          double v;
          try {
            v = Double.parseDouble(s);
          } catch (NumberFormatException e) {
            v = Double.NaN;
          }
          expected = EventTimes.fromEpochNumber(v, f);
        }
        assertEquals(expected, text(s, f), s + " as " + f);
      }
    }
    assertEquals(EventTimes.INVALID, text("1".repeat(41), TimeFormat.EPOCH_MILLIS), "longer than 40 chars");
    assertEquals(-7_000L, text("-7", TimeFormat.EPOCH_SECONDS));
  }

  @Test void otherUnit_atEachBound() {
    long from = EventTimes.EPOCH_MILLIS_PLAUSIBLE_FROM;
    assertEquals(from, Instant.parse("1973-01-01T00:00:00Z").toEpochMilli()); // java.time
    long min = Instant.parse("1900-01-01T00:00:00Z").toEpochMilli();
    long end = Instant.parse("2101-01-01T00:00:00Z").toEpochMilli();
    TimeFormat ms = TimeFormat.EPOCH_MILLIS;
    assertEquals(false, EventTimes.looksLikeOtherUnit(-1, ms, min, end));
    assertEquals(true, EventTimes.looksLikeOtherUnit(0, ms, min, end));
    assertEquals(true, EventTimes.looksLikeOtherUnit(from - 1, ms, min, end));
    assertEquals(false, EventTimes.looksLikeOtherUnit(from, ms, min, end));
    TimeFormat s = TimeFormat.EPOCH_SECONDS;
    // read as seconds it lands at or past the end; read as millis (ms / 1000) in [max(min, 1973), end)
    assertEquals(false, EventTimes.looksLikeOtherUnit(end - 1, s, min, end));
    assertEquals(false, EventTimes.looksLikeOtherUnit(end, s, min, end), "end as millis is in 1970");
    assertEquals(false, EventTimes.looksLikeOtherUnit(from * 1000 - 1, s, min, end));
    assertEquals(true, EventTimes.looksLikeOtherUnit(from * 1000, s, min, end));
    assertEquals(true, EventTimes.looksLikeOtherUnit(end * 1000 - 1, s, min, end));
    assertEquals(false, EventTimes.looksLikeOtherUnit(end * 1000, s, min, end));
    long lateMin = Instant.parse("2000-01-01T00:00:00Z").toEpochMilli();
    assertEquals(false, EventTimes.looksLikeOtherUnit(lateMin * 1000 - 1, s, lateMin, end), "before min_year as millis");
    assertEquals(true, EventTimes.looksLikeOtherUnit(lateMin * 1000, s, lateMin, end));
    assertEquals(false, EventTimes.looksLikeOtherUnit(from * 1000, TimeFormat.ISO8601, min, end), "never for ISO 8601");
  }

  @Test void calendar_agreesWithJavaTimeAroundEraAndLeapBoundaries() {
    long[] days = {-719_529, -719_528, -719_162, -146_097, -36_525, -1, 0, 1, 59, 60, 365, 10_956, 10_957, 11_016, 11_017,
      47_482, 2_932_896, 2_932_897};
    for (long d : days) {
      for (long dd = d - 2; dd <= d + 2; dd++) {
        LocalDate ld = LocalDate.ofEpochDay(dd); // java.time, the reference
        assertEquals(ld.getYear(), EventTimes.yearOfEpochDay(dd), "year of day " + dd);
        assertEquals(DayOfWeek.from(ld).getValue(), EventTimes.isoDayOfWeek(dd), "weekday of day " + dd);
        assertEquals(dd, EventTimes.daysFromCivil(ld.getYear(), ld.getMonthValue(), ld.getDayOfMonth()), ld.toString());
        assertEquals(ld.lengthOfMonth(), EventTimes.daysInMonth(ld.getYear(), ld.getMonthValue()), ld.toString());
        assertEquals(Year.isLeap(ld.getYear()), EventTimes.isLeapYear(ld.getYear()), ld.toString());
      }
    }
  }
}
