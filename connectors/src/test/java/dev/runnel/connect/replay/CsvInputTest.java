package dev.runnel.connect.replay;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.dataformat.csv.CsvMapper;
import com.fasterxml.jackson.dataformat.csv.CsvSchema;
import dev.runnel.connect.demo.DemoRun;
import dev.runnel.connect.file.FileFormat;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.evaluate.Backtest;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.record.FieldType;
import dev.runnel.core.record.RejectReason;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * CSV files for {@code replay} and {@code backtest}: a CSV file of the same records as a JSON Lines
 * file gives the same outputs bit for bit, a bad cell the reject the same value gives in JSON, and a
 * file that is neither format stops with a message naming it.
 */
class CsvInputTest {

  private static final Path SAMPLE = Path.of("../demo-data/samples/quillmarsh-small.jsonl");
  private static final ObjectMapper JSON = new ObjectMapper();

  @TempDir Path dir;

  /**
   * The demo sample as CSV (cells written by Jackson's CSV writer, with a column the configuration
   * does not declare): same predictions and snapshots, byte for byte, as the JSON Lines file with
   * one blank first line (so line numbers, the records' offsets, agree with the CSV's header line).
   */
  @Test
  void theDemoSampleAsCsvGivesTheSameOutputsAsJsonLines() throws IOException {
    PipelineConfig cfg = DemoRun.demoConfig();
    List<String> columns = new ArrayList<>(cfg.input().schema().names());
    columns.add(2, "note");
    // the sample's records a CSV file can hold: it has a few broken ones on purpose (not JSON, a number
    // as a JSON string), and in CSV a number field's "10.8" is the number 10.8
    List<String> lines = new ArrayList<>();
    for (String line : Files.readAllLines(SAMPLE)) {
      try {
        JsonNode n = JSON.readTree(line);
        boolean typed = n.isObject();
        for (Map.Entry<String, FieldType> f : cfg.input().schema().fields().entrySet()) {
          JsonNode v = n.get(f.getKey());
          if (v != null && !v.isNull()) {
            typed &= f.getValue() == FieldType.NUMBER ? v.isNumber() : v.isTextual();
          }
        }
        if (typed) {
          lines.add(line);
        }
      } catch (IOException notJson) {
        // left out of both files
      }
    }
    assertTrue(lines.size() > 4500, lines.size() + " records"); // the demo sample: 4,951 lines
    Path csv = dir.resolve("sample.csv");
    writeCsv(csv, columns, lines);
    Path jsonl = dir.resolve("sample.jsonl");
    Files.writeString(jsonl, "\n" + String.join("\n", lines) + "\n");

    PipelineStep fromJson = FileReplay.run(cfg, jsonl, dir.resolve("json-out"), null);
    PipelineStep fromCsv = FileReplay.run(cfg, csv, dir.resolve("csv-out"), null);

    assertEquals(lines.size(), fromCsv.records());
    for (String out : List.of("predictions.jsonl", "coefficients.jsonl")) {
      List<String> j = Files.readAllLines(dir.resolve("json-out").resolve(out));
      List<String> c = Files.readAllLines(dir.resolve("csv-out").resolve(out));
      for (int i = 0; i < Math.min(j.size(), c.size()); i++) {
        assertEquals(j.get(i), c.get(i), out + " line " + (i + 1));
      }
      assertArrayEquals(Files.readAllBytes(dir.resolve("json-out").resolve(out)), Files.readAllBytes(dir.resolve("csv-out").resolve(out)), out);
    }
    for (RejectReason r : RejectReason.values()) {
      assertEquals(fromJson.rejected(r), fromCsv.rejected(r), r.id());
    }

    // the backtest's file source: the same metrics from both files
    Backtest a = new Backtest(List.of(new Backtest.Variant("q", cfg)), Backtest.Options.defaults());
    Backtest b = new Backtest(List.of(new Backtest.Variant("q", cfg)), Backtest.Options.defaults());
    long na = ReplayDriver.run(a, new FileSource(jsonl), 1, null);
    long nb = ReplayDriver.run(b, new FileSource(csv, cfg.input().schema().fields()), 1, null);
    assertEquals(na, nb);
    assertTrue(a.result().variant("q").scored() > 1000, "scored " + a.result().variant("q").scored());
    assertEquals(a.result(), b.result()); // records compare doubles by Double.compare: the same bits
  }

  /** Each bad value gives, as a CSV cell, the reject it gives as a JSON value. */
  @Test
  void aBadCellGivesTheRejectOfTheSameValueInJson() throws IOException {
    PipelineConfig cfg = ConfigLoader.parse("""
        name: csv-rejects
        input:
          fields: {hub: text, at: time, temp: number, open: flag, sessions: number}
          event_time: {field: at, format: iso8601}
          limits: {max_text_length: 12, max_record_bytes: 200}
        target: sessions
        features:
          - {kind: onehot, field: hub}
          - {kind: numeric, field: temp}
        """, "csv-rejects.yaml");
    String ok = "2026-03-01T10:00:00Z";
    String long200 = "x".repeat(200);
    // CSV row, the same record as JSON, the reason expected (null: none)
    String[][] cases = {
        {"QM-01," + ok + ",3.5,true,40", "{\"hub\":\"QM-01\",\"at\":\"" + ok + "\",\"temp\":3.5,\"open\":true,\"sessions\":40}", null},
        {"QM-01," + ok + ",warm,true,40", "{\"hub\":\"QM-01\",\"at\":\"" + ok + "\",\"temp\":\"warm\",\"open\":true,\"sessions\":40}", "wrong_type"},
        {"QM-01," + ok + ",3.5,yes,40", "{\"hub\":\"QM-01\",\"at\":\"" + ok + "\",\"temp\":3.5,\"open\":\"yes\",\"sessions\":40}", "wrong_type"},
        {"QM-01," + ok + ",NaN,true,40", "{\"hub\":\"QM-01\",\"at\":\"" + ok + "\",\"temp\":NaN,\"open\":true,\"sessions\":40}", "not_finite"},
        {"QM-01," + ok + ",1e999,true,40", "{\"hub\":\"QM-01\",\"at\":\"" + ok + "\",\"temp\":1e999,\"open\":true,\"sessions\":40}", "not_finite"},
        {"QM-01," + ok + ",5e13,true,40", "{\"hub\":\"QM-01\",\"at\":\"" + ok + "\",\"temp\":5e13,\"open\":true,\"sessions\":40}", "out_of_range"},
        {"QM-01,yesterday,3.5,true,40", "{\"hub\":\"QM-01\",\"at\":\"yesterday\",\"temp\":3.5,\"open\":true,\"sessions\":40}", "bad_time"},
        {"QM-01,1300-01-01T00:00:00Z,3.5,true,40", "{\"hub\":\"QM-01\",\"at\":\"1300-01-01T00:00:00Z\",\"temp\":3.5,\"open\":true,\"sessions\":40}", "absurd_time"},
        {"QM-01,,3.5,true,40", "{\"hub\":\"QM-01\",\"temp\":3.5,\"open\":true,\"sessions\":40}", "missing_field"},
        {"a-very-long-hub-name," + ok + ",3.5,true,40", "{\"hub\":\"a-very-long-hub-name\",\"at\":\"" + ok + "\",\"temp\":3.5,\"open\":true,\"sessions\":40}", "too_long"},
        {"QM-01," + ok + ",3.5,true,40," + long200, "{\"hub\":\"QM-01\",\"at\":\"" + ok + "\",\"temp\":3.5,\"open\":true,\"sessions\":40,\"x\":\"" + long200 + "\"}", "record_too_large"},
        {"\"QM-01," + ok + ",3.5,true,40", "{\"hub\":\"QM-01,", "malformed_json"},
    };
    StringBuilder csv = new StringBuilder("hub,at,temp,open,sessions\n");
    StringBuilder jsonl = new StringBuilder("\n");
    for (String[] c : cases) {
      csv.append(c[0]).append('\n');
      jsonl.append(c[1]).append('\n');
    }
    Files.writeString(dir.resolve("r.csv"), csv);
    Files.writeString(dir.resolve("r.jsonl"), jsonl);
    FileReplay.run(cfg, dir.resolve("r.csv"), dir.resolve("csv-out"), null);
    FileReplay.run(cfg, dir.resolve("r.jsonl"), dir.resolve("json-out"), null);
    Map<Long, String> fromCsv = reasons(dir.resolve("csv-out/rejects.jsonl"));
    Map<Long, String> fromJson = reasons(dir.resolve("json-out/rejects.jsonl"));
    assertEquals(fromJson, fromCsv);
    for (int i = 0; i < cases.length; i++) {
      assertEquals(cases[i][2], fromCsv.get((long) i + 2), cases[i][0]);
    }
  }

  /** A declared name twice in the header: every row is a duplicate_field reject, as the JSON object with the name twice. */
  @Test
  void aFieldNamedTwiceInTheHeaderIsADuplicateField() throws IOException {
    PipelineConfig cfg = ConfigLoader.parse("""
        name: csv-dup
        input:
          fields: {hub: text, sessions: number}
        target: sessions
        features:
          - {kind: onehot, field: hub}
        """, "csv-dup.yaml");
    Files.writeString(dir.resolve("d.csv"), "hub,sessions,hub\nQM-01,3,QM-02\n");
    PipelineStep step = FileReplay.run(cfg, dir.resolve("d.csv"), dir.resolve("out"), null);
    assertEquals(1, step.rejected(RejectReason.DUPLICATE_FIELD));
  }

  /** A file that is neither format stops before any record with a message naming it and what was expected. */
  @Test
  void aFileNeitherJsonLinesNorCsvIsRefusedByName() throws IOException {
    Path semi = dir.resolve("records.txt");
    Files.writeString(semi, "hub;sessions\nQM-01;3\n");
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
        () -> FileReplay.run(DemoRun.demoConfig(), semi, dir.resolve("out"), null));
    assertTrue(e.getMessage().contains(semi.toString()) && e.getMessage().contains("neither JSON Lines nor CSV")
        && e.getMessage().contains("\"hub;sessions\""), e.getMessage());
    assertThrows(IllegalArgumentException.class, () -> new FileSource(semi));
    assertEquals(FileFormat.JSON_LINES, FileFormat.of(SAMPLE, "--source"));
  }

  /** A CSV header naming none of the fields (another delimiter, say) is refused with the header and the fields. */
  @Test
  void aCsvHeaderNamingNoFieldIsRefused() throws IOException {
    Path f = dir.resolve("semi.csv");
    Files.writeString(f, "hub;sessions\nQM-01;3\n");
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
        () -> FileReplay.run(DemoRun.demoConfig(), f, dir.resolve("out"), null));
    assertTrue(e.getMessage().contains("hub;sessions") && e.getMessage().contains("names none of the configuration's fields")
        && e.getMessage().contains("observed_at"), e.getMessage());
    IllegalArgumentException noTypes = assertThrows(IllegalArgumentException.class, () -> new FileSource(f));
    assertTrue(noTypes.getMessage().contains("input.fields"), noTypes.getMessage());
  }

  private static Map<Long, String> reasons(Path rejects) throws IOException {
    Map<Long, String> m = new LinkedHashMap<>();
    for (String line : Files.readAllLines(rejects)) {
      JsonNode n = JSON.readTree(line);
      m.put(n.get("source").get("offset").asLong(), n.get("reason").asText());
    }
    return m;
  }

  /** Writes the JSON lines as CSV with Jackson's CSV writer; a field a line lacks is an empty cell. */
  private static void writeCsv(Path csv, List<String> columns, List<String> lines) throws IOException {
    CsvSchema.Builder b = CsvSchema.builder().setUseHeader(true);
    for (String c : columns) {
      b.addColumn(c);
    }
    List<Map<String, String>> rows = new ArrayList<>();
    for (String line : lines) {
      JsonNode n = JSON.readTree(line);
      Map<String, String> row = new LinkedHashMap<>();
      for (String c : columns) {
        JsonNode v = n.get(c);
        row.put(c, c.equals("note") ? "undeclared, \"quoted\"" : v == null || v.isNull() ? "" : v.asText());
      }
      rows.add(row);
    }
    Files.write(csv, new CsvMapper().writer(b.build()).writeValueAsBytes(rows));
    assertTrue(new String(Files.readAllBytes(csv), StandardCharsets.UTF_8).startsWith(String.join(",", columns)));
  }
}
