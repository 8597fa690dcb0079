package dev.runnel.core.record;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.LinkedHashMap;
import java.util.Map;
import org.junit.jupiter.api.Test;

/**
 * The holes an adversarial probe found in decoding (issue 14, items 3, 6 and 7): epoch
 * milliseconds under the default limits, seconds and milliseconds mistaken for each other,
 * duplicate fields, and texts that are not Unicode. Every case goes through {@link
 * JsonRecordDecoder#decode} (fast path first) and through the Jackson path alone, which must agree.
 */
class DecoderHolesTest {

  /** 2026-12-05T00:00:00Z (java.time: Instant.parse). */
  private static final long NOW_MILLIS = Instant.parse("2026-12-05T00:00:00Z").toEpochMilli();

  private static RecordSchema schema(FieldType timeType) {
    Map<String, FieldType> m = new LinkedHashMap<>();
    m.put("ts", timeType);
    m.put("hub", FieldType.TEXT);
    m.put("sessions", FieldType.NUMBER);
    return new RecordSchema(m);
  }

  /** Decodes with both paths, asserts they agree, returns the outcome; the detail is in {@code detail[0]}. */
  private static RejectReason both(JsonRecordDecoder d, RecordSchema s, String json, String[] detail) {
    byte[] b = json.getBytes(StandardCharsets.UTF_8);
    EventRecord a = new EventRecord(s);
    EventRecord r = new EventRecord(s);
    RejectReason fast = d.decode(b, 0, b.length, a);
    String fastDetail = d.lastDetail();
    RejectReason ref = d.decodeWithJackson(b, 0, b.length, r);
    assertEquals(ref, fast, () -> "outcome of " + json + ": " + fastDetail);
    assertEquals(d.lastDetail(), fastDetail, () -> "detail of " + json);
    detail[0] = fastDetail;
    return fast;
  }

  private static JsonRecordDecoder epoch(RecordSchema s, TimeFormat f) {
    return new JsonRecordDecoder(s, RecordLimits.DEFAULTS, "ts", f);
  }

  @Test void epochMillisOfToday_areAcceptedUnderTheDefaultLimits() {
    String[] detail = new String[1];
    for (FieldType type : new FieldType[] {FieldType.NUMBER, FieldType.TIME}) {
      RecordSchema s = schema(type);
      JsonRecordDecoder d = epoch(s, TimeFormat.EPOCH_MILLIS);
      assertTrue(NOW_MILLIS > RecordLimits.DEFAULTS.maxAbsValue(), "today's epoch millis exceed max_abs_value");
      assertNull(both(d, s, "{\"ts\":" + NOW_MILLIS + ",\"sessions\":3}", detail), detail[0]);
      if (type == FieldType.TIME) assertNull(both(d, s, "{\"ts\":\"" + NOW_MILLIS + "\",\"sessions\":3}", detail), detail[0]);
      assertNull(both(d, s, "{\"ts\":" + NOW_MILLIS + ".0,\"sessions\":3}", detail), detail[0]);
      // max_abs_value still bounds the other numbers
      assertEquals(RejectReason.OUT_OF_RANGE, both(d, s, "{\"ts\":" + NOW_MILLIS + ",\"sessions\":" + NOW_MILLIS + "}", detail));
    }
  }

  @Test void secondsReadAsMillis_areWrongTimeUnitNamingTheKey() {
    String[] detail = new String[1];
    for (FieldType type : new FieldType[] {FieldType.NUMBER, FieldType.TIME}) {
      RecordSchema s = schema(type);
      JsonRecordDecoder d = epoch(s, TimeFormat.EPOCH_MILLIS);
      long seconds = NOW_MILLIS / 1000;
      for (String v : new String[] {Long.toString(seconds), type == FieldType.TIME ? "\"" + seconds + "\"" : "0.0", seconds + ".5", "0", "94694399999"}) {
        assertEquals(RejectReason.WRONG_TIME_UNIT, both(d, s, "{\"ts\":" + v + "}", detail), v);
        assertTrue(detail[0].contains("input.event_time.format") && detail[0].contains("epoch_seconds")
            && detail[0].startsWith("field ts:"), detail[0]);
      }
      // 1973-01-01T00:00:00Z (java.time) is the first epoch-millis time taken as such
      long from = Instant.parse("1973-01-01T00:00:00Z").toEpochMilli();
      assertEquals(from, EventTimes.EPOCH_MILLIS_PLAUSIBLE_FROM);
      assertNull(both(d, s, "{\"ts\":" + from + "}", detail), detail[0]);
      // before 1970 it is simply outside the years
      assertEquals(RejectReason.ABSURD_TIME, both(d, s, "{\"ts\":-1}", detail));
    }
  }

  @Test void millisReadAsSeconds_areWrongTimeUnitNamingTheKey() {
    String[] detail = new String[1];
    for (FieldType type : new FieldType[] {FieldType.NUMBER, FieldType.TIME}) {
      RecordSchema s = schema(type);
      JsonRecordDecoder d = epoch(s, TimeFormat.EPOCH_SECONDS);
      assertNull(both(d, s, "{\"ts\":" + NOW_MILLIS / 1000 + "}", detail), detail[0]);
      for (String v : new String[] {Long.toString(NOW_MILLIS), type == FieldType.TIME ? "\"" + NOW_MILLIS + "\"" : "1.7e12", "94694400000"}) {
        assertEquals(RejectReason.WRONG_TIME_UNIT, both(d, s, "{\"ts\":" + v + "}", detail), v);
        assertTrue(detail[0].contains("input.event_time.format") && detail[0].contains("epoch_millis"), detail[0]);
      }
      // after max_year in either unit: absurd, not a unit mix-up (1e13 s; as millis the year 2286)
      assertEquals(RejectReason.ABSURD_TIME, both(d, s, "{\"ts\":10000000000000}", detail));
      // past what an epoch number may hold: not a time
      assertEquals(RejectReason.BAD_TIME, both(d, s, "{\"ts\":1e14}", detail));
      // 2201-01-01T00:00:00Z (java.time) as seconds: past max_year 2200, and as millis in 1970
      long past = Instant.parse("2201-01-01T00:00:00Z").getEpochSecond();
      assertEquals(RejectReason.ABSURD_TIME, both(d, s, "{\"ts\":" + past + "}", detail));
    }
  }

  @Test void isoAndEpochTimes_shareOneRangeOfYears() {
    String[] detail = new String[1];
    RecordSchema iso = schema(FieldType.TIME);
    JsonRecordDecoder di = new JsonRecordDecoder(iso, RecordLimits.DEFAULTS, "ts", TimeFormat.ISO8601);
    RecordSchema ep = schema(FieldType.NUMBER);
    JsonRecordDecoder dm = epoch(ep, TimeFormat.EPOCH_MILLIS);
    String[][] cases = {
      {"2200-12-31T23:59:59.999Z", null}, {"2201-01-01T00:00:00Z", "absurd_time"},
      {"1973-01-01T00:00:00Z", null}, {"2026-12-05T10:00:00Z", null},
    };
    for (String[] c : cases) {
      long ms = Instant.parse(c[0]).toEpochMilli(); // java.time
      RejectReason a = both(di, iso, "{\"ts\":\"" + c[0] + "\"}", detail);
      RejectReason b = both(dm, ep, "{\"ts\":" + ms + "}", detail);
      assertEquals(c[1], a == null ? null : a.id(), c[0]);
      assertEquals(c[1], b == null ? null : b.id(), c[0] + " as epoch millis");
    }
  }

  @Test void duplicateDeclaredFields_areRejectedNamingTheField() {
    String[] detail = new String[1];
    RecordSchema s = schema(FieldType.TIME);
    JsonRecordDecoder d = new JsonRecordDecoder(s, RecordLimits.DEFAULTS, "ts", TimeFormat.ISO8601);
    String t = "\"ts\":\"2026-12-05T10:00:00Z\"";
    String[] dup = {
      "{" + t + ",\"sessions\":1,\"sessions\":900}",
      "{" + t + ",\"sessions\":1,\"sessions\":null}",
      "{" + t + ",\"sessions\":null,\"sessions\":1}",
      "{" + t + ",\"sessions\":1,\"hub\":\"a\",\"x\":2,\"sessions\":1}",
      "{" + t + ",\"hub\":\"a\",\"h\\u0075b\":\"b\"}",
    };
    for (String json : dup) {
      assertEquals(RejectReason.DUPLICATE_FIELD, both(d, s, json, detail), json);
      assertTrue(detail[0].startsWith("field sessions ") || detail[0].startsWith("field hub "), detail[0]);
      assertTrue(detail[0].contains("more than once"), detail[0]);
    }
    assertEquals(RejectReason.DUPLICATE_FIELD, both(d, s, "{" + t + "," + t + "}", detail));
    // repeated undeclared names are skipped like any undeclared field
    assertNull(both(d, s, "{" + t + ",\"note\":1,\"note\":2,\"sessions\":3}", detail), detail[0]);
    // the first problem met decides: a bad first copy is that copy's problem
    assertEquals(RejectReason.WRONG_TYPE, both(d, s, "{" + t + ",\"sessions\":\"x\",\"sessions\":1}", detail));
  }

  @Test void textsWithUnpairedSurrogates_areNotUnicode() {
    String[] detail = new String[1];
    RecordSchema s = schema(FieldType.TIME);
    JsonRecordDecoder d = new JsonRecordDecoder(s, RecordLimits.DEFAULTS, "ts", TimeFormat.ISO8601);
    String t = "\"ts\":\"2026-12-05T10:00:00Z\",";
    String[][] lone = {
      {"\\ud800", "U+D800 at char 0"}, {"QM-\\uD800", "U+D800 at char 3"}, {"\\udc00x", "U+DC00 at char 0"},
      {"a\\ud83d", "U+D83D at char 1"}, {"\\ude00\\ud83d", "U+DE00 at char 0"}, {"\\ud83d\\ud83d\\ude00", "U+D83D at char 0"},
      {"\\ud83dx\\ude00", "U+D83D at char 0"}, {"\\ud83d\\n", "U+D83D at char 0"},
    };
    for (String[] c : lone) {
      String json = "{" + t + "\"hub\":\"" + c[0] + "\"}";
      assertEquals(RejectReason.NOT_UNICODE, both(d, s, json, detail), json);
      assertTrue(detail[0].startsWith("field hub: ") && detail[0].contains(c[1]), detail[0]);
    }
    // pairs, escaped or as UTF-8, are text; so is U+FFFF and NUL
    for (String ok : new String[] {"\\ud83d\\ude00", "\\uD83D\\uDE00x", "\ud83d\ude00", "a\\ud83d\\ude00\\ud83d\\ude00", "\\uffff", "\\u0000"}) {
      assertNull(both(d, s, "{" + t + "\"hub\":\"" + ok + "\"}", detail), detail[0]);
    }
    EventRecord r = new EventRecord(s);
    byte[] b = ("{" + t + "\"hub\":\"\\ud83d\\ude00\"}").getBytes(StandardCharsets.UTF_8);
    assertNull(d.decode(b, 0, b.length, r));
    assertEquals("\ud83d\ude00", r.text(s.slot("hub")));
    // an undeclared field is skipped whatever it holds
    assertNull(both(d, s, "{" + t + "\"note\":\"\\ud800\",\"hub\":\"a\"}", detail), detail[0]);
    // a surrogate encoded as UTF-8 bytes (ED A0 80) is not UTF-8 at all: Jackson refuses the bytes
    byte[] raw = ("{" + t + "\"hub\":\"#\"}").getBytes(StandardCharsets.UTF_8);
    byte[] enc = new byte[raw.length + 2];
    int k = 0;
    for (byte x : raw) {
      if (x == '#') {
        enc[k++] = (byte) 0xED;
        enc[k++] = (byte) 0xA0;
        enc[k++] = (byte) 0x80;
      } else {
        enc[k++] = x;
      }
    }
    RejectReason encoded = d.decode(enc, 0, enc.length, r);
    assertEquals(RejectReason.MALFORMED_JSON, encoded, d.lastDetail());
    assertEquals(encoded, d.decodeWithJackson(enc, 0, enc.length, r));
  }
}
