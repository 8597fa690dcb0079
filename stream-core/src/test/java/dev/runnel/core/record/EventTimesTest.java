package dev.runnel.core.record;

import static org.junit.jupiter.api.Assertions.assertEquals;

import java.time.Instant;
import java.time.LocalDate;
import java.time.OffsetDateTime;
import java.time.ZoneOffset;
import java.time.format.DateTimeFormatter;
import java.util.Random;
import org.junit.jupiter.api.Test;

class EventTimesTest {

  @Test void fastPath_equalsJavaTimeOnRandomInstantsOffsetsAndFractions() {
    // Reference: java.time (ISO 8601 formatting and Instant arithmetic).
    Random rnd = new Random(5L);
    DateTimeFormatter[] fmts = {
        DateTimeFormatter.ofPattern("uuuu-MM-dd'T'HH:mm:ssXXX"),
        DateTimeFormatter.ofPattern("uuuu-MM-dd'T'HH:mm:ss.SXXX"),
        DateTimeFormatter.ofPattern("uuuu-MM-dd'T'HH:mm:ss.SSSXXX"),
        DateTimeFormatter.ofPattern("uuuu-MM-dd'T'HH:mm:ss.SSSSSSXXX"),
        DateTimeFormatter.ofPattern("uuuu-MM-dd'T'HH:mm:ss.SSSSSSSSSXXX")};
    for (int i = 0; i < 20_000; i++) {
      long sec = -2_000_000_000L + (long) (rnd.nextDouble() * 9_000_000_000L);
      int nanos = rnd.nextInt(1_000_000_000);
      ZoneOffset off = ZoneOffset.ofTotalSeconds((rnd.nextInt(37) - 18) * 1800 + (rnd.nextInt(3) == 0 ? 15 * 60 : 0) % 64800);
      OffsetDateTime t = OffsetDateTime.ofInstant(Instant.ofEpochSecond(sec, nanos), off);
      DateTimeFormatter f = fmts[i % fmts.length];
      String text = t.format(f);
      long expected = OffsetDateTime.parse(text).toInstant().toEpochMilli();
      assertEquals(expected, EventTimes.parseIso8601(text), text);
    }
  }

  @Test void examples_parseToKnownInstants() {
    // Reference: java.time Instant.parse of the same instant written in UTC.
    assertEquals(Instant.parse("2026-03-29T00:30:00Z").toEpochMilli(), EventTimes.parseIso8601("2026-03-29T02:30:00+02:00"));
    assertEquals(Instant.parse("2026-03-29T00:30:00.120Z").toEpochMilli(), EventTimes.parseIso8601("2026-03-29T00:30:00.12Z"));
    assertEquals(Instant.parse("2024-02-29T23:59:59Z").toEpochMilli(), EventTimes.parseIso8601("2024-02-29T23:59:59Z"));
    // slow path shapes accepted by java.time
    assertEquals(Instant.parse("2026-03-29T00:30:00Z").toEpochMilli(), EventTimes.parseIso8601("2026-03-29T02:30+02:00"));
  }

  @Test void invalidTexts_returnInvalid() {
    String[] bad = {"", "garbage", "2026-02-29T00:00:00Z", "2026-13-01T00:00:00Z", "2026-03-29T24:00:00Z",
        "2026-03-29T23:60:00Z", "2026-03-29T23:59:60Z", "2026-03-29T02:30:00", "2026-03-29 02:30:00Z",
        "2026-03-29T02:30:00+19:00", "2026-03-29T02:30:00.1234567890Z", "2026-03-29T02:30:00Zx"};
    for (String s : bad) assertEquals(EventTimes.INVALID, EventTimes.parseIso8601(s), s);
  }

  @Test void epochNumbersAndText_convertToMillis() {
    assertEquals(1_774_744_200_000L, EventTimes.fromEpochNumber(1_774_744_200L, TimeFormat.EPOCH_SECONDS));
    assertEquals(1_774_744_200_123L, EventTimes.fromEpochNumber(1_774_744_200.123, TimeFormat.EPOCH_SECONDS));
    assertEquals(1_774_744_200_123L, EventTimes.fromEpochNumber(1_774_744_200_123L, TimeFormat.EPOCH_MILLIS));
    char[] c = "1774744200".toCharArray();
    assertEquals(1_774_744_200_000L, EventTimes.fromEpochText(c, 0, c.length, TimeFormat.EPOCH_SECONDS));
    char[] d = "1774744200.5".toCharArray();
    assertEquals(1_774_744_200_500L, EventTimes.fromEpochText(d, 0, d.length, TimeFormat.EPOCH_SECONDS));
    char[] e = "12x".toCharArray();
    assertEquals(EventTimes.INVALID, EventTimes.fromEpochText(e, 0, e.length, TimeFormat.EPOCH_MILLIS));
    assertEquals(EventTimes.INVALID, EventTimes.fromEpochNumber(Double.NaN, TimeFormat.EPOCH_MILLIS));
    assertEquals(EventTimes.INVALID, EventTimes.fromEpochNumber(1e300, TimeFormat.EPOCH_SECONDS));
  }

  @Test void calendarArithmetic_matchesJavaTimeLocalDate() {
    // Reference: java.time LocalDate (proleptic ISO calendar) and DayOfWeek.getValue (Monday = 1).
    for (long day = -800_000; day <= 800_000; day += 37) {
      LocalDate d = LocalDate.ofEpochDay(day);
      assertEquals(d.getYear(), EventTimes.yearOfEpochDay(day), d.toString());
      assertEquals(day, EventTimes.daysFromCivil(d.getYear(), d.getMonthValue(), d.getDayOfMonth()), d.toString());
      assertEquals(d.getDayOfWeek().getValue(), EventTimes.isoDayOfWeek(day), d.toString());
      assertEquals(d.isLeapYear(), EventTimes.isLeapYear(d.getYear()), d.toString());
      assertEquals(d.lengthOfMonth(), EventTimes.daysInMonth(d.getYear(), d.getMonthValue()), d.toString());
    }
  }
}
