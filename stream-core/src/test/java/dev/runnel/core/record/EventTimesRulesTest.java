package dev.runnel.core.record;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.time.Instant;
import java.time.LocalDate;
import java.time.OffsetDateTime;
import java.time.ZoneOffset;
import java.time.format.DateTimeParseException;
import org.junit.jupiter.api.Test;

/**
 * Three rules of {@link EventTimes} that the edge tests left open (found by mutation testing):
 * ISO 8601 text that ends right after its fraction (no offset), numeric epoch text that
 * {@link Double#parseDouble} would accept but is not a plain number, and the other-unit rule when a
 * time read as seconds lands exactly on the end of the accepted range.
 */
class EventTimesRulesTest {

  private static boolean javaTimeAccepts(String s) {
    try {
      OffsetDateTime.parse(s);
      return true;
    } catch (DateTimeParseException e) {
      return false;
    }
  }

  /** Text that stops after the seconds or the fraction has no offset: refused, as java.time refuses it. */
  @Test
  void isoTextWithoutAnOffsetIsNotATime() {
    String[] noOffset = {"2026-03-29T02:30:00.5", "2026-03-29T02:30:00.123", "2026-03-29T02:30:00.123456789",
        "2026-03-29T02:30:00,25"};
    for (String s : noOffset) {
      assertEquals(false, javaTimeAccepts(s), s); // java.time, OffsetDateTime.parse
      assertEquals(EventTimes.INVALID, EventTimes.parseIso8601(s), s);
      char[] exact = s.toCharArray(); // the text ends where the array ends
      assertEquals(EventTimes.INVALID, EventTimes.parseIso8601(exact, 0, exact.length), s);
    }
    // the same text with its offset is a time (java.time)
    assertEquals(Instant.parse("2026-03-29T02:30:00.500Z").toEpochMilli(), EventTimes.parseIso8601("2026-03-29T02:30:00.5Z"));
  }

  /**
   * Only digits, a sign, a point and an exponent make epoch text: {@link Double#parseDouble} also
   * reads a type suffix ({@code d}, {@code f}), hexadecimal, {@code Infinity} and surrounding
   * blanks, none of which is a number in JSON or CSV.
   */
  @Test
  void epochTextAcceptsOnlyPlainNumbers() {
    String[] notNumbers = {"1700000000d", "1700000000.5f", "0x1p30", " 1700000000", "1700000000 ", "17e3D", "1_700"};
    for (String s : notNumbers) {
      char[] c = s.toCharArray();
      assertEquals(EventTimes.INVALID, EventTimes.fromEpochText(c, 0, c.length, TimeFormat.EPOCH_SECONDS), "'" + s + "'");
      assertEquals(EventTimes.INVALID, EventTimes.fromEpochText(c, 0, c.length, TimeFormat.EPOCH_MILLIS), "'" + s + "'");
    }
    // the plain forms of the same numbers are read (seconds to millis by hand)
    String[] plain = {"1700000000.5", "1.7e9", "+1700000000", "1700000000E0"};
    long[] millis = {1_700_000_000_500L, 1_700_000_000_000L, 1_700_000_000_000L, 1_700_000_000_000L};
    for (int i = 0; i < plain.length; i++) {
      char[] c = plain[i].toCharArray();
      assertEquals(millis[i], EventTimes.fromEpochText(c, 0, c.length, TimeFormat.EPOCH_SECONDS), plain[i]);
    }
  }

  /**
   * With years 1970..9999 the end of the range read as seconds is past the range, while the same
   * number read as milliseconds is in 1978: it looks written in milliseconds. The rule is "at or
   * after the end" (javadoc of {@link EventTimes#looksLikeOtherUnit}), so the end itself counts.
   */
  @Test
  void secondsLandingExactlyOnTheEndLookLikeMillis() {
    RecordLimits wide = new RecordLimits(256, 65536, 1e12, 1970, 9999);
    long end = wide.endTimeMillis();
    assertEquals(LocalDate.of(10_000, 1, 1).atStartOfDay(ZoneOffset.UTC).toInstant().toEpochMilli(), end); // java.time
    long asMillis = end / 1000;
    assertTrue(asMillis >= EventTimes.EPOCH_MILLIS_PLAUSIBLE_FROM && asMillis < end, "read as millis it is in range");
    assertEquals(true, EventTimes.looksLikeOtherUnit(end, TimeFormat.EPOCH_SECONDS, wide.minTimeMillis(), end));
    assertEquals(false, EventTimes.looksLikeOtherUnit(end - 1, TimeFormat.EPOCH_SECONDS, wide.minTimeMillis(), end),
        "inside the range: a time in seconds as expected");
  }
}
