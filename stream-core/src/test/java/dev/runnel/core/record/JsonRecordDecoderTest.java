package dev.runnel.core.record;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.LinkedHashMap;
import java.util.Map;
import org.junit.jupiter.api.Test;

class JsonRecordDecoderTest {

  private static RecordSchema schema() {
    Map<String, FieldType> m = new LinkedHashMap<>();
    m.put("hub", FieldType.TEXT);
    m.put("sessions", FieldType.NUMBER);
    m.put("holiday", FieldType.FLAG);
    m.put("observed_at", FieldType.TIME);
    return new RecordSchema(m);
  }

  private final RecordSchema schema = schema();
  private final RecordLimits limits = new RecordLimits(16, 256, 1.0e6, 1970, 2200);
  private final JsonRecordDecoder decoder = new JsonRecordDecoder(schema, limits, "observed_at", TimeFormat.ISO8601);
  private final EventRecord rec = new EventRecord(schema);

  private RejectReason decode(String json) {
    byte[] b = ("xx" + json + "yy").getBytes(StandardCharsets.UTF_8);
    return decoder.decode(b, 2, b.length - 4, rec);
  }

  @Test void goodRecord_decodesEveryType() {
    assertNull(decode("{\"hub\":\"H07\",\"sessions\":12.5,\"holiday\":true,\"observed_at\":\"2026-03-29T02:30:00+02:00\","
        + "\"extra\":{\"nested\":[1,2,{\"a\":null}]},\"more\":\"x\"}"), decoder.lastDetail());
    assertEquals("H07", rec.text(schema.slot("hub")));
    assertEquals(12.5, rec.number(schema.slot("sessions")));
    assertTrue(rec.flag(schema.slot("holiday")));
    long t = Instant.parse("2026-03-29T00:30:00Z").toEpochMilli();
    assertEquals(t, rec.timeMillis(schema.slot("observed_at")));
    assertTrue(rec.hasEventTime());
    assertEquals(t, rec.eventTimeMillis());
    assertEquals("", decoder.lastDetail());
  }

  @Test void missingAndNullFields_areAbsentNotRejected() {
    assertNull(decode("{\"hub\":null,\"sessions\":3}"));
    assertFalse(rec.present(schema.slot("hub")));
    assertTrue(rec.present(schema.slot("sessions")));
    assertFalse(rec.present(schema.slot("holiday")));
    assertFalse(rec.hasEventTime());
  }

  @Test void reuse_clearsThePreviousRecord() {
    assertNull(decode("{\"hub\":\"A\",\"sessions\":1,\"observed_at\":\"2026-01-01T00:00:00Z\"}"));
    assertNull(decode("{\"sessions\":2}"));
    assertFalse(rec.present(schema.slot("hub")));
    assertFalse(rec.hasEventTime());
    assertEquals(2.0, rec.number(schema.slot("sessions")));
  }

  @Test void malformedJson_isRejected() {
    assertEquals(RejectReason.MALFORMED_JSON, decode("{\"hub\":"));
    assertEquals(RejectReason.MALFORMED_JSON, decode("{\"hub\" \"x\"}"));
    assertEquals(RejectReason.MALFORMED_JSON, decode("[1,2]"));
    assertEquals("expected a JSON object, got an array", decoder.lastDetail());
    assertEquals(RejectReason.MALFORMED_JSON, decode("42"));
    assertEquals(RejectReason.MALFORMED_JSON, decode(""));
    assertEquals(RejectReason.MALFORMED_JSON, decode("{\"sessions\":1} {\"sessions\":2}"));
    assertEquals("trailing data: an object after the end of the object", decoder.lastDetail());
    assertEquals(RejectReason.MALFORMED_JSON, decode("{\"sessions\":1}}"));
  }

  @Test void wrongTypes_areRejectedWithTheFieldNamed() {
    assertEquals(RejectReason.WRONG_TYPE, decode("{\"sessions\":\"12\"}"));
    assertEquals("field sessions: expected a number, got a string", decoder.lastDetail());
    assertEquals(RejectReason.WRONG_TYPE, decode("{\"hub\":7}"));
    assertEquals(RejectReason.WRONG_TYPE, decode("{\"holiday\":\"yes\"}"));
    assertEquals(RejectReason.WRONG_TYPE, decode("{\"hub\":{\"id\":\"H07\"}}"));
    assertEquals("field hub: expected a string, got an object", decoder.lastDetail());
    assertEquals(RejectReason.WRONG_TYPE, decode("{\"sessions\":[1]}"));
    assertEquals(RejectReason.WRONG_TYPE, decode("{\"observed_at\":1774744200}"));
  }

  @Test void nonFiniteNumbers_areRejected() {
    assertEquals(RejectReason.NOT_FINITE, decode("{\"sessions\":NaN}"));
    assertEquals(RejectReason.NOT_FINITE, decode("{\"sessions\":Infinity}"));
    assertEquals(RejectReason.NOT_FINITE, decode("{\"sessions\":-Infinity}"));
    assertEquals(RejectReason.NOT_FINITE, decode("{\"sessions\":1e999}"));
  }

  @Test void limits_areEnforced() {
    assertEquals(RejectReason.OUT_OF_RANGE, decode("{\"sessions\":1000001}"));
    assertEquals(RejectReason.OUT_OF_RANGE, decode("{\"sessions\":-2e6}"));
    assertNull(decode("{\"sessions\":-1e6}"));
    assertEquals(RejectReason.TOO_LONG, decode("{\"hub\":\"abcdefghijklmnopq\"}"));
    assertEquals("field hub: text of 17 chars exceeds the limit of 16", decoder.lastDetail());
    assertNull(decode("{\"hub\":\"abcdefghijklmnop\"}"));
    StringBuilder big = new StringBuilder("{\"sessions\":1,\"pad\":\"");
    while (big.length() < 300) big.append('x');
    big.append("\"}");
    assertEquals(RejectReason.RECORD_TOO_LARGE, decode(big.toString()));
  }

  @Test void times_areCheckedForShapeAndYears() {
    assertEquals(RejectReason.BAD_TIME, decode("{\"observed_at\":\"yesterday\"}"));
    assertEquals(RejectReason.BAD_TIME, decode("{\"observed_at\":\"2026-02-30T00:00:00Z\"}"));
    assertEquals(RejectReason.ABSURD_TIME, decode("{\"observed_at\":\"1969-12-31T23:59:59Z\"}"));
    assertEquals(RejectReason.ABSURD_TIME, decode("{\"observed_at\":\"2201-01-01T00:00:00Z\"}"));
    assertNull(decode("{\"observed_at\":\"2200-12-31T23:59:59Z\"}"));
    assertNull(decode("{\"observed_at\":\"1970-01-01T00:00:00Z\"}"));
  }

  @Test void epochEventTime_acceptsNumbersAndNumericText() {
    Map<String, FieldType> m = new LinkedHashMap<>();
    m.put("ts", FieldType.NUMBER);
    m.put("y", FieldType.NUMBER);
    RecordSchema s = new RecordSchema(m);
    JsonRecordDecoder d = new JsonRecordDecoder(s, RecordLimits.DEFAULTS, "ts", TimeFormat.EPOCH_SECONDS);
    EventRecord r = new EventRecord(s);
    byte[] b = "{\"ts\":1774744200,\"y\":1}".getBytes(StandardCharsets.UTF_8);
    assertNull(d.decode(b, 0, b.length, r));
    assertEquals(1_774_744_200_000L, r.eventTimeMillis());
    assertEquals(1_774_744_200.0, r.number(0));
    byte[] absurd = "{\"ts\":-1}".getBytes(StandardCharsets.UTF_8);
    assertEquals(RejectReason.ABSURD_TIME, d.decode(absurd, 0, absurd.length, r));

    Map<String, FieldType> m2 = new LinkedHashMap<>();
    m2.put("ts", FieldType.TIME);
    RecordSchema s2 = new RecordSchema(m2);
    JsonRecordDecoder d2 = new JsonRecordDecoder(s2, RecordLimits.DEFAULTS, "ts", TimeFormat.EPOCH_MILLIS);
    EventRecord r2 = new EventRecord(s2);
    byte[] b2 = "{\"ts\":\"1774744200123\"}".getBytes(StandardCharsets.UTF_8);
    assertNull(d2.decode(b2, 0, b2.length, r2));
    assertEquals(1_774_744_200_123L, r2.eventTimeMillis());
    byte[] b3 = "{\"ts\":\"soon\"}".getBytes(StandardCharsets.UTF_8);
    assertEquals(RejectReason.BAD_TIME, d2.decode(b3, 0, b3.length, r2));
  }

  @Test void malformedRecord_thenGoodRecords_decodeNormally() {
    String good = "{\"hub\":\"H07\",\"sessions\":12.5,\"observed_at\":\"2026-03-29T02:30:00+02:00\"}";
    long t = Instant.parse("2026-03-29T00:30:00Z").toEpochMilli();
    String[] bad = {"{\"hub\":", "{\"hub\":\"H0", "{\"sessions\":1} x", "{\"sessions\":1}garbage", "{\"sessions\":1} 1",
      "{\"sessions\":1}\u0000", "{\"hub\":\"a\u0001b\"}", "{\"sessions\":01}", "not json"};
    for (String b : bad) {
      assertEquals(RejectReason.MALFORMED_JSON, decode(b), b);
      assertFalse(decoder.lastDetail().isEmpty(), "a detail for " + b);
      for (int k = 0; k < 2; k++) {
        assertNull(decode(good), "after " + b + ": " + decoder.lastDetail());
        assertEquals("", decoder.lastDetail());
        assertEquals("H07", rec.text(schema.slot("hub")));
        assertEquals(12.5, rec.number(schema.slot("sessions")));
        assertEquals(t, rec.eventTimeMillis());
      }
    }
  }

  @Test void trailingContent_isMalformedWithItsDetail() {
    assertEquals(RejectReason.MALFORMED_JSON, decode("{\"sessions\":1} {\"sessions\":2}"));
    assertEquals("trailing data: an object after the end of the object", decoder.lastDetail());
    assertEquals(RejectReason.MALFORMED_JSON, decode("{\"sessions\":1} [2]"));
    assertEquals("trailing data: an array after the end of the object", decoder.lastDetail());
    assertEquals(RejectReason.MALFORMED_JSON, decode("{\"sessions\":1} \"x\""));
    assertEquals("trailing data: a string after the end of the object", decoder.lastDetail());
    assertNull(decode(" \t{\"sessions\":1}\r\n "), "whitespace around the object is fine");
  }

  @Test void escapesAndNonAsciiText_decodeToTheirChars() {
    // expected strings written by hand from RFC 8259 section 7 (escapes) and the UTF-8 of each char
    assertNull(decode("{\"hub\":\"Z\\u00fcrich \\\"N\\\" \\/ \\\\\\t\\n\"}"), decoder.lastDetail());
    assertEquals("Z\u00fcrich \"N\" / \\\t\n", rec.text(schema.slot("hub")));
    assertNull(decode("{\"hub\":\"\u00e9\u65e5\ud83d\ude00\"}"), decoder.lastDetail());
    assertEquals("\u00e9\u65e5\ud83d\ude00", rec.text(schema.slot("hub")));
    assertEquals(4, rec.textLength(schema.slot("hub")), "a four-byte UTF-8 char is two UTF-16 units");
    assertNull(decode("{\"hub\":\"\\ud83d\\ude00\"}"), decoder.lastDetail());
    assertEquals("\ud83d\ude00", rec.text(schema.slot("hub")));
    assertNull(decode("{\"hub\":\"\"}"));
    assertEquals("", rec.text(schema.slot("hub")));
    assertEquals(0, rec.textLength(schema.slot("hub")));
  }

  @Test void emptyObject_decodesWithNothingPresent() {
    assertNull(decode("{\"hub\":\"A\",\"observed_at\":\"2026-01-01T00:00:00Z\"}"));
    assertNull(decode("{}"));
    for (int i = 0; i < schema.size(); i++) assertFalse(rec.present(i), schema.name(i));
    assertNull(rec.text(schema.slot("hub")));
    assertEquals(-1, rec.textLength(schema.slot("hub")));
    assertFalse(rec.hasEventTime());
    assertNull(decode(" { } "));
  }

  @Test void veryLongText_upToItsLimit() {
    RecordLimits big = new RecordLimits(100_000, 1_000_000, 1e6, 1970, 2200);
    JsonRecordDecoder d = new JsonRecordDecoder(schema, big);
    EventRecord r = new EventRecord(schema);
    String text = "q".repeat(99_999) + "\u00e9";
    byte[] b = ("{\"pad\":\"" + "p".repeat(300_000) + "\",\"hub\":\"" + text + "\"}").getBytes(StandardCharsets.UTF_8);
    assertNull(d.decode(b, 0, b.length, r), d.lastDetail());
    assertEquals(text, r.text(schema.slot("hub")));
    byte[] over = ("{\"hub\":\"" + text + "x\"}").getBytes(StandardCharsets.UTF_8);
    assertEquals(RejectReason.TOO_LONG, d.decode(over, 0, over.length, r));
    assertEquals("field hub: text of 100001 chars exceeds the limit of 100000", d.lastDetail());
  }

  @Test void textBuffer_growsWithTheTextsNotWithTheRecord() {
    RecordLimits big = new RecordLimits(1_000_000, 16_000_000, 1e6, 1970, 2200);
    JsonRecordDecoder d = new JsonRecordDecoder(schema, big);
    EventRecord r = new EventRecord(schema);
    int hub = schema.slot("hub");
    byte[] b = ("{\"hub\":\"H07\",\"pad\":\"" + "p".repeat(2_000_000) + "\"}").getBytes(StandardCharsets.UTF_8);
    assertNull(d.decode(b, 0, b.length, r), d.lastDetail());
    assertEquals("H07", r.text(hub));
    assertTrue(r.textChars(hub).length <= 64, "buffer of " + r.textChars(hub).length + " chars for a 3-char text");
    String longer = "\u00e9".repeat(300) + "z".repeat(700);
    byte[] c = ("{\"hub\":\"" + longer + "\"}").getBytes(StandardCharsets.UTF_8);
    assertNull(d.decode(c, 0, c.length, r), d.lastDetail());
    assertEquals(longer, r.text(hub));
    assertTrue(r.textChars(hub).length < 4096, "buffer of " + r.textChars(hub).length + " chars for a 1000-char text");
  }
}
