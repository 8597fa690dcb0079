package dev.runnel.core.record;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.lang.reflect.Field;
import java.lang.reflect.Method;
import java.nio.charset.StandardCharsets;
import java.time.OffsetDateTime;
import java.time.YearMonth;
import java.time.format.DateTimeParseException;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The strict reader's ISO 8601 time parser from bytes ({@code parseIsoBytes}, the fixed shape
 * {@code YYYY-MM-DDTHH:MM:SS[.fraction](Z|+HH:MM|-HH:MM)}) against java.time: every text, valid or
 * a near miss, is read or refused exactly as {@link OffsetDateTime#parse} (the reference) parses
 * it or not, and a read one has the reference's epoch millis ({@code toInstant().toEpochMilli()}).
 * The years span the whole accepted range 1..9999, so the year edges, the leap days of the
 * Gregorian calendar and offsets up to ±18:00 that move a time across a year bound are all met.
 * A fixed-shape text that is refused by the bytes parser goes on to the general parser, which
 * decides the same; so this checks the outcome (right time, right accept/reject), not which path
 * read it.
 */
class StrictReaderIsoTimesTest {

  private static RecordSchema schema() {
    Map<String, FieldType> m = new LinkedHashMap<>();
    m.put("at", FieldType.TIME);
    m.put("x", FieldType.NUMBER);
    return new RecordSchema(m);
  }

  /** The widest range {@link RecordLimits} allows: years 1 to 9999. */
  private static final RecordLimits LIMITS = new RecordLimits(64, 4096, 1.0e300, 1, 9999);

  private final RecordSchema schema = schema();
  private final StrictJsonReader reader = StrictJsonReader.create(schema, LIMITS, schema.slot("at"), TimeFormat.ISO8601);
  private final EventRecord out = new EventRecord(schema);
  private final int at = schema.slot("at");

  /**
   * Epoch millis by java.time ({@code OffsetDateTime.parse}, the reference), or null when it does
   * not parse or lies outside the limits. ISO 8601 allows a comma as the decimal sign of the
   * seconds (ISO 8601), which the reader takes in the fixed shape and {@code OffsetDateTime.parse}
   * does not, so the reference is given a point there. Outside the fixed shape (an offset with
   * seconds, say) the reader hands the text to {@code OffsetDateTime.parse} as it is, comma and all.
   */
  private static Long reference(String text) {
    try {
      String t = FIXED_SHAPE.matcher(text).matches() && text.charAt(19) == ',' ? text.substring(0, 19) + "." + text.substring(20) : text;
      long ms = OffsetDateTime.parse(t).toInstant().toEpochMilli();
      return ms >= LIMITS.minTimeMillis() && ms < LIMITS.endTimeMillis() ? ms : null;
    } catch (DateTimeParseException | ArithmeticException e) {
      return null;
    }
  }

  /** The shape the reader parses from bytes (the class doc of {@code StrictJsonReader#isoFromBytes}). */
  private static final java.util.regex.Pattern FIXED_SHAPE =
      java.util.regex.Pattern.compile("\\d{4}-\\d\\d-\\d\\d[Tt]\\d\\d:\\d\\d:\\d\\d([.,]\\d{1,9})?([Zz]|[+-]\\d\\d:\\d\\d)");

  private static final int[] EDGE_YEARS = {1, 2, 4, 99, 100, 399, 400, 401, 1582, 1600, 1699, 1700, 1899, 1900, 1969, 1970,
    1999, 2000, 2024, 2100, 2400, 9996, 9998, 9999};

  private static String twoDigits(int v) {
    return String.format(Locale.ROOT, "%02d", v);
  }

  /** A random valid fixed-shape text (valid as a local date-time; the offset may move it out of range). */
  private static String randomValid(Random r) {
    int year = r.nextInt(3) == 0 ? EDGE_YEARS[r.nextInt(EDGE_YEARS.length)] : 1 + r.nextInt(9999);
    int month = 1 + r.nextInt(12);
    int length = YearMonth.of(year, month).lengthOfMonth(); // java.time's calendar
    int day;
    switch (r.nextInt(4)) {
      case 0: day = length; break; // the last day: 28, 29, 30 or 31
      case 1: day = r.nextBoolean() ? 1 : 29 > length ? length : 29; break;
      default: day = 1 + r.nextInt(length); break;
    }
    if (r.nextInt(8) == 0) { // a leap day
      year = 4 * (1 + r.nextInt(2499));
      if (year % 100 == 0 && year % 400 != 0) year += 4;
      month = 2;
      day = 29;
    }
    int hour = r.nextInt(4) == 0 ? (r.nextBoolean() ? 0 : 23) : r.nextInt(24);
    int minute = r.nextInt(4) == 0 ? (r.nextBoolean() ? 0 : 59) : r.nextInt(60);
    int second = r.nextInt(4) == 0 ? (r.nextBoolean() ? 0 : 59) : r.nextInt(60);
    StringBuilder s = new StringBuilder();
    s.append(String.format(Locale.ROOT, "%04d-%02d-%02d", year, month, day));
    s.append(r.nextInt(8) == 0 ? 't' : 'T');
    s.append(twoDigits(hour)).append(':').append(twoDigits(minute)).append(':').append(twoDigits(second));
    if (r.nextInt(3) != 0) {
      s.append(r.nextInt(6) == 0 ? ',' : '.');
      int digits = 1 + r.nextInt(9);
      for (int k = 0; k < digits; k++) s.append((char) ('0' + r.nextInt(10)));
    }
    switch (r.nextInt(4)) {
      case 0: s.append(r.nextInt(4) == 0 ? 'z' : 'Z'); break;
      case 1: s.append(r.nextBoolean() ? "+18:00" : "-18:00"); break;
      default: {
        int oh = r.nextInt(18);
        int om = r.nextInt(3) == 0 ? 59 : r.nextInt(60);
        s.append(r.nextBoolean() ? '+' : '-').append(twoDigits(oh)).append(':').append(twoDigits(om));
        break;
      }
    }
    return s.toString();
  }

  /** Chars put in place of a digit: just below '0', just above '9' up to '?' (digit values 10..15), and others. */
  private static final String NOT_DIGITS = "/:;<=>?Aa -.T\u007f";

  /** Near misses of a valid text: each field out of range, each char replaced, a char dropped or added. */
  private static List<String> nearMisses(String t, Random r) {
    List<String> m = new ArrayList<>();
    // each two-digit field at values past its range (and the offset's)
    int zone = 19;
    while (zone < t.length() && t.charAt(zone) != 'Z' && t.charAt(zone) != 'z' && t.charAt(zone) != '+' && t.charAt(zone) != '-') {
      zone++;
    }
    String[][] fields = {{"5", "00", "13", "19", "20", "99"}, {"8", "00", "29", "30", "31", "32", "39", "40"},
      {"11", "24", "25", "29", "30"}, {"14", "60", "69", "70"}, {"17", "60", "61", "99"}};
    for (String[] f : fields) {
      int at = Integer.parseInt(f[0]);
      for (int k = 1; k < f.length; k++) m.add(t.substring(0, at) + f[k] + t.substring(at + 2));
    }
    if (t.charAt(zone) == '+' || t.charAt(zone) == '-') {
      String head = t.substring(0, zone + 1);
      for (String o : new String[] {"18:01", "18:59", "19:00", "24:00", "99:00", "00:60", "17:60", "00:99", "0:00", "00:0", "0000",
        "00-00", "00:00:00", "+00:00", "00:00Z"}) {
        m.add(head + o);
      }
    }
    // every char replaced by a char that is not a digit, and every digit by another digit
    for (int i = 0; i < t.length(); i++) {
      char c = NOT_DIGITS.charAt(r.nextInt(NOT_DIGITS.length()));
      m.add(t.substring(0, i) + c + t.substring(i + 1));
      if (Character.isDigit(t.charAt(i))) m.add(t.substring(0, i) + (char) ('0' + r.nextInt(10)) + t.substring(i + 1));
    }
    // a missing separator, a missing char anywhere, one added
    int drop = r.nextInt(t.length());
    m.add(t.substring(0, drop) + t.substring(drop + 1));
    int add = r.nextInt(t.length() + 1);
    m.add(t.substring(0, add) + (char) ('0' + r.nextInt(10)) + t.substring(add));
    // the fraction empty, of 10 digits, or missing its offset
    String local = t.substring(0, 19);
    String offset = t.substring(zone);
    m.add(local + "." + offset);
    m.add(local + ",1234567890" + offset);
    m.add(local + ".123456789" + offset);
    m.add(local + ".1234567");
    m.add(local);
    m.add(local + offset + "0");
    return m;
  }

  /** Reads {@code {"at":"<text>","x":1}} with the reader and checks it against the reference. */
  private boolean check(String text) {
    byte[] b = ("{\"at\":\"" + text + "\",\"x\":1}").getBytes(StandardCharsets.UTF_8);
    Long expected = reference(text);
    boolean ok = reader.read(b, 0, b.length, out);
    assertEquals(expected != null, ok, text);
    if (ok) {
      assertEquals((long) expected, out.timeMillis(at), text);
      assertEquals((long) expected, out.eventTimeMillis(), text);
    }
    return ok;
  }

  @Test void randomTimesAndTheirNearMisses_agreeWithOffsetDateTimeParse() {
    Random r = new Random(20261205L);
    int valid = 0;
    int refused = 0;
    for (int k = 0; k < 1_000; k++) {
      String t = randomValid(r);
      if (check(t)) valid++;
      for (String m : nearMisses(t, r)) {
        if (!check(m)) refused++;
      }
      check(t); // the same text again: read from the memory of the last time
    }
    // the generators reach what they are meant to: mostly valid texts, and many refusals
    assertTrue(valid > 850, valid + " valid texts read");
    assertTrue(refused > 25_000, refused + " near misses refused");
  }

  /** Each text cut anywhere inside the record is not a record; the bytes past the cut would complete it. */
  @Test void recordsCutInsideTheTime_areRefused() {
    Random r = new Random(7L);
    for (int k = 0; k < 500; k++) {
      String t = randomValid(r);
      byte[] b = ("{\"at\":\"" + t + "\"}").getBytes(StandardCharsets.UTF_8);
      for (int len = 7; len < b.length; len++) {
        assertFalse(reader.read(b, 0, len, out), t + " cut at " + len);
      }
      assertEquals(reference(t) != null, reader.read(b, 0, b.length, out), t);
    }
  }

  /**
   * The bytes parser itself, called directly (reflection: it is private): a fixed-shape text that
   * java.time reads ({@code OffsetDateTime.parse(...).toInstant().toEpochMilli()}, no range of
   * years applied here) must be read by it to the same millis, ending after the closing quote;
   * any other text must be left to the general parser (INVALID). Through {@code read} alone a
   * wrong refusal is invisible (the general parser then reads the same time), so this is what
   * pins down that the fixed shape never takes the slow path.
   */
  @Test void bytesParser_readsExactlyTheFixedShape_asOffsetDateTimeParse() throws Exception {
    Method parse = StrictJsonReader.class.getDeclaredMethod("parseIsoBytes", byte[].class, int.class, int.class);
    parse.setAccessible(true);
    Field isoEnd = StrictJsonReader.class.getDeclaredField("isoEnd");
    isoEnd.setAccessible(true);
    Random r = new Random(5L);
    int fixed = 0;
    for (int k = 0; k < 1_000; k++) {
      String t = randomValid(r);
      List<String> texts = nearMisses(t, r);
      texts.add(t);
      for (String s : texts) {
        Long expected = null;
        if (FIXED_SHAPE.matcher(s).matches()) {
          try {
            expected = OffsetDateTime.parse(s.charAt(19) == ',' ? s.substring(0, 19) + "." + s.substring(20) : s).toInstant().toEpochMilli();
          } catch (DateTimeParseException e) {
            expected = null;
          }
        }
        // the text after 3 bytes of something else, then its closing quote and more of the record
        byte[] b = ("{\"a" + s + "\",\"x\":1}").getBytes(StandardCharsets.UTF_8);
        long ms = (long) parse.invoke(reader, b, 3, b.length);
        assertEquals(expected == null ? EventTimes.INVALID : expected, ms, s);
        if (expected != null) {
          fixed++;
          assertEquals(3 + s.length() + 1, (int) isoEnd.get(reader), s);
        }
      }
    }
    assertTrue(fixed > 5_000, fixed + " fixed-shape texts");
  }

  @Test void fixedCases_agreeWithOffsetDateTimeParse() {
    String[] texts = {
      "0001-01-01T00:00:00Z", "0001-01-01T00:00:00+00:01", "0001-01-01T00:00:00-00:01", "9999-12-31T23:59:59.999999999Z",
      "9999-12-31T23:59:59-00:01", "9999-12-31T23:59:59+18:00", "0000-12-31T23:59:59Z", "2000-02-29T12:00:00Z",
      "1900-02-29T12:00:00Z", "2100-02-29T00:00:00Z", "2400-02-29T00:00:00Z", "2023-02-29T00:00:00Z", "2024-04-31T00:00:00Z",
      "2024-12-31T23:59:59.9Z", "2024-12-31T23:59:59.99Z", "2024-12-31T23:59:59.999Z", "2024-12-31T23:59:59.9999Z",
      "1969-12-31T23:59:59.999Z", "1969-12-31T23:59:59.001-18:00", "1970-01-01T00:00:00.5+18:00", "2024-06-15T12:34:56,25Z",
      "2024-06-15T12:34:56.Z", "2024-06-15T12:34:56.1234567890Z", "2024-06-15 12:34:56Z", "2024-06-15T12:34:56",
      "2024-06-15T12:34:56+01", "2024-06-15T12:34:56+0100", "2024-06-15T12:34:56+01:00:00", "2024-06-15T24:00:00Z",
      "2024-06-15T12:60:00Z", "2024-06-15T12:00:60Z", "2024-00-15T12:00:00Z", "2024-13-15T12:00:00Z", "2024-06-00T12:00:00Z",
      "2024-06-31T12:00:00Z", "2024-06-15T12:00:00+19:00", "2024-06-15T12:00:00+18:01", "2024-06-15T12:00:00-18:00",
      "2024-06-15T12:00:00+05:60", "+2024-06-15T12:00:00Z", "2024-6-15T12:00:00Z", "2024-06-15T12:00:00ZZ",
    };
    int read = 0;
    for (String t : texts) {
      if (check(t)) read++;
    }
    assertTrue(read >= 15, read + " read");
  }
}
