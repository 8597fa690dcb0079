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
}
