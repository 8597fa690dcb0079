package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.core.JsonEncoding;
import com.fasterxml.jackson.core.JsonFactory;
import com.fasterxml.jackson.core.JsonGenerator;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.FieldType;
import dev.runnel.core.record.RecordSchema;
import dev.runnel.core.record.RejectReason;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.Random;
import org.junit.jupiter.api.Test;

/** The reused generator writes what a new generator per record writes. */
class OutputJsonTest {

  @Test void instantChars_equalsInstantToString() {
    // reference: java.time.Instant#toString (the JDK's ISO_INSTANT form)
    char[] buf = new char[24];
    Random r = new Random(17);
    long first = Instant.parse("0000-01-01T00:00:00Z").toEpochMilli();
    long end = Instant.parse("+10000-01-01T00:00:00Z").toEpochMilli();
    long[] edges = {0L, -1L, 1L, 999L, 1000L, -1000L, -1001L, first, first + 1, end - 1, 951_782_400_000L /* 2000-02-29 */,
      4_107_542_399_999L /* 2100-02-28T23:59:59.999 */, 1_774_744_200_000L};
    for (long ms : edges) check(ms, buf);
    for (int k = 0; k < 200_000; k++) {
      long ms = first + (long) (r.nextDouble() * (end - first));
      if (k % 3 == 0) ms -= ms % 1000; // whole seconds: no fraction
      check(ms, buf);
    }
    assertEquals(0, OutputJson.instantChars(first - 1, buf), "year -1 is left to Instant");
    assertEquals(0, OutputJson.instantChars(end, buf), "year 10000 is left to Instant");
    assertEquals(0, OutputJson.instantChars(Long.MIN_VALUE, buf));
    assertEquals(0, OutputJson.instantChars(Long.MAX_VALUE, buf));
  }

  private static void check(long ms, char[] buf) {
    int n = OutputJson.instantChars(ms, buf);
    assertEquals(Instant.ofEpochMilli(ms).toString(), new String(buf, 0, n), "millis " + ms);
  }

  /** The bytes a new Jackson generator writes for the string value {@code s} (how text was written before). */
  private static String jacksonString(String s) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    try (JsonGenerator g = new JsonFactory().createGenerator(b, JsonEncoding.UTF8)) {
      g.writeString(s);
    }
    return b.toString(StandardCharsets.UTF_8);
  }

  @Test void numbers_readBackAsTheSameDoubles() throws IOException {
    // the fast (Schubfach) double writer must keep every value: the JDK's Double.parseDouble,
    // correctly rounded by its specification, is the reference reader
    Map<String, FieldType> m = new LinkedHashMap<>();
    m.put("hub", FieldType.TEXT);
    EventRecord r = new EventRecord(new RecordSchema(m));
    r.setText(0, "QM-01");
    OutputJson json = new OutputJson("t", 0.9);
    Prediction p = new Prediction();
    p.status = Prediction.Status.SCORED;
    p.eventTimeMillis = 1_774_744_200_000L;
    Random rnd = new Random(17);
    com.fasterxml.jackson.databind.ObjectMapper reader = new com.fasterxml.jackson.databind.ObjectMapper();
    for (int i = 0; i < 20_000; i++) {
      double v = switch (i % 4) {
        case 0 -> Double.longBitsToDouble(rnd.nextLong());
        case 1 -> rnd.nextGaussian() * 30;
        case 2 -> Math.scalb(rnd.nextDouble(), rnd.nextInt(200) - 100);
        default -> Math.round(rnd.nextGaussian() * 1e4) / 100.0;
      };
      if (!Double.isFinite(v)) {
        continue;
      }
      p.predicted = v;
      p.actual = -v / 3;
      p.low = v - 1e-300;
      p.high = Math.nextUp(v);
      String out = new String(json.prediction(p, r), StandardCharsets.UTF_8);
      com.fasterxml.jackson.databind.JsonNode n = reader.readTree(out);
      for (String f : new String[] {"predicted", "actual", "low", "high"}) {
        double expected = f.equals("predicted") ? p.predicted : f.equals("actual") ? p.actual : f.equals("low") ? p.low : p.high;
        String text = n.get(f).asText();
        assertEquals(Double.doubleToRawLongBits(expected), Double.doubleToRawLongBits(Double.parseDouble(text)), f + " written as " + text);
      }
    }
  }

  @Test void textFields_areWrittenAsJacksonWritesTheirStrings() throws IOException {
    Map<String, FieldType> m = new LinkedHashMap<>();
    m.put("hub", FieldType.TEXT);
    m.put("note", FieldType.TEXT);
    m.put("open", FieldType.FLAG);
    RecordSchema schema = new RecordSchema(m);
    EventRecord r = new EventRecord(schema);
    Random rnd = new Random(3);
    String[] texts = {"", "QM-01", "Z\u00fcrich", "\u65e5\u672c", "\ud83d\ude00", "\ud83d", "x\udc00", "\"\\/\b\f\n\r\t\u0000\u001f\u007f",
      "</script>", "\u2028\u2029", "a".repeat(9000), "\u00e9".repeat(5000), "\ud83d\ude00".repeat(3000), randomText(rnd, 20_000)};
    OutputJson reused = new OutputJson("t", 0.9);
    Prediction p = new Prediction();
    p.status = Prediction.Status.SCORED;
    p.eventTimeMillis = 1_774_744_200_000L;
    p.predicted = 1.5;
    for (String hub : texts) {
      for (boolean asChars : new boolean[] {false, true}) {
        r.clear();
        if (asChars) {
          char[] c = ("??" + hub).toCharArray();
          r.setText(0, c, 2, hub.length());
        } else {
          r.setText(0, hub);
        }
        r.setText(1, "n");
        r.setFlag(2, true);
        String out = new String(reused.prediction(p, r), StandardCharsets.UTF_8);
        String fragment = "\"fields\":{\"hub\":" + jacksonString(hub) + ",\"note\":\"n\",\"open\":true}";
        assertTrue(out.contains(fragment), () -> "text " + hub.length() + " chars: " + out.substring(0, Math.min(300, out.length())));
        assertArrayEquals(new OutputJson("t", 0.9).prediction(p, r), reused.prediction(p, r), "reused generator = new generator");
      }
    }
  }

  @Test void mixedOutputs_sameBytesFromOneInstanceAsFromNewOnes() {
    Map<String, FieldType> m = new LinkedHashMap<>();
    m.put("hub", FieldType.TEXT);
    RecordSchema schema = new RecordSchema(m);
    EventRecord r = new EventRecord(schema);
    OutputJson reused = new OutputJson("mixed", 0.8);
    Random rnd = new Random(8);
    for (int k = 0; k < 2000; k++) {
      if (rnd.nextInt(3) == 0) {
        byte[] raw = ("{\"hub\":" + k + "}").getBytes(StandardCharsets.UTF_8);
        assertArrayEquals(new OutputJson("mixed", 0.8).reject(RejectReason.WRONG_TYPE, "field hub: " + k, 0, k, raw, 0, raw.length),
            reused.reject(RejectReason.WRONG_TYPE, "field hub: " + k, 0, k, raw, 0, raw.length));
      } else {
        Prediction p = new Prediction();
        p.status = rnd.nextBoolean() ? Prediction.Status.SCORED : Prediction.Status.WARMING_UP;
        p.eventTimeMillis = rnd.nextLong() >> 20;
        if (k % 100 == 0) p.eventTimeMillis = k % 200 == 0 ? -70_000_000_000_000L : 300_000_000_000_000L; // years -248, 11476
        p.predicted = rnd.nextGaussian();
        p.low = rnd.nextBoolean() ? Double.NaN : p.predicted - 1;
        p.high = p.predicted + 1;
        p.actual = rnd.nextGaussian();
        p.sourcePartition = rnd.nextInt(3) - 1;
        p.sourceOffset = k;
        r.clear();
        if (rnd.nextBoolean()) r.setText(0, "H" + rnd.nextInt(20));
        byte[] expected = new OutputJson("mixed", 0.8).prediction(p, r);
        assertArrayEquals(expected, reused.prediction(p, r));
        assertTrue(new String(expected, StandardCharsets.UTF_8).contains("\"event_time\":\"" + Instant.ofEpochMilli(p.eventTimeMillis) + "\""));
      }
    }
  }

  private static String randomText(Random r, int n) {
    StringBuilder s = new StringBuilder(n);
    while (s.length() < n) {
      switch (r.nextInt(4)) {
        case 0: s.append((char) r.nextInt(0x80)); break;
        case 1: s.append((char) (0x80 + r.nextInt(0xD780))); break;
        case 2: s.appendCodePoint(0x10000 + r.nextInt(0xFFFFF)); break;
        default: s.append((char) ('a' + r.nextInt(26))); break;
      }
    }
    return s.toString();
  }

  private static EventRecord hubRecord() {
    Map<String, FieldType> m = new LinkedHashMap<>();
    m.put("kind", FieldType.TEXT);
    m.put("hub", FieldType.TEXT);
    m.put("temp", FieldType.NUMBER);
    m.put("open", FieldType.FLAG);
    EventRecord r = new EventRecord(new RecordSchema(m));
    r.setText(0, "actual");
    r.setText(1, "QM-03");
    r.setNumber(2, 4.5);
    r.setFlag(3, true);
    return r;
  }

  private static Prediction scored() {
    Prediction p = new Prediction();
    p.status = Prediction.Status.SCORED;
    p.eventTimeMillis = 1_774_744_200_000L;
    p.sourcePartition = 0;
    p.sourceOffset = 12;
    p.predicted = 29.572289899070913;
    p.low = 11.64734944281797;
    p.high = 47.49723035532386;
    p.actual = 39.8;
    return p;
  }

  @Test void formatThree_leavesFormatAndPipelineToTheHeaders_andEchoesTheConfiguredFields() throws IOException {
    EventRecord r = hubRecord();
    Prediction p = scored();
    com.fasterxml.jackson.databind.ObjectMapper reader = new com.fasterxml.jackson.databind.ObjectMapper();
    com.fasterxml.jackson.databind.JsonNode all = reader.readTree(new OutputJson("qm", 0.9).prediction(p, r));
    assertTrue(!all.has("format") && !all.has("pipeline"), all.toString());
    assertEquals("{\"kind\":\"actual\",\"hub\":\"QM-03\",\"open\":true}", all.get("fields").toString(), "null list: every text and flag");
    com.fasterxml.jackson.databind.JsonNode some = reader.readTree(new OutputJson("qm", 0.9, java.util.List.of("open", "hub"), 0).prediction(p, r));
    assertEquals("{\"open\":true,\"hub\":\"QM-03\"}", some.get("fields").toString(), "the configured fields in the configured order");
    String none = new String(new OutputJson("qm", 0.9, java.util.List.of(), 0).prediction(p, r), StandardCharsets.UTF_8);
    assertTrue(!none.contains("fields") && !none.contains("QM-03"), none);
    assertEquals(all.get("predicted"), reader.readTree(none).get("predicted"));
    String reject = new String(new OutputJson("qm", 0.9).reject(RejectReason.WRONG_TYPE, "d", 0, 3, new byte[] {'x'}, 0, 1),
        StandardCharsets.UTF_8);
    assertTrue(reject.startsWith("{\"reason\":\"wrong_type\""), reject);
    assertEquals("{\"format\":3,\"pipeline\":\"qm\",\"snapshot_format\":" + Snapshot.FORMAT_VERSION + "}\n",
        new String(new OutputJson("qm", 0.9).formatFile(), StandardCharsets.UTF_8));
  }

  @Test void significantDigits_roundLikeBigDecimal_andWriteNoMoreDigits() throws IOException {
    // reference: java.math.BigDecimal rounded to n significant digits (MathContext, HALF_UP on the
    // double's exact value), then read back by Double.parseDouble. The scaling multiplies or divides
    // once before rounding, so a value within a few ulps of a tie may round the other way: those
    // must still be one of the two neighbouring n-digit decimals.
    Random rnd = new Random(29);
    EventRecord r = hubRecord();
    com.fasterxml.jackson.databind.ObjectMapper reader = new com.fasterxml.jackson.databind.ObjectMapper();
    int other = 0;
    int total = 0;
    for (int n : new int[] {1, 3, 6, 9, 15}) {
      OutputJson json = new OutputJson("qm", 0.9, java.util.List.of(), n);
      for (int i = 0; i < 4000; i++) {
        double v = switch (i % 3) {
          case 0 -> rnd.nextGaussian() * 40;
          case 1 -> Math.scalb(rnd.nextDouble(), rnd.nextInt(60) - 25) * (rnd.nextBoolean() ? 1 : -1);
          default -> Math.round(rnd.nextGaussian() * 1e5) / 1000.0;
        };
        if (v == 0) continue;
        Prediction p = scored();
        p.predicted = v;
        p.low = v - 1;
        String text = reader.readTree(json.prediction(p, r)).get("predicted").asText();
        java.math.BigDecimal written = new java.math.BigDecimal(text);
        java.math.BigDecimal exact = new java.math.BigDecimal(v);
        int e = exact.precision() - exact.scale() - 1;
        if (Math.abs(n - 1 - e) > 22) { // documented: written exactly when the scaling needs more than 10^22
          assertEquals(Double.doubleToRawLongBits(v), Double.doubleToRawLongBits(Double.parseDouble(text)), text);
          continue;
        }
        java.math.BigDecimal up = exact.round(new java.math.MathContext(n, java.math.RoundingMode.UP));
        java.math.BigDecimal down = exact.round(new java.math.MathContext(n, java.math.RoundingMode.DOWN));
        java.math.BigDecimal half = exact.round(new java.math.MathContext(n, java.math.RoundingMode.HALF_UP));
        assertTrue(written.stripTrailingZeros().precision() <= n, n + " digits: " + v + " written as " + text);
        double got = Double.parseDouble(text);
        total++;
        if (got != half.doubleValue()) {
          other++;
          assertTrue(got == up.doubleValue() || got == down.doubleValue(), n + " digits: " + v + " written as " + text);
          // only next to a tie: the exact value within a few ulps of the midpoint of its two n-digit neighbours
          double fromTie = exact.subtract(up.add(down).divide(java.math.BigDecimal.valueOf(2))).abs().doubleValue();
          assertTrue(fromTie <= 4 * Math.ulp(v), n + " digits: " + v + " written as " + text + ", " + fromTie + " from the tie");
        }
        p.actual = v / 7;
        String actual = reader.readTree(json.prediction(p, r)).get("actual").asText();
        assertEquals(Double.doubleToRawLongBits(p.actual), Double.doubleToRawLongBits(Double.parseDouble(actual)), "actual stays exact: " + actual);
      }
    }
    assertTrue(other * 50 < total, other + " of " + total + " off the HALF_UP reference (ties only)");
    assertEquals(12.35, OutputJson.roundSignificant(12.345678, 4));
    assertEquals(-0.001235, OutputJson.roundSignificant(-0.0012345678, 4));
    assertEquals(1.0e7, OutputJson.roundSignificant(9_999_999.7, 3));
    assertEquals(1.0e-30, OutputJson.roundSignificant(1.0e-30, 3), "beyond the exact powers of ten: unchanged");
    assertEquals(1.23e21, OutputJson.roundSignificant(1.2345e21, 3));
    assertEquals(1.2345e25, OutputJson.roundSignificant(1.2345e25, 3), "10^23 and up: unchanged");
    assertEquals(0.1, OutputJson.roundSignificant(0.099999, 3));
    assertEquals(1000.0, OutputJson.roundSignificant(999.99, 4));
  }
}
