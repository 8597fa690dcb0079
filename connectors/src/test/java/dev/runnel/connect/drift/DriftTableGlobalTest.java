package dev.runnel.connect.drift;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.connect.cli.DriftCommandAccess;
import dev.runnel.connect.output.GlobalViewsFeed;
import dev.runnel.connect.output.OutputSchemas;
import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code drift --file} with {@code model.scope: global}: the snapshots of 4 partitions made by real pipeline steps
 * that share and fold ({@link GlobalViewsFeed}; partition 3 stops folding after the first day), as JSON Lines and as
 * an Avro container file, give one line per snapshot time for the one model (one weight history), with partition 3
 * named where its view differs and the others never; an alarm raised by some views only is reported once, naming them.
 */
class DriftTableGlobalTest {

  private static final ObjectMapper JSON = new ObjectMapper();

  static String print(Path file, String baseline) throws Exception {
    ByteArrayOutputStream buf = new ByteArrayOutputStream();
    int rc = DriftCommandAccess.printFile(file, new DriftTable(baseline, 3, null, null), new PrintStream(buf, true, StandardCharsets.UTF_8));
    assertEquals(0, rc);
    return buf.toString(StandardCharsets.UTF_8);
  }

  @Test
  void oneLinePerSnapshotTimeNamingThePartitionWhoseViewDiffers(@TempDir Path dir) throws Exception {
    GlobalViewsFeed f = GlobalViewsFeed.run();
    Path jsonl = dir.resolve("coefficients.jsonl");
    List<String> rows = new ArrayList<>();
    for (JsonNode s : f.snapshots) {
      rows.add(JSON.writeValueAsString(s));
    }
    Files.write(jsonl, rows);
    Path avro = dir.resolve("coefficients.avro");
    org.apache.avro.Schema schema = OutputSchemas.Kind.SNAPSHOT.schema();
    try (org.apache.avro.file.DataFileWriter<Object> w =
             new org.apache.avro.file.DataFileWriter<>(new org.apache.avro.generic.GenericDatumWriter<>(schema))) {
      w.create(schema, avro.toFile());
      for (byte[] b : f.avro) {
        w.appendEncoded(java.nio.ByteBuffer.wrap(b));
      }
    }
    String out = print(jsonl, "first");
    assertEquals(out, print(avro, "first"), "the Avro file reads as the JSON one");
    Files.writeString(Path.of("target", "drift-global.txt"), out); // kept to look at
    List<String> lines = Arrays.stream(out.split("\n")).filter(l -> l.matches("^\\d+\\s+2026-.*")).toList();
    List<String> times = f.times();
    assertEquals(times.size(), lines.size(), "one line per snapshot time, not one per partition:\n" + out);
    // the first day every view folded everything; after it, partition 3's view differs and no other's ever does
    for (String l : lines.subList(0, 3)) {
      assertTrue(l.endsWith("| views: 4 agree within 1.0 se"), l);
    }
    String last = lines.get(lines.size() - 1);
    assertTrue(last.matches(".*\\| views: part 3 differs: price -?[0-9.]+ vs -?[0-9.]+ \\([-+][0-9.]+ se\\).*"), last);
    assertTrue(lines.stream().filter(l -> l.contains("part 3 differs")).count() >= 4, out);
    for (String l : lines) {
      assertFalse(l.matches(".*part [012] differs.*"), l);
      // the part column names the model's view, never the one behind
      assertFalse(l.matches("^\\d+\\s+2026-\\S+\\s+3 .*"), l);
    }
    // the weight alarm only partition 3's view raised (its records' price effect is -30) is the model's line's, naming it
    assertTrue(last.contains("| ALARM price down (part 3 only)"), last);
  }

  @Test
  void anAlarmOfSomeViewsIsReportedOnceNamingThem() throws Exception {
    String a = "{\"kind\":\"weight\",\"column\":\"price\",\"direction\":\"down\",\"fired_at\":\"2026-02-01T0%d:00:00Z\"}";
    DriftTable t = new DriftTable("pipeline", 1, null, null);
    String l = null;
    for (int p = 0; p < 3; p++) {
      String alarms = p == 0 ? "" : String.format(a, p);
      // partition 1 took in the most shares: it is the model; partition 0's last_folded names 1 and 2, so the time's
      // line waits for them
      JsonNode s = JSON.readTree("{\"partition\":" + p + ",\"index\":7,\"event_time\":\"2026-02-01T06:00:00Z\",\"ready\":true,"
          + "\"columns\":[{\"name\":\"price\",\"raw_weight\":" + (p == 2 ? -9.0 : -10.0) + ",\"raw_std_error\":0.5,\"drift_score\":-4.5}],"
          + "\"alarms\":[" + alarms + "],\"global_model\":{\"scope\":\"global\",\"shares_made\":3,\"shares_folded\":"
          + (p == 1 ? 7 : 6) + ",\"last_folded\":{" + (p == 0 ? "\"1\":2,\"2\":2" : "\"0\":2") + "},\"view_columns\":1,"
          + "\"other_partitions_columns\":[]}}");
      l = t.take(s);
      if (p < 2) {
        assertNull(l, "the line waits until every known partition reached the time");
      }
    }
    assertTrue(l.startsWith("7     2026-02-01T06:00Z    1 "), l);
    // once, naming the two views that raised it; partition 2's view differs by (−9 − (−10)) / 0.5 = +2 se
    assertTrue(l.contains("| ALARM price down (part 1 2 only)  | views: part 2 differs: price -9.000 vs -10.000 (+2.0 se)"), l);
    assertNull(t.finish());
  }
}
