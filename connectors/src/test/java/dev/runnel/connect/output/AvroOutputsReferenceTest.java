package dev.runnel.connect.output;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assertions.fail;

import com.fasterxml.jackson.databind.JsonNode;
import dev.runnel.connect.demo.DemoRun;
import dev.runnel.connect.replay.FileReplay;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Iterator;
import java.util.List;
import java.util.Map;
import org.apache.avro.Schema;
import org.apache.avro.file.DataFileReader;
import org.apache.avro.generic.GenericDatumReader;
import org.apache.avro.generic.GenericRecord;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;

/**
 * The Avro outputs of a demo run ({@code outputs.encoding: avro}) against the JSON outputs of the
 * same run: decoded by Avro's own {@code GenericDatumReader} (the reference: Apache Avro 1.12.2,
 * {@code org.apache.avro.generic}), every field of every prediction, settled forecast and reject has
 * the JSON record's value, doubles bit for bit; so has every coefficient snapshot (the JSON text read back by Jackson, which parses with
 * {@code Double.parseDouble}, the correctly rounded reading of java.lang). The demo sample has
 * requests, actuals, corrections (settled again, {@code replaced_actual}) and five bad records.
 */
public class AvroOutputsReferenceTest {

  public static final Path SAMPLE = Path.of("../demo-data/samples/quillmarsh-small.jsonl");

  /** The demo configuration's YAML with {@code extra} lines added to its {@code outputs} section. */
  public static PipelineConfig demo(String... extra) throws IOException {
    String yaml;
    try (InputStream in = DemoRun.class.getResourceAsStream(DemoRun.CONFIG_RESOURCE)) {
      yaml = new String(in.readAllBytes(), StandardCharsets.UTF_8);
    }
    String anchor = "outputs:\n";
    assertTrue(yaml.contains(anchor));
    StringBuilder add = new StringBuilder(anchor);
    for (String e : extra) {
      add.append("  ").append(e).append('\n');
    }
    String changed = yaml.replace(anchor, add.toString());
    for (String e : extra) {
      // a key given twice would be refused; the demo's own echo_fields line goes when the test sets it
      if (e.startsWith("echo_fields:")) {
        changed = changed.replaceFirst("(?m)^  echo_fields: \\[hub\\].*\\n", "");
      }
    }
    return ConfigLoader.parse(changed, "demo-test.yaml");
  }

  static Path replay(PipelineConfig cfg, Path dir) throws IOException {
    FileReplay.run(cfg, SAMPLE, dir, null);
    return dir;
  }

  @ParameterizedTest(name = "{0}")
  @ValueSource(strings = {"demo outputs", "significant_digits: 6", "echo_fields: [kind, hub, weather]"})
  void genericDatumReaderReadsEveryFieldAsJsonHasIt(String variant, @TempDir Path dir) throws IOException {
    String[] extra = variant.equals("demo outputs") ? new String[0] : new String[] {variant};
    Path json = replay(demo(extra), dir.resolve("json"));
    String[] avroExtra = java.util.Arrays.copyOf(extra, extra.length + 1);
    avroExtra[extra.length] = "encoding: avro";
    PipelineConfig avroCfg = demo(avroExtra);
    assertEquals(PipelineConfig.OutputEncoding.AVRO, avroCfg.outputs().encoding());
    Path avro = replay(avroCfg, dir.resolve("avro"));
    assertFalse(Files.exists(avro.resolve("predictions.jsonl")), "Avro replaces the JSON Lines files");
    assertFalse(Files.exists(avro.resolve("coefficients.jsonl")), "snapshots are Avro too");
    List<JsonNode> snapshots = OutputRecords.readFile(json.resolve("coefficients.jsonl"));
    List<GenericRecord> avroSnapshots = new ArrayList<>();
    try (DataFileReader<GenericRecord> r = new DataFileReader<>(avro.resolve("coefficients.avro").toFile(),
        new GenericDatumReader<>(OutputSchemas.Kind.SNAPSHOT.schema()))) {
      assertEquals(OutputSchemas.Kind.SNAPSHOT.fingerprint(), org.apache.avro.SchemaNormalization.parsingFingerprint64(r.getSchema()));
      r.forEach(avroSnapshots::add);
    }
    assertEquals(snapshots.size(), avroSnapshots.size(), "as many snapshots");
    assertTrue(snapshots.size() >= 3, "the sample gives some snapshots: " + snapshots.size());
    int[] seen = new int[5];
    for (int i = 0; i < snapshots.size(); i++) {
      sameSnapshotValue(avroSnapshots.get(i).getSchema(), avroSnapshots.get(i), snapshots.get(i), "snapshot " + i, seen);
    }
    // every kind of value was met: doubles, NaN for a JSON null, times, absent optional parts, map entries
    assertTrue(seen[0] > 1000 && seen[1] > 0 && seen[2] > 10 && seen[3] > 0 && seen[4] > 0,
        "values compared (doubles, nulls as NaN, times, absent parts, map entries): " + java.util.Arrays.toString(seen));
    int compared = 0;
    for (String[] pair : new String[][] {{"predictions", "PREDICTION"}, {"settled", "SETTLED"}, {"rejects", "REJECT"}}) {
      List<JsonNode> expected = OutputRecords.readFile(json.resolve(pair[0] + ".jsonl"));
      OutputSchemas.Kind kind = OutputSchemas.Kind.valueOf(pair[1]);
      List<GenericRecord> got = new ArrayList<>();
      try (DataFileReader<GenericRecord> r = new DataFileReader<>(avro.resolve(pair[0] + ".avro").toFile(),
          new GenericDatumReader<>(kind.schema()))) {
        assertEquals(kind.fingerprint(), org.apache.avro.SchemaNormalization.parsingFingerprint64(r.getSchema()),
            "the container file's writer schema is the published one");
        r.forEach(got::add);
      }
      assertEquals(expected.size(), got.size(), pair[0] + ": as many records");
      assertTrue(expected.size() >= 5, pair[0] + ": the sample gives some: " + expected.size());
      for (int i = 0; i < got.size(); i++) {
        sameRecord(got.get(i), expected.get(i), pair[0] + " record " + i);
        compared++;
      }
    }
    assertTrue(compared > 8000, "records compared: " + compared);
  }

  /** Every field of the Avro record (by its schema) against the JSON object; the JSON has no other field. */
  static void sameRecord(GenericRecord a, JsonNode j, String where) {
    List<String> jsonFields = new ArrayList<>();
    j.fieldNames().forEachRemaining(jsonFields::add);
    int matched = 0;
    for (Schema.Field f : a.getSchema().getFields()) {
      String name = f.name();
      Object v = a.get(name);
      String at = where + " field " + name + " (" + j + ")";
      switch (name) {
        case "status", "reason", "detail", "raw" -> assertEquals(j.get(name).asText(), v.toString(), at);
        case "source", "request", "actual_source" -> {
          GenericRecord s = (GenericRecord) v;
          long part = (Long) s.get("partition");
          long off = (Long) s.get("offset");
          JsonNode js = j.get(name);
          if (part < 0 && off < 0 && name.equals("source")) {
            assertNull(js, at);
            continue;
          }
          assertEquals(js.has("partition") ? js.get("partition").asLong() : -1L, part, at);
          assertEquals(js.has("offset") ? js.get("offset").asLong() : -1L, off, at);
        }
        case "event_time", "issue_time", "target_time" -> {
          if (v == null) {
            assertNull(j.get(name), at);
            continue;
          }
          assertEquals(Instant.parse(j.get(name).asText()).toEpochMilli(), (long) (Long) v, at);
        }
        case "horizon_ms", "columns_version", "raw_length" -> {
          if (v == null) {
            assertNull(j.get(name), at);
            continue;
          }
          assertTrue(j.get(name).isIntegralNumber(), at);
          assertEquals(j.get(name).asLong(), (long) (Long) v, at);
        }
        case "target_passed", "covered", "raw_truncated" -> {
          if (v == null) {
            assertNull(j.get(name), at);
            continue;
          }
          assertEquals(j.get(name).asBoolean(), (boolean) (Boolean) v, at);
          assertTrue(j.get(name).isBoolean(), at);
        }
        case "predicted", "low", "high", "level", "actual", "error", "forecast" -> sameDouble(j.get(name), (Double) v, at);
        case "replaced_actual" -> {
          if (v == null) {
            assertNull(j.get("correction"), at);
            assertNull(j.get(name), at);
            continue;
          }
          assertTrue(j.get("correction").asBoolean(), at);
          sameDouble(j.get(name), (Double) v, at);
          matched++; // "correction" is told by this field
        }
        case "fields", "entity" -> {
          if (v == null) {
            assertNull(j.get(name), at);
            continue;
          }
          JsonNode jo = j.get(name);
          Map<?, ?> m = (Map<?, ?>) v;
          assertEquals(jo.size(), m.size(), at);
          for (Map.Entry<?, ?> e : m.entrySet()) {
            JsonNode jv = jo.get(e.getKey().toString());
            assertNotNull(jv, at + " key " + e.getKey());
            if (e.getValue() instanceof Boolean b) {
              assertEquals(jv.asBoolean(), b, at);
              assertTrue(jv.isBoolean(), at);
            } else if (e.getValue() == null) {
              assertTrue(jv.isNull(), at);
            } else {
              assertEquals(jv.asText(), e.getValue().toString(), at);
              assertTrue(jv.isTextual(), at);
            }
          }
        }
        default -> fail(where + ": schema field " + name + " is not compared by this test");
      }
      matched++;
    }
    assertEquals(jsonFields.size(), matched, where + ": the JSON has exactly the fields the Avro record holds: " + jsonFields);
  }

  /**
   * A value Avro's reader gave for {@code schema} against the JSON snapshot's node, following the
   * schema (docs/formats.md): a record has exactly the JSON object's fields, in its order, save a null
   * union the JSON leaves out (marked {@code runnel.json_absent_when_null}, or {@code over} beside a
   * {@code up_to} that is not null); a double has the JSON number's bits (NaN for null); a time is the
   * ISO 8601 text's instant ({@code java.time.Instant.parse}). {@code seen} counts doubles, NaNs, times,
   * absent fields and map entries.
   */
  static void sameSnapshotValue(Schema schema, Object v, JsonNode j, String at, int[] seen) {
    switch (schema.getType()) {
      case RECORD -> {
        GenericRecord r = (GenericRecord) v;
        assertTrue(j != null && j.isObject(), at + ": " + j);
        List<String> expectedNames = new ArrayList<>();
        for (Schema.Field f : schema.getFields()) {
          Object x = r.get(f.name());
          boolean absent = x == null && (Boolean.TRUE.equals(f.getObjectProp("runnel.json_absent_when_null"))
              || f.name().equals("over") && r.get("up_to") != null);
          if (absent) {
            assertFalse(j.has(f.name()), at + "." + f.name() + " is null in Avro and absent in JSON");
            seen[3]++;
            continue;
          }
          expectedNames.add(f.name());
          sameSnapshotValue(f.schema(), x, j.get(f.name()), at + "." + f.name(), seen);
        }
        List<String> names = new ArrayList<>();
        j.fieldNames().forEachRemaining(names::add);
        assertEquals(names, expectedNames, at + ": the JSON's fields, in order");
      }
      case UNION -> {
        if (v == null) {
          assertTrue(j != null && j.isNull(), at + ": Avro null, JSON " + j);
        } else {
          sameSnapshotValue(schema.getTypes().get(1), v, j, at, seen);
        }
      }
      case ARRAY -> {
        List<?> l = (List<?>) v;
        assertTrue(j.isArray(), at);
        assertEquals(j.size(), l.size(), at);
        for (int i = 0; i < l.size(); i++) {
          sameSnapshotValue(schema.getElementType(), l.get(i), j.get(i), at + "[" + i + "]", seen);
        }
      }
      case MAP -> {
        Map<?, ?> m = (Map<?, ?>) v;
        assertTrue(j.isObject(), at);
        assertEquals(j.size(), m.size(), at);
        for (Map.Entry<?, ?> e : m.entrySet()) {
          sameSnapshotValue(schema.getValueType(), e.getValue(), j.get(e.getKey().toString()), at + "." + e.getKey(), seen);
          seen[4]++;
        }
      }
      case STRING -> {
        assertTrue(j.isTextual(), at + ": " + j);
        assertEquals(j.textValue(), v.toString(), at);
      }
      case LONG -> {
        if (schema.getLogicalType() != null) {
          assertEquals("timestamp-millis", schema.getLogicalType().getName(), at);
          assertEquals(Instant.parse(j.textValue()).toEpochMilli(), (long) (Long) v, at);
          seen[2]++;
        } else {
          assertTrue(j.isIntegralNumber(), at + ": " + j);
          assertEquals(j.longValue(), (long) (Long) v, at);
        }
      }
      case DOUBLE -> {
        sameDouble(j, (Double) v, at);
        seen[Double.isNaN((Double) v) ? 1 : 0]++;
      }
      case BOOLEAN -> {
        assertTrue(j.isBoolean(), at + ": " + j);
        assertEquals(j.booleanValue(), (boolean) (Boolean) v, at);
      }
      default -> fail(at + ": schema type " + schema.getType() + " is not compared by this test");
    }
  }

  /** JSON null ⇔ a double that is not finite; else the same bits. */
  static void sameDouble(JsonNode j, double v, String at) {
    assertNotNull(j, at);
    if (j.isNull()) {
      assertFalse(Double.isFinite(v), at + ": JSON null, Avro " + v);
    } else {
      assertTrue(j.isNumber(), at);
      assertEquals(Double.doubleToRawLongBits(j.doubleValue()), Double.doubleToRawLongBits(v),
          at + ": JSON " + j.doubleValue() + ", Avro " + v);
    }
  }

  @Test
  void theProjectsReaderGivesTheJsonLayoutFromAvro(@TempDir Path dir) throws IOException {
    Path json = replay(demo(), dir.resolve("json"));
    Path avro = replay(demo("encoding: avro"), dir.resolve("avro"));
    for (String name : List.of("predictions", "settled", "rejects", "coefficients")) {
      List<JsonNode> a = OutputRecords.readFile(avro.resolve(name + ".avro"));
      List<JsonNode> j = OutputRecords.readFile(json.resolve(name + ".jsonl"));
      assertEquals(j.size(), a.size(), name);
      for (int i = 0; i < j.size(); i++) {
        sameJson(j.get(i), a.get(i), name + " record " + i);
      }
    }
    // a snapshot read back from Avro is written by Jackson as the very line the JSON encoding wrote
    List<String> lines = Files.readAllLines(json.resolve("coefficients.jsonl"), StandardCharsets.UTF_8);
    List<JsonNode> a = OutputRecords.readFile(avro.resolve("coefficients.avro"));
    assertEquals(lines.size(), a.size());
    com.fasterxml.jackson.databind.ObjectMapper m = new com.fasterxml.jackson.databind.ObjectMapper();
    for (int i = 0; i < lines.size(); i++) {
      assertEquals(lines.get(i), m.writeValueAsString(a.get(i)), "snapshot " + i);
      assertEquals(m.readTree(lines.get(i)), a.get(i), "snapshot " + i + ": the tree Jackson parses from the JSON line");
    }
    // drift --file: the same table from coefficients.avro as from coefficients.jsonl
    String[] drift = new String[2];
    int k = 0;
    for (Path f : List.of(avro.resolve("coefficients.avro"), json.resolve("coefficients.jsonl"))) {
      java.io.ByteArrayOutputStream b = new java.io.ByteArrayOutputStream();
      assertEquals(0, dev.runnel.connect.cli.DriftCommandAccess.printFile(f, new dev.runnel.connect.drift.DriftTable("first", 3, null, null),
          new java.io.PrintStream(b, true, StandardCharsets.UTF_8)));
      drift[k++] = b.toString(StandardCharsets.UTF_8);
    }
    assertTrue(drift[1].lines().count() > 10, drift[1]);
    assertEquals(drift[1], drift[0], "drift --file of coefficients.avro = of coefficients.jsonl");
  }

  @Test
  void aSnapshotFieldTheSchemaLacksFailsAndNamesIt() throws IOException {
    String snapshot = "{\"format\":2,\"pipeline\":\"p\",\"partition\":0,\"index\":1,\"event_time\":null,\"records\":1,"
        + "\"trained\":1,\"no_target_records\":0,\"rejected\":0,\"columns_version\":1,\"ready\":false,\"noise_sd\":null,"
        + "\"residual_sd\":null,\"effective_sample_size\":1.5,\"metrics\":{\"count\":0,\"overall\":{\"mae\":null,\"rmse\":null,"
        + "\"bias\":null,\"coverage\":null},\"recent\":{\"mae\":null,\"rmse\":null,\"bias\":null,\"coverage\":null}},"
        + "\"columns\":[],\"alarms\":[],\"vocabularies\":[]%s,\"standardization\":[]}";
    // the well-formed one goes through and comes back as the same text; so does one with model.scope: global's part
    // (docs/formats.md, "global_model"; the demo runs one model per partition, so its replay has none)
    String global = ",\"global_model\":{\"scope\":\"global\",\"shares_made\":4,\"shares_folded\":9,"
        + "\"last_folded\":{\"1\":41,\"3\":12345678901},\"view_columns\":3,\"other_partitions_columns\":[{\"name\":\"hub=QM-02\","
        + "\"weight\":0.1,\"std_error\":null,\"raw_weight\":-2.5E-7,\"raw_std_error\":1.0E300}]}";
    for (String part : List.of("", global)) {
      byte[] ok = String.format(java.util.Locale.ROOT, snapshot, part).getBytes(StandardCharsets.UTF_8);
      JsonNode back = SnapshotAvro.toJson(OutputRecords.decode(OutputSchemas.Kind.SNAPSHOT.schema(), SnapshotAvro.fromJson(ok)));
      assertEquals(new String(ok, StandardCharsets.UTF_8), back.toString());
    }
    byte[] extra = String.format(java.util.Locale.ROOT, snapshot, ",\"new_part\":3").getBytes(StandardCharsets.UTF_8);
    IllegalStateException e = org.junit.jupiter.api.Assertions.assertThrows(IllegalStateException.class, () -> SnapshotAvro.fromJson(extra));
    assertTrue(e.getMessage().contains("new_part") && e.getMessage().contains("snapshot.avsc"), e.getMessage());
  }

  /**
   * The same JSON tree, field names in the same order; numbers compared by value (an integral
   * number as a long, any other by its double's bits), whatever node class holds them.
   */
  public static void sameJson(JsonNode expected, JsonNode got, String at) {
    if (expected.isNumber()) {
      assertTrue(got.isNumber(), at + ": " + got);
      if (expected.isIntegralNumber()) {
        assertTrue(got.isIntegralNumber(), at + ": " + got);
        assertEquals(expected.asLong(), got.asLong(), at);
      } else {
        assertEquals(Double.doubleToRawLongBits(expected.doubleValue()), Double.doubleToRawLongBits(got.doubleValue()), at);
      }
    } else if (expected.isObject()) {
      assertTrue(got.isObject(), at + ": " + got);
      List<String> en = new ArrayList<>();
      List<String> gn = new ArrayList<>();
      expected.fieldNames().forEachRemaining(en::add);
      got.fieldNames().forEachRemaining(gn::add);
      assertEquals(en, gn, at + ": field names in order");
      for (String n : en) {
        sameJson(expected.get(n), got.get(n), at + "." + n);
      }
    } else if (expected.isArray()) {
      assertEquals(expected.size(), got.size(), at);
      Iterator<JsonNode> e = expected.elements();
      Iterator<JsonNode> g = got.elements();
      for (int i = 0; e.hasNext(); i++) {
        sameJson(e.next(), g.next(), at + "[" + i + "]");
      }
    } else {
      assertEquals(expected, got, at);
    }
  }

  @Test
  void twoReplaysWriteTheSameFileBytes(@TempDir Path dir) throws IOException {
    PipelineConfig cfg = demo("encoding: avro");
    Path a = replay(cfg, dir.resolve("a"));
    Path b = replay(cfg, dir.resolve("b"));
    for (String f : List.of("predictions.avro", "settled.avro", "rejects.avro", "coefficients.avro", "format.json")) {
      assertArrayEquals(Files.readAllBytes(a.resolve(f)), Files.readAllBytes(b.resolve(f)), f);
    }
  }

  @Test
  void fingerprintsAreTheSchemasAndTheDocsListThem() throws IOException {
    String docs = Files.readString(Path.of("../docs/formats.md"));
    for (OutputSchemas.Kind k : OutputSchemas.Kind.values()) {
      // the header is the 64-bit fingerprint little-endian (Avro specification, "Schema Fingerprints" and single-object encoding)
      byte[] h = k.fingerprintBytes();
      long back = 0;
      for (int i = 7; i >= 0; i--) {
        back = (back << 8) | (h[i] & 0xFF);
      }
      assertEquals(org.apache.avro.SchemaNormalization.parsingFingerprint64(k.schema()), back, k.name());
      assertEquals(k, OutputSchemas.byFingerprint(h));
      StringBuilder hex = new StringBuilder();
      for (byte x : h) {
        hex.append(String.format(java.util.Locale.ROOT, "%02x", x));
      }
      assertTrue(docs.contains("`" + k.file() + "`") && docs.contains(hex.toString()),
          "docs/formats.md names " + k.file() + " and its header bytes " + hex);
      String file;
      try (InputStream in = OutputSchemas.class.getResourceAsStream(OutputSchemas.RESOURCE_DIR + k.file())) {
        file = new String(in.readAllBytes(), StandardCharsets.UTF_8).strip();
      }
      assertTrue(docs.contains("```json\n" + file + "\n```"), "docs/formats.md shows " + k.file() + " as shipped");
    }
    assertNull(OutputSchemas.byFingerprint(new byte[8]));
    assertNull(OutputSchemas.byFingerprint(new byte[3]));
  }

  @Test
  void anUnknownFingerprintIsAnErrorThatSaysWhat() {
    IOException e = org.junit.jupiter.api.Assertions.assertThrows(IOException.class,
        () -> OutputRecords.read(new byte[] {1, 2, 3, 4, 5, 6, 7, 8}, new byte[] {2}));
    assertTrue(e.getMessage().contains("runnel.schema") && e.getMessage().contains("0102030405060708"), e.getMessage());
  }
}
