package dev.runnel.core.record;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayOutputStream;
import java.nio.charset.StandardCharsets;
import java.time.OffsetDateTime;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;

/**
 * The strict reader reads by itself every record of the JSON subset its class doc names
 * (RFC 8259's grammar; whitespace, escapes, well-formed UTF-8 at each edge of Unicode Table 3-7,
 * numbers, times of the fixed shape, skipped values of every kind), and leaves the same fields as
 * the decoder's Jackson path (the reference, compared field by field through
 * {@link DecoderAgreementTest.Pair}). A reader that sends such a record to Jackson instead gives
 * the same outcome slower; this test fails on it, so a check that became too strict shows. Values
 * are also checked against hand-worked chars and {@link OffsetDateTime#parse} (java.time).
 */
class StrictReaderSubsetTest {

  private static final String LONG = "a_rather_long_field_name_of_40_bytes_xyz";

  private static RecordSchema schema() {
    Map<String, FieldType> m = new LinkedHashMap<>();
    m.put("kind", FieldType.TEXT);
    m.put("x", FieldType.NUMBER);
    m.put("at", FieldType.TIME);
    m.put("ok", FieldType.FLAG);
    m.put("temperature", FieldType.NUMBER);
    m.put(LONG, FieldType.NUMBER);
    m.put("h\u00e9", FieldType.TEXT);
    return new RecordSchema(m);
  }

  private static final RecordLimits LIMITS = new RecordLimits(16, 4096, 1.0e6, 1970, 2200);

  private final RecordSchema schema = schema();
  private final DecoderAgreementTest.Pair pair = new DecoderAgreementTest.Pair(schema, LIMITS, "at", TimeFormat.ISO8601);
  private final StrictJsonReader reader = StrictJsonReader.create(schema, LIMITS, schema.slot("at"), TimeFormat.ISO8601);
  private final EventRecord out = new EventRecord(schema);

  /** Asserts that the reader reads {@code b} by itself, with Jackson's fields; leaves them in {@link #out}. */
  private void readsItself(byte[] b) {
    String what = DecoderAgreementTest.show(b, 0, b.length);
    assertNull(pair.check(b), () -> "decoded: " + what);
    assertTrue(reader.read(b, 0, b.length, out), () -> "read by the strict reader: " + what);
    DecoderAgreementTest.assertSameFields(schema, pair.b, out, what);
  }

  private void readsItself(String json) { readsItself(json.getBytes(StandardCharsets.UTF_8)); }

  private String text(String json) {
    readsItself(json);
    return out.text(schema.slot("kind"));
  }

  @Test void whitespaceOfEachKindAnywhereItMayStand() {
    for (String ws : new String[] {" ", "\t", "\n", "\r", " \r\n\t "}) {
      String w = ws;
      readsItself(w + "{" + w + "}" + w);
      readsItself(w + "{" + w + "\"x\"" + w + ":" + w + "1" + w + "," + w + "\"kind\"" + w + ":" + w + "\"a\"" + w + "}" + w);
      readsItself("{\"u\":" + w + "[" + w + "1" + w + "," + w + "{" + w + "\"k\"" + w + ":" + w + "[" + w + "]" + w + "}" + w + "]" + w
          + ",\"x\":2}");
      readsItself("{\"u\":{" + w + "}" + w + ",\"v\":[" + w + "]" + w + ",\"ok\":true" + w + "}");
    }
    readsItself("{}");
    readsItself("{\"ok\":false}");
    assertFalse(out.flag(schema.slot("ok")));
    readsItself("{\"ok\":true}");
    assertTrue(out.flag(schema.slot("ok")));
  }

  @Test void escapesDecodeToTheirChars() {
    // RFC 8259 section 7: the two-char escapes and \\uXXXX in either case, a pair for U+1F600
    assertEquals("\"\\/\b\f\n\r\t", text("{\"kind\":\"\\\"\\\\\\/\\b\\f\\n\\r\\t\"}"));
    assertEquals("A\u00e9\uffff\u0000", text("{\"kind\":\"\\u0041\\u00E9\\uFFFF\\u0000\"}"));
    assertEquals("\u00e9\u00e9", text("{\"kind\":\"\\u00e9\\u00E9\"}"));
    assertEquals("\ud83d\ude00", text("{\"kind\":\"\\ud83d\\ude00\"}"));
    assertEquals("\udbff\udfff", text("{\"kind\":\"\\uDBFF\\uDFFF\"}"));
    assertEquals("a\ud800\udc00b", text("{\"kind\":\"a\\uD800\\uDC00b\"}"));
    assertEquals("\u00af\u09af\uabcd\ufedc", text("{\"kind\":\"\\u00af\\u09AF\\uAbCd\\ufEdC\"}"));
    assertEquals("", text("{\"kind\":\"\"}"));
    // escapes in skipped strings and names of skipped fields
    readsItself("{\"u\":\"\\\"\\\\\\/\\b\\f\\n\\r\\t\\u0041\\ud800\\uDFFF\",\"v\":[\"\\u00e9\"],\"x\":1}");
  }

  /** Each UTF-8 form at the edges of Unicode Table 3-7, in a declared text, a skipped text and a name. */
  @Test void wellFormedUtf8AtEachEdge() {
    int[][] seqs = {
      {0x7f}, {0xc2, 0x80}, {0xdf, 0xbf}, {0xe0, 0xa0, 0x80}, {0xe0, 0xbf, 0xbf}, {0xe1, 0x80, 0x80}, {0xec, 0xbf, 0xbf},
      {0xed, 0x80, 0x80}, {0xed, 0x9f, 0xbf}, {0xee, 0x80, 0x80}, {0xef, 0xbf, 0xbf}, {0xf0, 0x90, 0x80, 0x80},
      {0xf0, 0xbf, 0xbf, 0xbf}, {0xf1, 0x80, 0x80, 0x80}, {0xf3, 0xbf, 0xbf, 0xbf}, {0xf4, 0x80, 0x80, 0x80}, {0xf4, 0x8f, 0xbf, 0xbf},
    };
    for (int[] q : seqs) {
      byte[] seq = new byte[q.length];
      for (int k = 0; k < q.length; k++) seq[k] = (byte) q[k];
      String expected = new String(seq, StandardCharsets.UTF_8); // the JDK's decoder as reference
      for (String where : new String[] {"{\"kind\":\"a#b\"}", "{\"kind\":\"#\"}", "{\"u\":\"a#\",\"x\":1}", "{\"#\":1,\"x\":1}",
          "{\"u\":[\"#\",{\"#\":\"#\"}],\"x\":1}"}) {
        ByteArrayOutputStream o = new ByteArrayOutputStream();
        for (byte c : where.getBytes(StandardCharsets.US_ASCII)) {
          if (c == '#') o.write(seq, 0, seq.length); else o.write(c);
        }
        readsItself(o.toByteArray());
        if (where.startsWith("{\"kind\":\"a")) assertEquals("a" + expected + "b", out.text(schema.slot("kind")));
        if (where.startsWith("{\"kind\":\"#")) assertEquals(expected, out.text(schema.slot("kind")));
      }
    }
    assertEquals("\u00e9t\u00e9", text("{\"h\u00e9\":\"x\",\"kind\":\"\u00e9t\u00e9\"}"));
    assertEquals("x", out.text(schema.slot("h\u00e9")));
  }

  @Test void textsUpToTheLimitInEveryForm() {
    // max_text_length is 16 chars (UTF-16 units): each form that ends exactly on it
    String[] sixteen = {"abcdefghijklmnop", "abcdefghijklmn\u00e9\u00e9", "abcdefghijklmn\ud83d\ude00", "\ud83d\ude00".repeat(8),
      "\u65e5".repeat(16), "abcdefghijklmno\n"};
    for (String t : sixteen) {
      assertEquals(16, t.length());
      String json = t.equals("abcdefghijklmno\n") ? "abcdefghijklmno\\n" : t;
      assertEquals(t, text("{\"kind\":\"" + json + "\"}"));
      assertEquals(t, text("{\"kind\":\"" + json + "\",\"x\":1}"));
    }
    assertEquals("abcdefghijklmn\ud83d\ude00", text("{\"kind\":\"abcdefghijklmn\\ud83d\\ude00\"}"));
    assertEquals("abcdefghijklmno\u00e9", text("{\"kind\":\"abcdefghijklmno\\u00e9\"}"));
    // texts that grow the slot's buffer more than once, read again into it
    for (int n = 1; n <= 16; n++) assertEquals("q".repeat(n), text("{\"kind\":\"" + "q".repeat(n) + "\"}"));
  }

  @Test void numbersOfTheJsonGrammar() {
    // within max_abs_value (1e6): at most 18 digits forming at most 2^53 (read as scanned), more (or an
    // exponent: the general way), up to the limit itself
    String[] numbers = {"0", "-0", "0.0", "-0.5", "7", "1e5", "1E5", "1e+5", "1e-5", "1.5E-3", "0e0", "0.123456789012345678",
      "0.9007199254740993", "0.9007199254740992", "9007.199254740993", "123456.789012345678", "0.1234567890123456789012",
      "0.00000000000000000000001", "0.0000000000000000000001", "1000000", "-1000000", "999999.9999999999", "1e6", "-1E+6",
      "1000000.000000000000", "-0.000000000000000000000000000000000000000000000000000000000000000000000000000000000000000000001"};
    int x = schema.slot("x");
    for (String n : numbers) {
      readsItself("{\"x\":" + n + "}");
      // Double.parseDouble (the JDK's correctly rounded parser) as reference
      assertEquals(Double.doubleToRawLongBits(Double.parseDouble(n)), Double.doubleToRawLongBits(out.number(x)), n);
      readsItself("{\"x\":" + n + ",\"ok\":true}");
      readsItself("{\"u\":" + n + ",\"x\":1}");
      readsItself("{\"u\":[" + n + "," + n + "],\"x\":1}");
      readsItself("{\"" + LONG + "\":" + n + " }");
      assertEquals(Double.parseDouble(n), out.number(schema.slot(LONG)), n);
    }
  }

  @Test void skippedNumbersHaveNoLimitButTheirLength() {
    String hundred = "9".repeat(StrictJsonReader.MAX_NUMBER_CHARS);
    readsItself("{\"u\":[123456789012345678901234567890,-1e300,1E-300,9007199254740993," + hundred + "],\"x\":1}");
    readsItself("{\"u\":-" + hundred.substring(1) + ",\"x\":1}");
  }

  @Test void timesOfTheFixedShape() {
    String[] times = {"2026-03-29T02:30:00+02:00", "2026-03-29t02:30:00z", "2026-03-29T02:30:00Z", "2026-03-29T02:30:00.5Z",
      "2026-03-29T02:30:00,25+01:00", "2026-03-29T02:30:00.123456789-18:00", "2026-03-29T02:30:00+18:00", "2026-03-29T02:30:00-00:00",
      "2024-02-29T23:59:59.999Z", "1970-01-01T00:00:00Z", "2200-12-31T23:59:59.999Z", "2026-12-31T23:59:59-05:30",
      "2026-04-30T00:00:00Z", "2026-01-31T09:09:09.09+09:09", "1999-12-31T19:00:00-05:00"};
    int at = schema.slot("at");
    for (String t : times) {
      // java.time reads the same instant (',' as the decimal sign: ISO 8601 allows it; java.time wants '.')
      long expected = OffsetDateTime.parse(t.replace(',', '.').toUpperCase(java.util.Locale.ROOT)).toInstant().toEpochMilli();
      for (int k = 0; k < 2; k++) { // twice: the second read finds the text remembered
        readsItself("{\"at\":\"" + t + "\",\"x\":1}");
        assertEquals(expected, out.timeMillis(at), t);
        assertEquals(expected, out.eventTimeMillis(), t);
      }
      readsItself("{\"x\":1,\"at\":\"" + t + "\"}");
      assertEquals(expected, out.timeMillis(at), t);
    }
  }

  @Test void skippedValuesOfEveryKind() {
    String[] values = {"true", "false", "null", "\"\"", "\"s\"", "[]", "{}", "[true,false,null]", "{\"a\":{\"b\":[1,\"c\",{}]}}",
      "-0.5e-3", "[[[[]]]]", "\"\\u00e9\\n\"", "[\"a\",[\"b\"]]"};
    for (String v : values) {
      readsItself("{\"u\":" + v + "}");
      readsItself("{\"u\":" + v + ",\"x\":3}");
      assertEquals(3.0, out.number(schema.slot("x")), v);
      readsItself("{\"x\":3,\"u\":" + v + "}");
      readsItself("{\"u\":[" + v + "," + v + "],\"v\":{\"w\":" + v + "},\"x\":3}");
    }
    // nesting up to the reader's limit, counting the record itself
    int depth = StrictJsonReader.MAX_DEPTH - 1;
    readsItself("{\"u\":" + "[".repeat(depth) + "]".repeat(depth) + ",\"x\":1}");
    readsItself("{\"u\":" + "{\"k\":".repeat(depth) + "1" + "}".repeat(depth) + ",\"x\":1}");
    // names up to the reader's limit, and a skipped value whose name is a declared name's neighbour
    readsItself("{\"" + "n".repeat(StrictJsonReader.MAX_NAME_BYTES - 1) + "\":1,\"x\":1}");
    readsItself("{\"kin\":1,\"kinds\":2,\"x \":3,\"" + LONG + "z\":4,\"temperatur\":5,\"temperaturE\":6}");
  }

  @Test void nullsOfEveryTypeAreAbsent() {
    readsItself("{\"kind\":\"a\",\"x\":1,\"at\":\"2026-03-29T02:30:00Z\",\"ok\":true}");
    readsItself("{\"kind\":null,\"x\":null,\"at\":null,\"ok\":null,\"h\u00e9\":null}");
    for (int s = 0; s < schema.size(); s++) assertFalse(out.present(s), schema.name(s));
    assertFalse(out.hasEventTime());
  }

  @Test void declaredNamesInAnyOrder_andEveryLength() {
    List<String> fields = List.of("\"kind\":\"k\"", "\"x\":1", "\"at\":\"2026-03-29T02:30:00Z\"", "\"ok\":true", "\"temperature\":-2.5",
        "\"" + LONG + "\":4", "\"h\u00e9\":\"e\"");
    for (int shift = 0; shift < fields.size(); shift++) {
      StringBuilder b = new StringBuilder("{");
      for (int k = 0; k < fields.size(); k++) {
        if (k > 0) b.append(',');
        b.append(fields.get((k + shift) % fields.size()));
      }
      for (int rep = 0; rep < 3; rep++) {
        readsItself(b + "}");
        assertEquals(-2.5, out.number(schema.slot("temperature")));
        assertEquals(4.0, out.number(schema.slot(LONG)));
        assertEquals("k", out.text(schema.slot("kind")));
        assertEquals("e", out.text(schema.slot("h\u00e9")));
      }
    }
    // reversed, then a record that skips the one expected next
    readsItself("{\"" + LONG + "\":4,\"temperature\":1,\"ok\":false,\"x\":2}");
    readsItself("{\"temperature\":1,\"x\":2}");
    assertEquals(2.0, out.number(schema.slot("x")));
  }

  // ---------------------------------------------------------------- what it must leave to Jackson

  /**
   * A declared name holding a quote, a backslash or a control char is never matched by its raw
   * bytes: in JSON such a name is written escaped (RFC 8259 section 7), and the same bytes
   * unescaped are either not JSON or another name. Slot 0 is the one the reader guesses first.
   */
  @Test void namesThatJsonMustEscape_areNeverMatchedByTheirRawBytes() {
    String[][] cases = {
      // declared name (slot 0), records in which its raw bytes appear
      {"a\"b", "{\"a\"b\":1}", "{\"x\":1,\"a\"b\":2}", "{\"a\\\"b\":3}"},
      {"c\\b", "{\"c\\b\":1}", "{\"x\":1,\"c\\b\":2}", "{\"c\\\\b\":3}"},
      {"t\tab", "{\"t\tab\":1}", "{\"x\":1,\"t\tab\":2}", "{\"t\\tab\":3}"},
    };
    for (String[] c : cases) {
      Map<String, FieldType> m = new LinkedHashMap<>();
      m.put(c[0], FieldType.NUMBER);
      m.put("x", FieldType.NUMBER);
      RecordSchema s = new RecordSchema(m);
      DecoderAgreementTest.Pair p = new DecoderAgreementTest.Pair(s, LIMITS, null, TimeFormat.ISO8601);
      for (int k = 1; k < c.length; k++) {
        p.check(c[k].getBytes(StandardCharsets.UTF_8));
        p.check("{\"x\":1}".getBytes(StandardCharsets.UTF_8));
      }
      // the escaped form is the declared name (Jackson reads it; the reader leaves escaped names to it)
      EventRecord r = new EventRecord(s);
      byte[] escaped = c[3].getBytes(StandardCharsets.UTF_8);
      assertNull(p.fast.decode(escaped, 0, escaped.length, r), p.fast.lastDetail());
      assertEquals(3.0, r.number(0), c[3]);
    }
  }

  @Test void textsOnePastTheLimit_areLeftToJackson() {
    // 15 chars and a pair (escaped or as UTF-8) make 17 UTF-16 units: one past max_text_length 16
    for (String t : new String[] {"abcdefghijklmno\\ud83d\\ude00", "abcdefghijklmno\ud83d\ude00", "abcdefghijklmnop\\u00e9",
        "abcdefghijklmnopq", "abcdefghijklmnop\u00e9", "abcdefghijklmnop\\n"}) {
      // first a long text, so the slot's buffer is larger than the limit
      readsItself("{\"kind\":\"" + "q".repeat(16) + "\"}");
      byte[] b = ("{\"kind\":\"" + t + "\"}").getBytes(StandardCharsets.UTF_8);
      assertEquals(RejectReason.TOO_LONG, pair.check(b), t);
      assertFalse(reader.read(b, 0, b.length, out), t);
    }
  }

  /**
   * Only {@code buf[off .. off+len)} is read (the decoder's javadoc): here the bytes before the
   * record, read as JSON from the buffer's start, would close it as a valid object, so a reader
   * that fell back to position 0 after a refusal would read a record that Jackson rejects.
   */
  @Test void onlyTheRecordsBytesAreRead() {
    String before = ",\"u\":[";
    String[] records = {"{\"ok\":\"x\"}", "{\"ok\":1}", "{\"at\":\"2026-13-01T00:00:00Z\"}", "{\"at\":\"1969-12-31T23:59:59Z\"}",
      "{\"at\":1}", "{\"kind\":1}", "{\"kind\":\"abcdefghijklmnopq\"}", "{\"x\":\"1\"}", "{\"x\":1e999}", "{\"x\":2e6}",
      "{\"x\":1,\"x\":2}", "{\"y\":[1],\"ok\":[]}", "{\"kind\":\"\\ud800\"}", "{\"kind\":\"\\udc00\\ud800\"}",
      "{\"at\":\"" + "2".repeat(JsonRecordDecoder.MAX_TIME_CHARS + 1) + "\"}", "{\"kind\":\"abcdefghijklmno\ud83d\ude00\"}",
      "{\"kind\":\"\\ud83d\\u0041\"}"};
    for (String rec : records) {
      byte[] b = (before + rec + "]}").getBytes(StandardCharsets.UTF_8);
      int off = before.length();
      RejectReason r = pair.check(b, off, b.length - off);
      assertTrue(r != null, rec);
      assertFalse(reader.read(b, off, b.length - off, out), rec);
    }
  }

  /**
   * A declared name that is not well-formed UTF-16 has no UTF-8 bytes to compare ({@code
   * String.getBytes} writes '?' for the lone surrogate): there is no strict reader for the
   * schema, and a record whose name is those replaced bytes is another name (Jackson skips it).
   */
  @Test void aDeclaredNameWithALoneSurrogate_isNeverMatchedByBytes() {
    for (String name : new String[] {"\ud800x", "x\udc00", "ab\ud83d"}) {
      Map<String, FieldType> m = new LinkedHashMap<>();
      m.put(name, FieldType.NUMBER);
      m.put("y", FieldType.NUMBER);
      RecordSchema s = new RecordSchema(m);
      assertNull(StrictJsonReader.create(s, LIMITS, -1, TimeFormat.ISO8601), name);
      JsonRecordDecoder d = new JsonRecordDecoder(s, LIMITS);
      EventRecord r = new EventRecord(s);
      String replaced = new String(name.getBytes(StandardCharsets.UTF_8), StandardCharsets.UTF_8);
      byte[] b = ("{\"" + replaced + "\":1,\"y\":2}").getBytes(StandardCharsets.UTF_8);
      assertNull(d.decode(b, 0, b.length, r), d.lastDetail());
      assertFalse(r.present(0), replaced);
      assertEquals(2.0, r.number(1));
    }
  }

  /** Every prefix of records with nested skipped values, each in an array of exactly its length. */
  @Test void everyPrefixOfNestedRecords_inAnArrayOfItsLength() {
    String[] records = {"{\"u\":{\"a\":[1,{\"b\":\"c\"},[]],\"d\":{}},\"x\":1}", "{\"u\":[ { } , [ ] , \"\\u00e9\" ],\"kind\":\"k\"}",
      "{\"x\":-0.5e-3,\"u\":[true,false,null],\"at\":\"2026-03-29T02:30:00Z\"}", "{\"kind\":\"a\\nb\\u00e9\",\"ok\":true}"};
    for (String rec : records) {
      byte[] whole = rec.getBytes(StandardCharsets.UTF_8);
      for (int k = 0; k <= whole.length; k++) {
        byte[] b = java.util.Arrays.copyOf(whole, k);
        RejectReason r = pair.check(b);
        if (k < whole.length) assertEquals(RejectReason.MALFORMED_JSON, r, new String(b, StandardCharsets.UTF_8));
      }
      readsItself(whole);
    }
  }
}
