package dev.runnel.core.record;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.core.JsonFactory;
import com.fasterxml.jackson.core.JsonParser;
import com.fasterxml.jackson.core.json.JsonReadFeature;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.util.LinkedHashMap;
import java.util.Map;
import org.junit.jupiter.api.Test;

/**
 * The decoder's rules at their exact edges, each against an outside reference named beside it:
 * which chars are unpaired surrogates (Unicode's surrogate range U+D800..U+DFFF, as
 * {@link Character#isSurrogate} has it), where the short-decimal path stops (its javadoc's 15
 * digits and 10^±22; values against {@link Double#parseDouble}), the longest time text, a
 * non-finite epoch time (Jackson's own {@code getDoubleValue}), and the magnitude limit that the
 * event-time field is exempt from. Every record goes through {@link JsonRecordDecoder#decode} and
 * through the Jackson path alone, which must agree (outcome and detail).
 */
class JsonRecordDecoderEdgesTest {

  private static RejectReason both(JsonRecordDecoder d, RecordSchema s, String json, String[] detail) {
    byte[] b = json.getBytes(StandardCharsets.UTF_8);
    EventRecord a = new EventRecord(s);
    EventRecord r = new EventRecord(s);
    RejectReason fast = d.decode(b, 0, b.length, a);
    String fastDetail = d.lastDetail();
    RejectReason ref = d.decodeWithJackson(b, 0, b.length, r);
    assertEquals(ref, fast, () -> "outcome of " + json + ": " + fastDetail);
    assertEquals(d.lastDetail(), fastDetail, () -> "detail of " + json);
    if (fast == null) DecoderAgreementTest.assertSameFields(s, r, a, json);
    detail[0] = fastDetail;
    return fast;
  }

  private static RecordSchema schema(FieldType tsType) {
    Map<String, FieldType> m = new LinkedHashMap<>();
    m.put("ts", tsType);
    m.put("hub", FieldType.TEXT);
    m.put("y", FieldType.NUMBER);
    return new RecordSchema(m);
  }

  // ---------------------------------------------------------------- surrogates

  /** The index of the first unpaired surrogate, written from Character.isHigh/LowSurrogate (java.lang). */
  private static int referenceUnpaired(char[] c, int off, int n) {
    for (int k = 0; k < n; k++) {
      char ch = c[off + k];
      if (Character.isHighSurrogate(ch) && k + 1 < n && Character.isLowSurrogate(c[off + k + 1])) {
        k++;
      } else if (Character.isSurrogate(ch)) {
        return k;
      }
    }
    return -1;
  }

  @Test void unpairedSurrogateAt_looksOnlyWithinItsRangeAndCountsFromItsStart() {
    // the chars at the ends of the surrogate range and next to them (U+D7FF and U+E000 are not surrogates)
    char[] edge = {'\ud7ff', '\ud800', '\udbff', '\udc00', '\udfff', '\ue000'};
    for (char x : edge) {
      for (String around : new String[] {"#", "a#", "#b", "zz#\ud83d\ude00"}) {
        char[] c = ("qqq" + around.replace('#', x) + "rr").toCharArray();
        int n = around.length();
        assertEquals(referenceUnpaired(c, 3, n), JsonRecordDecoder.unpairedSurrogateAt(c, 3, n),
            () -> "U+" + Integer.toHexString(x) + " in " + around);
      }
    }
    assertEquals(-1, JsonRecordDecoder.unpairedSurrogateAt("ab\ud7ff\ue000".toCharArray(), 0, 4));
    assertEquals(2, JsonRecordDecoder.unpairedSurrogateAt("ab\udfff".toCharArray(), 0, 3));
    // a high surrogate at the end of the range is unpaired even when a low one follows outside it
    char[] cut = "xx\ud83d\ude00".toCharArray();
    assertEquals(0, JsonRecordDecoder.unpairedSurrogateAt(cut, 2, 1));
    assertEquals(-1, JsonRecordDecoder.unpairedSurrogateAt(cut, 2, 2));
    // the index counts from off
    assertEquals(1, JsonRecordDecoder.unpairedSurrogateAt("zzza\udc00".toCharArray(), 3, 2));
  }

  @Test void theLastSurrogate_isNotUnicodeAndItsDetailNamesItAndItsIndex() {
    RecordSchema s = schema(FieldType.TIME);
    JsonRecordDecoder d = new JsonRecordDecoder(s, RecordLimits.DEFAULTS, "ts", TimeFormat.ISO8601);
    String[] detail = new String[1];
    assertEquals(RejectReason.NOT_UNICODE, both(d, s, "{\"hub\":\"ab\\udfff\"}", detail));
    assertEquals("field hub: text holds an unpaired surrogate U+DFFF at char 2; it is not Unicode text", detail[0]);
    assertEquals(RejectReason.NOT_UNICODE, both(d, s, "{\"y\":1,\"hub\":\"\\udbff\"}", detail));
    assertTrue(detail[0].contains("U+DBFF at char 0"), detail[0]);
    // the chars just outside the range are text
    assertNull(both(d, s, "{\"hub\":\"\\ud7ff\\ue000\"}", detail), detail[0]);
  }

  // ---------------------------------------------------------------- short decimals

  private static double shortDecimal(String s) {
    char[] c = ("xx" + s + "yy").toCharArray();
    return JsonRecordDecoder.parseShortDecimal(c, 2, s.length());
  }

  @Test void shortDecimal_takesFifteenDigitsAndPowersUpTo22_withTheBitsOfParseDouble() {
    // at the edges its javadoc names: 15 digits, 10^22 and 10^-22 (Double.parseDouble the reference)
    for (String s : new String[] {"123456789012345", "-999999999999999", "1.23456789012345", "0.00000000000001",
        "1e22", "1E+22", "-1e-22", "9e22", "10e22", "123456789012345e7", "1.5e-21", "0.5e-21"}) {
      double v = shortDecimal(s);
      assertFalse(Double.isNaN(v), s + " is a short decimal");
      assertEquals(Double.doubleToRawLongBits(Double.parseDouble(s)), Double.doubleToRawLongBits(v), s);
    }
    // one past each edge goes to the general parser
    for (String s : new String[] {"1234567890123456", "0.000000000000001", "1e23", "1e-23", "0.1e-22", "4.9e-22", "1e", "1e+", "-"}) {
      assertTrue(Double.isNaN(shortDecimal(s)), s);
    }
  }

  // ---------------------------------------------------------------- times

  @Test void timeText_ofSixtyFourCharsIsReadAndOfSixtyFiveIsTooLong() {
    Map<String, FieldType> m = new LinkedHashMap<>();
    m.put("ts", FieldType.TIME);
    m.put("at", FieldType.TIME);
    RecordSchema s = new RecordSchema(m);
    JsonRecordDecoder d = new JsonRecordDecoder(s, RecordLimits.DEFAULTS, "ts", TimeFormat.EPOCH_SECONDS);
    String[] detail = new String[1];
    String t64 = "1774744200." + "0".repeat(64 - 11);
    assertEquals(64, t64.length());
    assertEquals(RejectReason.BAD_TIME, both(d, s, "{\"ts\":\"" + t64 + "\"}", detail));
    // 64 chars are read as a time (and refused: an epoch text has at most 40 chars); 65 are not read
    assertEquals("field ts: " + t64 + " is not a time in epoch_seconds", detail[0]);
    String iso64 = "2026-03-29T02:30:00." + "0".repeat(64 - 26) + "+02:00";
    assertEquals(64, iso64.length());
    assertEquals(RejectReason.BAD_TIME, both(d, s, "{\"at\":\"" + iso64 + "\"}", detail));
    assertTrue(detail[0].startsWith("field at: 2026-03-29T02:30:00.000") && detail[0].endsWith(" is not a time in ISO 8601 with an offset, e.g. 2026-03-29T02:30:00+02:00"), detail[0]);
    assertEquals(RejectReason.BAD_TIME, both(d, s, "{\"at\":\"" + iso64.replace("+", "0+") + "\"}", detail));
    assertEquals("field at: text of 65 chars is too long for a time", detail[0]);
    assertEquals(RejectReason.BAD_TIME, both(d, s, "{\"ts\":\"" + t64 + "0\"}", detail));
    assertEquals("field ts: text of 65 chars is too long for a time", detail[0]);
  }

  @Test void anEpochTimeThatOverflowsADouble_isNotFinite() throws IOException {
    // Jackson itself reads 1e400 as infinity (the parser as the decoder configures it)
    try (JsonParser p = JsonFactory.builder().enable(JsonReadFeature.ALLOW_NON_NUMERIC_NUMBERS).build().createParser("[1e400,-1e400]")) {
      p.nextToken();
      p.nextToken();
      assertEquals(Double.POSITIVE_INFINITY, p.getDoubleValue());
      p.nextToken();
      assertEquals(Double.NEGATIVE_INFINITY, p.getDoubleValue());
    }
    for (FieldType type : new FieldType[] {FieldType.TIME, FieldType.NUMBER}) {
      RecordSchema s = schema(type);
      JsonRecordDecoder d = new JsonRecordDecoder(s, RecordLimits.DEFAULTS, "ts", TimeFormat.EPOCH_MILLIS);
      String[] detail = new String[1];
      for (String v : new String[] {"1e400", "-1e400", "NaN", "Infinity"}) {
        assertEquals(RejectReason.NOT_FINITE, both(d, s, "{\"ts\":" + v + "}", detail), type + " " + v);
        assertEquals("field ts: " + v + " is not a finite number", detail[0]);
      }
    }
  }

  @Test void theEventTimeNumber_isBoundByItsYearsNotByMaxAbsValue() {
    RecordLimits small = new RecordLimits(16, 4096, 1.0e6, 1970, 2200);
    RecordSchema s = schema(FieldType.NUMBER);
    JsonRecordDecoder d = new JsonRecordDecoder(s, small, "ts", TimeFormat.EPOCH_SECONDS);
    String[] detail = new String[1];
    EventRecord r = new EventRecord(s);
    for (String json : new String[] {"{\"ts\":1774744200,\"y\":1}", "{\"ts\":1774744200.5,\"y\":-1e6}", "{\"ts\":1.7747442e9}"}) {
      assertNull(both(d, s, json, detail), detail[0]);
      byte[] b = json.getBytes(StandardCharsets.UTF_8);
      assertNull(d.decode(b, 0, b.length, r));
      // java.time: Instant.parse("2026-03-29T00:30:00Z").getEpochSecond() == 1774744200
      assertEquals(java.time.Instant.parse("2026-03-29T00:30:00Z").toEpochMilli(), r.eventTimeMillis() / 1000 * 1000, json);
      assertTrue(r.number(s.slot("ts")) > 1e6, "the number is kept as written");
    }
    // any other number field keeps the limit, from one past it
    assertEquals(RejectReason.OUT_OF_RANGE, both(d, s, "{\"ts\":1774744200,\"y\":1000000.0000000001}", detail));
    assertEquals("field y: 1000000.0000000001 exceeds the limit of 1000000.0 in magnitude", detail[0]);
  }

  // ---------------------------------------------------------------- details of malformed records

  @Test void malformedDetails_nameWhatWasMetAndJacksonsPosition() {
    RecordSchema s = schema(FieldType.TIME);
    JsonRecordDecoder d = new JsonRecordDecoder(s, RecordLimits.DEFAULTS, "ts", TimeFormat.ISO8601);
    String[] detail = new String[1];
    for (String empty : new String[] {"", " ", "\r\n\t"}) {
      assertEquals(RejectReason.MALFORMED_JSON, both(d, s, empty, detail));
      assertEquals("empty input", detail[0]);
    }
    // a root that is not an object: the JSON kind met (RFC 8259 section 3's values)
    String[][] roots = {{"42", "a number"}, {"-1.5e3", "a number"}, {"\"s\"", "a string"}, {"true", "a boolean"},
      {"false", "a boolean"}, {"null", "null"}, {"[1]", "an array"}};
    for (String[] r : roots) {
      assertEquals(RejectReason.MALFORMED_JSON, both(d, s, r[0], detail));
      assertEquals("expected a JSON object, got " + r[1], detail[0]);
      assertEquals(RejectReason.MALFORMED_JSON, both(d, s, "{\"y\":1} " + r[0], detail));
      assertEquals("trailing data: " + r[1] + " after the end of the object", detail[0]);
    }
    // Jackson's message with the byte offset of the problem, counted by hand from the record's start
    String[][] at = {{"]", "0"}, {"x", "0"}, {"{\"hub\"", "6"}, {"{\"y\":1]", "6"}, {"{\"y\":01}", "6"}, {"{\"hub\":\"\\q\"}", "9"}};
    for (String[] a : at) {
      assertEquals(RejectReason.MALFORMED_JSON, both(d, s, a[0], detail));
      assertTrue(detail[0].endsWith(" (at byte " + a[1] + ")"), a[0] + ": " + detail[0]);
      assertFalse(detail[0].contains("\n"), detail[0]);
    }
    // a long message is cut to 80 chars, the last three "..."
    assertEquals(RejectReason.MALFORMED_JSON, both(d, s, "{'y':1}", detail));
    assertTrue(detail[0].endsWith("... (at byte 1)") && detail[0].length() == 80 + " (at byte 1)".length(), detail[0]);
  }

  // ---------------------------------------------------------------- the size limit

  /**
   * A valid record of exactly {@code max_record_bytes} is read by the allocation-free path (the
   * class doc: a valid record of the common shape allocates nothing); one byte more is too large.
   * Measured with the JVM's per-thread allocation counter (com.sun.management.ThreadMXBean), as
   * {@link DecodeAllocationTest} does: Jackson's path allocates hundreds of bytes per record.
   */
  @Test void aRecordOfExactlyTheSizeLimit_isReadWithoutAllocating() {
    java.lang.management.ThreadMXBean tmx = java.lang.management.ManagementFactory.getThreadMXBean();
    if (!(tmx instanceof com.sun.management.ThreadMXBean sun) || !sun.isThreadAllocatedMemorySupported()) return;
    RecordSchema s = schema(FieldType.TIME);
    String rec = "{\"ts\":\"2026-03-29T02:30:00+02:00\",\"hub\":\"H07\",\"y\":12.5,\"note\":\"a skipped field\"}";
    int limit = rec.length();
    JsonRecordDecoder d = new JsonRecordDecoder(s, new RecordLimits(16, limit, 1e6, 1970, 2200), "ts", TimeFormat.ISO8601);
    EventRecord r = new EventRecord(s);
    byte[] b = rec.getBytes(StandardCharsets.UTF_8);
    byte[] over = (rec + " ").getBytes(StandardCharsets.UTF_8);
    assertEquals(RejectReason.RECORD_TOO_LARGE, d.decode(over, 0, over.length, r));
    for (int k = 0; k < 20_000; k++) assertNull(d.decode(b, 0, b.length, r));
    long tid = Thread.currentThread().getId();
    long least = Long.MAX_VALUE;
    for (int attempt = 0; attempt < 5; attempt++) {
      long before = sun.getThreadAllocatedBytes(tid);
      int bad = 0;
      for (int k = 0; k < 1000; k++) {
        if (d.decode(b, 0, b.length, r) != null) bad++;
      }
      least = Math.min(least, sun.getThreadAllocatedBytes(tid) - before);
      assertEquals(0, bad);
    }
    assertTrue(least < 1024, "allocated " + least + " bytes over 1000 decodes of a record at the limit");
    assertEquals(12.5, r.number(s.slot("y")));
  }

  // ---------------------------------------------------------------- the other unit

  @Test void wrongTimeUnitDetails_sayWhichUnitItLooksLikeAndTheSetting() {
    String[] detail = new String[1];
    for (FieldType type : new FieldType[] {FieldType.NUMBER, FieldType.TIME}) {
      RecordSchema s = schema(type);
      // seconds read as millis: 1774744200 ms is 1970-01-21T12:59:04.200Z (java.time: Instant.ofEpochMilli)
      JsonRecordDecoder millis = new JsonRecordDecoder(s, RecordLimits.DEFAULTS, "ts", TimeFormat.EPOCH_MILLIS);
      assertEquals("1970-01-21T12:59:04.200Z", java.time.Instant.ofEpochMilli(1_774_744_200L).toString());
      assertEquals(RejectReason.WRONG_TIME_UNIT, both(millis, s, "{\"ts\":1774744200}", detail));
      assertEquals("field ts: read as epoch_millis it is 1970-01-21T12:59:04.200Z, before 1973; it looks like epoch seconds: "
          + "if the feed writes seconds, set input.event_time.format to epoch_seconds", detail[0]);
      // millis read as seconds: 1774744200123 s is +58209-05-28T20:02:03Z (java.time), after max_year 2200
      JsonRecordDecoder seconds = new JsonRecordDecoder(s, RecordLimits.DEFAULTS, "ts", TimeFormat.EPOCH_SECONDS);
      String when = java.time.Instant.ofEpochSecond(1_774_744_200_123L).toString();
      assertEquals("+58209-05-28T20:02:03Z", when);
      assertEquals(RejectReason.WRONG_TIME_UNIT, both(seconds, s, "{\"ts\":1774744200123}", detail));
      assertEquals("field ts: read as epoch_seconds it is " + when + ", after max_year 2200; it looks like epoch milliseconds: "
          + "if the feed writes milliseconds, set input.event_time.format to epoch_millis", detail[0]);
    }
  }
}
