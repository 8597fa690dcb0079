package dev.runnel.core.record;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The decoder's allocation-free path agrees with Jackson: for every input, {@link
 * JsonRecordDecoder#decode} gives the same outcome, the same detail and the same fields (numbers
 * bit for bit, texts char for char) as {@link JsonRecordDecoder#decodeWithJackson}, a new Jackson
 * parser per record (the decoder as it was before the fast path; the reference here). Checked on
 * the whole recorded demo sample, on hand-picked adversarial records, on every prefix of sample
 * lines, and on seeded random mutations and random records. One decoder and one record are reused
 * across all inputs, as in the pipeline, so state left by a bad record would show up.
 */
class DecoderAgreementTest {

  static final Path SAMPLE = Path.of("..", "demo-data", "samples", "quillmarsh-small.jsonl");

  static RecordSchema demoSchema() {
    Map<String, FieldType> m = new LinkedHashMap<>();
    m.put("kind", FieldType.TEXT);
    m.put("hub", FieldType.TEXT);
    m.put("observed_at", FieldType.TIME);
    m.put("weather", FieldType.TEXT);
    m.put("temperature_c", FieldType.NUMBER);
    m.put("price_per_kwh", FieldType.NUMBER);
    m.put("sessions", FieldType.NUMBER);
    m.put("holiday", FieldType.FLAG);
    m.put("h\u00e9", FieldType.TEXT); // a declared name that is not ASCII
    return new RecordSchema(m);
  }

  static List<byte[]> sampleLines() throws IOException {
    List<byte[]> out = new ArrayList<>();
    for (String l : Files.readAllLines(SAMPLE, StandardCharsets.UTF_8)) {
      if (!l.isBlank()) out.add(l.getBytes(StandardCharsets.UTF_8));
    }
    return out;
  }

  /** Compares the two paths on the inputs it is given; counts how many were decoded. */
  static final class Pair {
    final RecordSchema schema;
    final JsonRecordDecoder fast;
    final JsonRecordDecoder reference;
    final EventRecord a;
    final EventRecord b;
    final RecordLimits limits;
    final StrictJsonReader strict;
    final EventRecord c;
    int decoded;
    int rejected;
    /** Decoded records that the fast path read by itself (the rest went to Jackson). */
    int fastDecoded;

    Pair(RecordSchema schema, RecordLimits limits, String eventTime, TimeFormat format) {
      this.schema = schema;
      fast = new JsonRecordDecoder(schema, limits, eventTime, format);
      reference = new JsonRecordDecoder(schema, limits, eventTime, format);
      a = new EventRecord(schema);
      b = new EventRecord(schema);
      c = new EventRecord(schema);
      this.limits = limits;
      strict = StrictJsonReader.create(schema, limits, eventTime == null ? -1 : schema.slot(eventTime), format);
    }

    RejectReason check(byte[] buf, int off, int len) {
      RejectReason ra = fast.decode(buf, off, len, a);
      String da = fast.lastDetail();
      RejectReason rb = reference.decodeWithJackson(buf, off, len, b);
      String db = reference.lastDetail();
      String what = show(buf, off, len);
      assertEquals(rb, ra, () -> "outcome of " + what + " (Jackson: " + db + ")");
      assertEquals(db, da, () -> "detail of " + what);
      boolean fastRead = len <= limits.maxRecordBytes() && strict.read(buf, off, len, c);
      if (ra == null) {
        decoded++;
        assertSameFields(schema, b, a, what);
        if (fastRead) {
          fastDecoded++;
          assertSameFields(schema, b, c, what);
        }
      } else {
        rejected++;
        assertTrue(!fastRead, () -> "the fast path read a record that Jackson rejects: " + what);
      }
      return ra;
    }

    RejectReason check(byte[] buf) { return check(buf, 0, buf.length); }

    RejectReason check(String json) {
      // surrounded by other bytes: the decoder must stay within [off, off+len)
      byte[] body = json.getBytes(StandardCharsets.UTF_8);
      byte[] buf = new byte[body.length + 6];
      buf[0] = '{';
      buf[1] = '"';
      buf[2] = 'x';
      System.arraycopy(body, 0, buf, 3, body.length);
      buf[buf.length - 3] = '"';
      buf[buf.length - 2] = '}';
      buf[buf.length - 1] = '1';
      return check(buf, 3, body.length);
    }
  }

  static void assertSameFields(RecordSchema s, EventRecord expected, EventRecord actual, String what) {
    for (int i = 0; i < s.size(); i++) {
      final int slot = i;
      assertEquals(expected.present(i), actual.present(i), () -> "presence of " + s.name(slot) + " in " + what);
      if (!expected.present(i)) continue;
      switch (s.type(i)) {
        case NUMBER:
          assertEquals(Double.doubleToRawLongBits(expected.number(i)), Double.doubleToRawLongBits(actual.number(i)),
              () -> "bits of " + s.name(slot) + " in " + what + ": " + expected.number(slot) + " vs " + actual.number(slot));
          break;
        case TEXT:
          assertEquals(expected.text(i), actual.text(i), () -> "text of " + s.name(slot) + " in " + what);
          assertEquals(expected.text(i).length(), actual.textLength(i));
          assertEquals(expected.text(i), new String(actual.textChars(i), 0, actual.textLength(i)));
          break;
        case FLAG:
          assertEquals(expected.flag(i), actual.flag(i), () -> "flag " + s.name(slot) + " in " + what);
          break;
        case TIME: default:
          assertEquals(expected.timeMillis(i), actual.timeMillis(i), () -> "time " + s.name(slot) + " in " + what);
          break;
      }
    }
    assertEquals(expected.hasEventTime(), actual.hasEventTime(), () -> "event time presence in " + what);
    assertEquals(expected.eventTimeMillis(), actual.eventTimeMillis(), () -> "event time in " + what);
  }

  static String show(byte[] buf, int off, int len) {
    String s = new String(buf, off, Math.min(len, 200), StandardCharsets.ISO_8859_1);
    StringBuilder b = new StringBuilder("[");
    for (int i = 0; i < s.length(); i++) {
      char c = s.charAt(i);
      if (c < 0x20 || c > 0x7e) b.append(String.format("\\x%02x", (int) c)); else b.append(c);
    }
    return b.append(len > 200 ? "...]" : "]").toString();
  }

  private static final RecordLimits SMALL = new RecordLimits(16, 4096, 1.0e6, 1970, 2200);

  @Test void wholeDemoSample_agreesAndValidLinesTakeTheFastPath() throws IOException {
    List<byte[]> lines = sampleLines();
    assertTrue(lines.size() > 4500, "the sample has " + lines.size() + " lines");
    Pair p = new Pair(demoSchema(), RecordLimits.DEFAULTS, "observed_at", TimeFormat.ISO8601);
    StrictJsonReader strict = StrictJsonReader.create(p.schema, RecordLimits.DEFAULTS, p.schema.slot("observed_at"), TimeFormat.ISO8601);
    EventRecord scratch = new EventRecord(p.schema);
    int fastPath = 0;
    for (byte[] l : lines) {
      RejectReason r = p.check(l);
      if (r == null && strict.read(l, 0, l.length, scratch)) fastPath++;
    }
    // demo-data/samples/quillmarsh-truth.md lists five corrupt lines; four are decode rejects
    // (malformed_json, wrong_type, not_finite, absurd_time), missing_hub is the featurizer's
    assertEquals(4, p.rejected, "rejected lines of the sample");
    assertEquals(p.decoded, fastPath, "every valid sample line is read without Jackson");
  }

  @Test void everyPrefixOfSampleLines_agrees() throws IOException {
    List<byte[]> lines = sampleLines();
    Pair p = new Pair(demoSchema(), RecordLimits.DEFAULTS, "observed_at", TimeFormat.ISO8601);
    for (int k = 0; k < 40; k++) {
      byte[] l = lines.get(k * 97 % lines.size());
      for (int n = 0; n <= l.length; n++) p.check(l, 0, n);
    }
    assertTrue(p.decoded >= 40, "the full lines decode");
  }

  static final String[] ADVERSARIAL = {
    "", " ", "\n", "{", "}", "{}", " {} ", "\r\n{}\r\n\t ", "{}x", "{}{}", "{} {}", "{},", "{}]", "{}}", "{} 1", "{} \"s\"",
    "{}\u0000", "{}\f", "\f{}", "\u00a0{}", "\ufeff{}", "[]", "[1]", "42", "\"s\"", "null", "true", "{\"a\"}", "{\"a\":}",
    "{\"a\":1,}", "{,}", "{\"a\":1 \"b\":2}", "{\"a\" : 1 , \"b\" : [ ] , \"c\" : { } }", "{'a':1}", "{a:1}",
    "{\"hub\":\"H07\"}", "{\"hub\" :\"H07\" }", "{\"hub\":\"a\\u00e9b\"}", "{\"hub\":\"\\\"\\\\\\/\\b\\f\\n\\r\\t\"}",
    "{\"hub\":\"\\u0000\"}", "{\"hub\":\"\\uD83D\\uDE00\"}", "{\"hub\":\"\\uD800\"}", "{\"hub\":\"\\uDC00x\"}", "{\"hub\":\"\\x\"}",
    "{\"hub\":\"\\u12\"}", "{\"hub\":\"\\u12G4\"}", "{\"hub\":\"\\'\"}", "{\"hub\":\"a\tb\"}", "{\"hub\":\"a\u007fb\"}",
    "{\"hub\":\"\u00e9\u65e5\u672c\"}", "{\"hub\":\"\ud83d\ude00\"}", "{\"hub\":\"\ud83d\ude00\ud83d\ude00\ud83d\ude00\ud83d\ude00\"}",
    "{\"hub\":\"abcdefghijklmnop\"}", "{\"hub\":\"abcdefghijklmnopq\"}", "{\"hub\":\"abcdefghijklmn\ud83d\ude00\"}",
    "{\"hub\":\"abcdefghijklmno\ud83d\ude00\"}", "{\"hub\":\"abcdefghijklmno\u00e9\"}", "{\"hub\":\"abcdefghijklmnop\\n\"}",
    "{\"hub\":\"\"}", "{\"hub\":null}", "{\"hub\":\"a\",\"hub\":\"b\"}", "{\"hub\":\"a\",\"hub\":null}", "{\"hub\":7}",
    "{\"hub\":true}", "{\"hub\":[\"a\"]}", "{\"hub\":{\"id\":\"H07\"}}", "{\"h\\u0075b\":\"escaped name\"}", "{\"h\u00e9\":\"x\"}",
    "{\"h\\u00e9\":\"x\"}", "{\"hu\":\"x\",\"hubs\":\"y\",\"\":\"z\"}", "{\"sessions\":0}", "{\"sessions\":-0}",
    "{\"sessions\":-0.0}", "{\"sessions\":0e5}", "{\"sessions\":01}", "{\"sessions\":-01}", "{\"sessions\":1.}",
    "{\"sessions\":.5}", "{\"sessions\":+1}", "{\"sessions\":1e5}", "{\"sessions\":1E+5}", "{\"sessions\":1e-5}",
    "{\"sessions\":1e}", "{\"sessions\":1e+}", "{\"sessions\":-}", "{\"sessions\":--1}", "{\"sessions\":0x10}",
    "{\"sessions\":1.5.2}", "{\"sessions\":1 2}", "{\"sessions\":1_0}", "{\"sessions\":12345678901234567890}",
    "{\"sessions\":0.30000000000000004}", "{\"sessions\":123456.78901234567}", "{\"sessions\":1e400}", "{\"sessions\":-1e400}",
    "{\"sessions\":4.9e-324}", "{\"sessions\":2.2250738585072014E-308}", "{\"sessions\":1e-400}", "{\"sessions\":NaN}",
    "{\"sessions\":Infinity}", "{\"sessions\":-Infinity}", "{\"sessions\":+Infinity}", "{\"sessions\":INF}",
    "{\"sessions\":1000000}", "{\"sessions\":1000000.0000000001}", "{\"sessions\":-1e6}", "{\"sessions\":1000001}",
    "{\"sessions\":\"12\"}", "{\"sessions\":1,\"sessions\":\"x\"}", "{\"sessions\":1,\"sessions\":2.5}", "{\"sessions\":1x}",
    "{\"sessions\":1true}", "{\"sessions\":1\"a\":2}", "{\"sessions\":tru}", "{\"holiday\":true}", "{\"holiday\":false}",
    "{\"holiday\":truex}", "{\"holiday\":True}", "{\"holiday\":\"true\"}", "{\"holiday\":1}", "{\"holiday\":nul}",
    "{\"holiday\":nullx}", "{\"holiday\":null}", "{\"x\":tru}", "{\"x\":falsey}", "{\"x\":nul}", "{\"x\":NaN}",
    "{\"x\":{\"y\":[1,{\"z\":null}],\"w\":\"s\",\"v\":[[],{}]}}", "{\"x\":[1,]}", "{\"x\":[,1]}", "{\"x\":{\"a\":1,}}",
    "{\"x\":{\"a\"}}", "{\"x\":{1:2}}", "{\"x\":[1 2]}", "{\"x\":\"\\q\"}", "{\"x\":\"\u0001\"}", "{\"x\":01}",
    "{\"observed_at\":\"2026-03-29T02:30:00+02:00\"}", "{\"observed_at\":\"2026-03-29T02:30:00.5+02:00\"}",
    "{\"observed_at\":\"2026-03-29T02:30:00.123456789Z\"}", "{\"observed_at\":\"2026-03-29T02:30:00.1234567890Z\"}",
    "{\"observed_at\":\"2026-03-29T02:30:00+0200\"}", "{\"observed_at\":\"2026-03-29T02:30Z\"}", "{\"observed_at\":\"2026-03-29\"}",
    "{\"observed_at\":\"2026\\u002d03-29T02:30:00Z\"}", "{\"observed_at\":\"2026-02-29T00:00:00Z\"}",
    "{\"observed_at\":\"2028-02-29T00:00:00Z\"}", "{\"observed_at\":\"1969-12-31T23:59:59Z\"}", "{\"observed_at\":\"2201-01-01T00:00:00Z\"}",
    "{\"observed_at\":\"2026-03-29T24:00:00Z\"}", "{\"observed_at\":\"2026-03-29T23:59:60Z\"}", "{\"observed_at\":1774744200}",
    "{\"observed_at\":null}", "{\"observed_at\":\"2026-03-29T02:30:00Z\",\"observed_at\":null}",
    "{\"observed_at\":\"2026-03-29T02:30:00Z\",\"observed_at\":\"2026-03-30T02:30:00Z\"}", "{\"observed_at\":\"\"}",
    "{\"observed_at\":\"2026-03-29T02:30:00Z                                                    \"}",
  };

  @Test void adversarialRecords_agree() {
    Pair p = new Pair(demoSchema(), SMALL, "observed_at", TimeFormat.ISO8601);
    for (String s : ADVERSARIAL) p.check(s);
    // the same records with every field a record may also carry, in between good ones
    String good = "{\"kind\":\"actual\",\"hub\":\"QM-01\",\"observed_at\":\"2026-03-25T00:00:00+01:00\",\"sessions\":35.4}";
    for (String s : ADVERSARIAL) {
      p.check(s);
      assertNull(p.check(good), "a good record after " + s);
    }
    assertTrue(p.decoded > 60 && p.rejected > 60, p.decoded + " decoded, " + p.rejected + " rejected");
  }

  @Test void invalidUtf8_agrees() {
    Pair p = new Pair(demoSchema(), SMALL, "observed_at", TimeFormat.ISO8601);
    int[][] seqs = {
      {0x80}, {0xbf}, {0xc0, 0x80}, {0xc1, 0xbf}, {0xc2, 0x80}, {0xc2}, {0xc2, 0x41}, {0xdf, 0xbf}, {0xe0, 0x80, 0x80},
      {0xe0, 0x9f, 0xbf}, {0xe0, 0xa0, 0x80}, {0xe6, 0x97}, {0xed, 0x9f, 0xbf}, {0xed, 0xa0, 0x80}, {0xed, 0xbf, 0xbf},
      {0xee, 0x80, 0x80}, {0xef, 0xbf, 0xbf}, {0xef, 0xbb, 0xbf}, {0xf0, 0x80, 0x80, 0x80}, {0xf0, 0x8f, 0xbf, 0xbf},
      {0xf0, 0x90, 0x80, 0x80}, {0xf4, 0x8f, 0xbf, 0xbf}, {0xf4, 0x90, 0x80, 0x80}, {0xf5, 0x80, 0x80, 0x80},
      {0xf8, 0x88, 0x80, 0x80, 0x80}, {0xfe}, {0xff}, {0xf0, 0x9f, 0x98}, {0xf0, 0x9f, 0x98, 0x41},
    };
    for (int[] q : seqs) {
      for (String where : new String[] {"{\"hub\":\"a#b\"}", "{\"x\":\"a#b\"}", "{\"a#\":1}", "{\"hub\":\"#\"}", "{\"x\":[\"#\"]}"}) {
        ByteArrayOutputStream o = new ByteArrayOutputStream();
        for (byte c : where.getBytes(StandardCharsets.US_ASCII)) {
          if (c == '#') {
            for (int x : q) o.write(x);
          } else {
            o.write(c);
          }
        }
        p.check(o.toByteArray());
      }
    }
    assertTrue(p.decoded > 20 && p.rejected > 20, p.decoded + " decoded, " + p.rejected + " rejected");
  }

  @Test void nestingDepths_agree() {
    Pair p = new Pair(demoSchema(), new RecordLimits(16, 65536, 1e6, 1970, 2200), "observed_at", TimeFormat.ISO8601);
    for (int depth : new int[] {1, 2, 62, 63, 64, 65, 66, 999, 1000, 1001, 2000}) {
      p.check("{\"x\":" + "[".repeat(depth) + "]".repeat(depth) + ",\"hub\":\"a\"}");
      p.check("{\"x\":" + "{\"k\":".repeat(depth) + "1" + "}".repeat(depth) + ",\"hub\":\"a\"}");
    }
    assertTrue(p.decoded >= 14, p.decoded + " decoded");
  }

  @Test void veryLongStringsAndNames_agree() {
    RecordLimits big = new RecordLimits(100_000, 1_000_000, 1e6, 1970, 2200);
    Pair p = new Pair(demoSchema(), big, "observed_at", TimeFormat.ISO8601);
    Random r = new Random(11);
    for (int n : new int[] {1000, 1023, 1024, 1025, 60_000, 99_999, 100_000, 100_001, 200_000}) {
      String ascii = jsonString(randomText(r, n, false), r);
      String wide = jsonString(randomText(r, n, true), r);
      p.check("{\"hub\":" + ascii + "}");
      p.check("{\"x\":" + ascii + ",\"hub\":\"a\"}");
      p.check("{" + ascii + ":1,\"hub\":\"a\"}");
      p.check("{\"hub\":" + wide + "}");
      p.check("{\"x\":" + wide + ",\"hub\":\"a\"}");
      p.check("{\"hub\":\"" + "b".repeat(n) + "\"}");
      p.check("{\"sessions\":" + "1".repeat(Math.min(n, 2000)) + "}");
      p.check("{\"x\":" + "1".repeat(Math.min(n, 2000)) + ",\"hub\":\"a\"}");
      p.check("{\"x\":0." + "1".repeat(Math.min(n, 2000)) + ",\"hub\":\"a\"}");
    }
    // a surrogate pair that would end just past the text limit
    p.check("{\"hub\":\"" + "a".repeat(99_999) + "\ud83d\ude00\"}");
    p.check("{\"hub\":\"" + "a".repeat(99_998) + "\ud83d\ude00\"}");
    assertTrue(p.decoded > 20 && p.rejected > 10, p.decoded + " decoded, " + p.rejected + " rejected");
  }

  @Test void recordAtTheSizeLimit_agrees() {
    int limit = 256;
    Pair p = new Pair(demoSchema(), new RecordLimits(16, limit, 1e6, 1970, 2200), "observed_at", TimeFormat.ISO8601);
    String head = "{\"hub\":\"H07\",\"pad\":\"";
    String tail = "\"}";
    String exact = head + "x".repeat(limit - head.length() - tail.length()) + tail;
    assertEquals(limit, exact.length());
    assertNull(p.check(exact));
    assertEquals(RejectReason.RECORD_TOO_LARGE, p.check(head + "x".repeat(limit + 1 - head.length() - tail.length()) + tail));
    // a longer record cut at the limit: too large as a whole, malformed when only its first bytes arrive
    String longer = head + "x".repeat(limit) + tail;
    byte[] b = longer.getBytes(StandardCharsets.UTF_8);
    assertEquals(RejectReason.RECORD_TOO_LARGE, p.check(b, 0, b.length));
    assertEquals(RejectReason.MALFORMED_JSON, p.check(b, 0, limit));
    assertEquals(RejectReason.MALFORMED_JSON, p.check(exact.getBytes(StandardCharsets.UTF_8), 0, limit - 1));
    assertNull(p.check(exact));
  }

  @Test void epochTimeFormats_agree() {
    Random r = new Random(5);
    Map<String, FieldType> m = new LinkedHashMap<>();
    m.put("ts", FieldType.NUMBER);
    m.put("y", FieldType.NUMBER);
    Pair seconds = new Pair(new RecordSchema(m), RecordLimits.DEFAULTS, "ts", TimeFormat.EPOCH_SECONDS);
    Map<String, FieldType> m2 = new LinkedHashMap<>();
    m2.put("ts", FieldType.TIME);
    m2.put("at", FieldType.TIME);
    Pair millis = new Pair(new RecordSchema(m2), RecordLimits.DEFAULTS, "ts", TimeFormat.EPOCH_MILLIS);
    Pair secText = new Pair(new RecordSchema(m2), RecordLimits.DEFAULTS, "ts", TimeFormat.EPOCH_SECONDS);
    String[] fixed = {"0", "-0", "-0.0", "1", "-1", "1774744200", "1774744200.5", "1774744200.0005", "1774744200123",
      "1.7747442E9", "1.7747442e12", "99999999999999", "100000000000000", "1e14", "1e300", "1e400", "NaN", "-Infinity",
      "12345678901234567890", "0.30000000000000004", "7258118399.999", "7258118400", "01", "1.", "+5"};
    List<String> numbers = new ArrayList<>(List.of(fixed));
    for (int k = 0; k < 400; k++) numbers.add(randomNumber(r));
    // plausible times in both units, and each unit's numbers near where the other unit's begin
    for (int k = 0; k < 200; k++) {
      long ms = 94_694_400_000L + (long) (r.nextDouble() * 7.0e12);
      numbers.add(Long.toString(ms));
      numbers.add(Long.toString(ms / 1000));
      numbers.add((ms / 1000) + "." + r.nextInt(1000));
      numbers.add(Long.toString(94_694_400_000L + r.nextInt(2001) - 1000));
      numbers.add(Long.toString(7_258_118_400L + r.nextInt(2001) - 1000));
    }
    for (String n : numbers) {
      seconds.check("{\"ts\":" + n + ",\"y\":1}");
      millis.check("{\"ts\":" + n + "}");
      millis.check("{\"ts\":\"" + n + "\"}");
      millis.check("{\"ts\":\"" + n + "\",\"at\":\"2026-03-29T02:30:00+02:00\"}");
      millis.check("{\"at\":" + n + "}");
      secText.check("{\"ts\":\"" + n + "\"}");
      secText.check("{\"ts\":" + n + "}");
    }
    assertTrue(seconds.decoded > 100 && millis.decoded > 100 && secText.decoded > 100);
  }

  /** Seeded random mutations of sample lines (flips, insertions, deletions, cuts) and random records. */
  @Test void randomMutationsAndRandomRecords_agree() throws IOException {
    List<byte[]> lines = sampleLines();
    Random r = new Random(20260105L);
    Pair p = new Pair(demoSchema(), RecordLimits.DEFAULTS, "observed_at", TimeFormat.ISO8601);
    Pair small = new Pair(demoSchema(), SMALL, "observed_at", TimeFormat.ISO8601);
    byte[] interesting = "{}[]\",:\\ \t\n\r0123456789-+.eEntfaluxrsNI/".getBytes(StandardCharsets.US_ASCII);
    int[] high = {0x00, 0x01, 0x1f, 0x7f, 0x80, 0xbf, 0xc2, 0xc3, 0xa9, 0xe2, 0x82, 0xac, 0xed, 0xa0, 0xf0, 0x9f, 0x98, 0x80, 0xf4, 0xff};
    for (int k = 0; k < 20_000; k++) {
      byte[] b = lines.get(r.nextInt(lines.size())).clone();
      int edits = 1 + r.nextInt(3);
      for (int e = 0; e < edits && b.length > 0; e++) {
        int at = r.nextInt(b.length);
        byte v = r.nextInt(4) == 0 ? (byte) high[r.nextInt(high.length)] : interesting[r.nextInt(interesting.length)];
        switch (r.nextInt(4)) {
          case 0: b[at] = v; break;
          case 1: b = insert(b, at, v); break;
          case 2: b = delete(b, at); break;
          default: b = java.util.Arrays.copyOf(b, at); break;
        }
      }
      p.check(b);
      small.check(b);
    }
    for (int k = 0; k < 5_000; k++) {
      byte[] b = randomRecord(r).getBytes(StandardCharsets.UTF_8);
      p.check(b);
      small.check(b);
    }
    assertTrue(p.decoded > 2_000 && p.rejected > 5_000, p.decoded + " decoded, " + p.rejected + " rejected");
    assertTrue(p.fastDecoded > p.decoded / 2, p.fastDecoded + " of " + p.decoded + " decoded by the fast path alone");
  }

  /**
   * Records made only of declared names with valid values, names often repeated (sometimes as an
   * escaped spelling of the same name): both paths agree, and a record is {@code duplicate_field}
   * exactly when Jackson's own duplicate detection ({@code StreamReadFeature.STRICT_DUPLICATE_DETECTION},
   * the reference here) finds a repeated name, and decoded otherwise.
   */
  @Test void duplicateNames_agreeWithJacksonsDuplicateDetection() throws IOException {
    Random r = new Random(606);
    RecordSchema schema = demoSchema();
    Pair p = new Pair(schema, RecordLimits.DEFAULTS, "observed_at", TimeFormat.ISO8601);
    com.fasterxml.jackson.core.JsonFactory strictFactory = com.fasterxml.jackson.core.JsonFactory.builder()
        .enable(com.fasterxml.jackson.core.StreamReadFeature.STRICT_DUPLICATE_DETECTION).build();
    String[] spelled = {"kind", "hub", "observed_at", "weather", "temperature_c", "price_per_kwh", "sessions", "holiday", "h\\u00e9"};
    int dups = 0;
    for (int k = 0; k < 4000; k++) {
      StringBuilder s = new StringBuilder("{");
      int n = 1 + r.nextInt(6);
      for (int i = 0; i < n; i++) {
        int slot = r.nextInt(4) == 0 ? r.nextInt(2) : r.nextInt(schema.size());
        String name = r.nextInt(6) == 0 ? spelled[slot] : r.nextInt(8) == 0 ? escapeOneChar(schema.name(slot), r) : schema.name(slot);
        if (i > 0) s.append(',');
        s.append('"').append(name).append("\":").append(validValue(schema.type(slot), r));
      }
      String json = s.append('}').toString();
      boolean jacksonDup = false;
      try (com.fasterxml.jackson.core.JsonParser jp = strictFactory.createParser(json.getBytes(StandardCharsets.UTF_8))) {
        while (jp.nextToken() != null) { }
      } catch (com.fasterxml.jackson.core.JsonParseException e) {
        assertTrue(e.getOriginalMessage().startsWith("Duplicate field"), e.getOriginalMessage());
        jacksonDup = true;
      }
      RejectReason got = p.check(json);
      assertEquals(jacksonDup ? RejectReason.DUPLICATE_FIELD : null, got, json);
      if (jacksonDup) dups++;
    }
    assertTrue(dups > 1000 && p.decoded > 1000, dups + " duplicates, " + p.decoded + " decoded");
  }

  private static String escapeOneChar(String name, Random r) {
    int at = r.nextInt(name.length());
    return name.substring(0, at) + String.format(java.util.Locale.ROOT, "\\u%04x", (int) name.charAt(at)) + name.substring(at + 1);
  }

  private static String validValue(FieldType t, Random r) {
    if (r.nextInt(8) == 0) return "null";
    switch (t) {
      case NUMBER: return Integer.toString(r.nextInt(2000) - 1000);
      case FLAG: return r.nextBoolean() ? "true" : "false";
      case TIME: return "\"2026-03-" + (10 + r.nextInt(19)) + "T1" + r.nextInt(10) + ":00:00Z\"";
      default: return "\"" + (char) ('a' + r.nextInt(26)) + r.nextInt(100) + "\"";
    }
  }

  /**
   * Texts with surrogates: pairs (escaped or as UTF-8) and unpaired ones (escaped; as UTF-8 bytes
   * they are not UTF-8 and Jackson refuses them). Both paths agree; a declared text is
   * {@code not_unicode} exactly when the text Jackson's tree reader gives is not well-formed
   * UTF-16, judged by the JDK's UTF-8 encoder ({@code CharsetEncoder.canEncode}, the reference),
   * and an undeclared one never matters.
   */
  @Test void surrogates_agreeAndOnlyWellFormedTextsAreAccepted() throws IOException {
    Random r = new Random(707);
    RecordSchema schema = demoSchema();
    Pair p = new Pair(schema, RecordLimits.DEFAULTS, "observed_at", TimeFormat.ISO8601);
    com.fasterxml.jackson.databind.ObjectMapper tree = new com.fasterxml.jackson.databind.ObjectMapper();
    java.nio.charset.CharsetEncoder utf8 = StandardCharsets.UTF_8.newEncoder();
    int lone = 0;
    int pairs = 0;
    for (int k = 0; k < 6000; k++) {
      StringBuilder t = new StringBuilder();
      int n = 1 + r.nextInt(6);
      for (int i = 0; i < n; i++) {
        switch (r.nextInt(5)) {
          case 0: t.append((char) (0xD800 + r.nextInt(0x400))); break;
          case 1: t.append((char) (0xDC00 + r.nextInt(0x400))); break;
          case 2: t.appendCodePoint(0x10000 + r.nextInt(0x100000)); break;
          default: t.append((char) ('a' + r.nextInt(26))); break;
        }
      }
      String text = t.toString();
      String lit = jsonString(text, r);
      // jsonString escapes unpaired surrogates and, at random, one half of a pair: its output is then
      // not what UTF-8 can carry; write each char of such a string escaped instead
      if (!utf8.canEncode(lit)) lit = escapeAll(text);
      boolean wellFormed = utf8.canEncode(text);
      String field = r.nextInt(5) == 0 ? "x" : "hub";
      String json = "{\"" + field + "\":" + lit + "}";
      String parsed = tree.readTree(json).get(field).textValue();
      assertEquals(text, parsed, "Jackson reads the literal back");
      RejectReason got = p.check(json);
      RejectReason want = field.equals("hub") && !wellFormed ? RejectReason.NOT_UNICODE
          : field.equals("hub") && text.length() > RecordLimits.DEFAULTS.maxTextLength() ? RejectReason.TOO_LONG : null;
      assertEquals(want, got, json);
      if (!wellFormed) lone++; else if (text.codePoints().anyMatch(c -> c >= 0x10000)) pairs++;
    }
    assertTrue(lone > 1000 && pairs > 300, lone + " with a lone surrogate, " + pairs + " with pairs only");
  }

  private static String escapeAll(String s) {
    StringBuilder b = new StringBuilder("\"");
    for (int i = 0; i < s.length(); i++) b.append(String.format(java.util.Locale.ROOT, "\\u%04x", (int) s.charAt(i)));
    return b.append('"').toString();
  }

  static byte[] insert(byte[] b, int at, byte v) {
    byte[] o = new byte[b.length + 1];
    System.arraycopy(b, 0, o, 0, at);
    o[at] = v;
    System.arraycopy(b, at, o, at + 1, b.length - at);
    return o;
  }

  static byte[] delete(byte[] b, int at) {
    byte[] o = new byte[b.length - 1];
    System.arraycopy(b, 0, o, 0, at);
    System.arraycopy(b, at + 1, o, at, b.length - at - 1);
    return o;
  }

  static final String[] NAMES = {"kind", "hub", "observed_at", "weather", "temperature_c", "price_per_kwh", "sessions", "holiday",
    "h\u00e9", "extra", "x", "", "Hub", "hub "};

  static String randomRecord(Random r) {
    StringBuilder s = new StringBuilder();
    s.append(ws(r)).append('{');
    int n = r.nextInt(9);
    for (int i = 0; i < n; i++) {
      if (i > 0) s.append(ws(r)).append(',');
      s.append(ws(r)).append(jsonString(NAMES[r.nextInt(NAMES.length)], r)).append(ws(r)).append(':').append(ws(r));
      s.append(randomValue(r, 0));
    }
    s.append(ws(r)).append('}').append(ws(r));
    return s.toString();
  }

  static String ws(Random r) {
    switch (r.nextInt(8)) {
      case 0: return " ";
      case 1: return "\n\t";
      case 2: return "\r\n ";
      default: return "";
    }
  }

  static String randomValue(Random r, int depth) {
    switch (r.nextInt(depth > 3 ? 6 : 8)) {
      case 0: return "null";
      case 1: return r.nextBoolean() ? "true" : "false";
      case 2: case 3: return randomNumber(r);
      case 4: return "\"2026-03-" + (10 + r.nextInt(25)) + "T" + (10 + r.nextInt(14)) + ":00:00" + (r.nextBoolean() ? "Z" : "+01:00") + "\"";
      case 5: return jsonString(randomText(r, r.nextInt(20), r.nextBoolean()), r);
      case 6: {
        StringBuilder a = new StringBuilder("[");
        int k = r.nextInt(4);
        for (int i = 0; i < k; i++) a.append(i > 0 ? "," : "").append(randomValue(r, depth + 1));
        return a.append(']').toString();
      }
      default: {
        StringBuilder o = new StringBuilder("{");
        int k = r.nextInt(4);
        for (int i = 0; i < k; i++) {
          o.append(i > 0 ? "," : "").append(jsonString(NAMES[r.nextInt(NAMES.length)], r)).append(':').append(randomValue(r, depth + 1));
        }
        return o.append('}').toString();
      }
    }
  }

  static String randomNumber(Random r) {
    switch (r.nextInt(6)) {
      case 0: return Integer.toString(r.nextInt(2000) - 1000);
      case 1: return Double.toString((r.nextDouble() - 0.5) * Math.pow(10, r.nextInt(30) - 10));
      case 2: return String.format(java.util.Locale.ROOT, "%.4f", r.nextGaussian() * 50);
      case 3: return (r.nextBoolean() ? "-" : "") + (1 + r.nextInt(9)) + "." + r.nextInt(1000) + "e" + (r.nextInt(50) - 25);
      case 4: return Long.toString(r.nextLong());
      default: return Double.toString(Double.longBitsToDouble(r.nextLong()));
    }
  }

  /** Random text: ASCII only, or any code points (control chars, non-ASCII, pairs and lone surrogates). */
  static String randomText(Random r, int n, boolean wide) {
    StringBuilder s = new StringBuilder(n);
    for (int i = 0; i < n; i++) {
      if (!wide) {
        s.append((char) (0x20 + r.nextInt(0x5f)));
        continue;
      }
      switch (r.nextInt(6)) {
        case 0: s.append((char) r.nextInt(0x20)); break;
        case 1: s.append((char) (0x80 + r.nextInt(0x780))); break;
        case 2: s.append((char) (0x800 + r.nextInt(0xD000))); break;
        case 3: s.appendCodePoint(0x10000 + r.nextInt(0x100000)); break;
        case 4: s.append((char) (0xD800 + r.nextInt(0x800))); break; // lone surrogate: written escaped
        default: s.append((char) (0x20 + r.nextInt(0x5f))); break;
      }
    }
    return s.toString();
  }

  /** A JSON string literal for {@code s}: escapes for quotes, backslashes and control chars, and at random for others. */
  static String jsonString(String s, Random r) {
    StringBuilder b = new StringBuilder("\"");
    for (int i = 0; i < s.length(); i++) {
      char c = s.charAt(i);
      boolean lone = Character.isSurrogate(c)
          && !(Character.isHighSurrogate(c) && i + 1 < s.length() && Character.isLowSurrogate(s.charAt(i + 1)))
          && !(Character.isLowSurrogate(c) && i > 0 && Character.isHighSurrogate(s.charAt(i - 1)));
      if (c == '"' || c == '\\') {
        b.append('\\').append(c);
      } else if (c < 0x20 || lone || r.nextInt(30) == 0) {
        switch (c) {
          case '\n': b.append("\\n"); break;
          case '\t': b.append("\\t"); break;
          case '/': b.append("\\/"); break;
          default: b.append(String.format(r.nextBoolean() ? "\\u%04x" : "\\u%04X", (int) c));
        }
      } else {
        b.append(c);
      }
    }
    return b.append('"').toString();
  }
}
