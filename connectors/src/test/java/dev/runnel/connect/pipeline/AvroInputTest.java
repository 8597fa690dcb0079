package dev.runnel.connect.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.connect.demo.DemoRun;
import dev.runnel.core.config.ConfigException;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.record.FieldType;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.apache.avro.Schema;
import org.apache.avro.generic.GenericData;
import org.apache.avro.generic.GenericDatumWriter;
import org.apache.avro.generic.GenericRecord;
import org.apache.avro.io.BinaryEncoder;
import org.apache.avro.io.EncoderFactory;
import org.apache.kafka.common.TopicPartition;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Avro record values (bytes made by the Avro library's own writer) give the outputs, state and
 * rejects the same records give as JSON, plain and with the registry framing; a value that is no
 * Avro of the schema is a {@code malformed_json} reject that says why, and the stream goes on.
 */
class AvroInputTest {

  private static final ObjectMapper JSON = new ObjectMapper();

  /** The demo's fields as an Avro record, with one field the configuration does not declare. */
  static final String DEMO_SCHEMA = """
      {"type": "record", "name": "Session", "namespace": "quillmarsh.invented",
       "fields": [
         {"name": "kind", "type": "string"},
         {"name": "hub", "type": "string"},
         {"name": "issued_at", "type": "string"},
         {"name": "observed_at", "type": "string"},
         {"name": "note", "type": "string", "default": ""},
         {"name": "weather", "type": ["null", "string"], "default": null},
         {"name": "temperature_c", "type": ["null", "double"], "default": null},
         {"name": "price_per_kwh", "type": ["null", "double"], "default": null},
         {"name": "sessions", "type": ["null", "double"], "default": null}
       ]}""";

  @TempDir Path dir;

  /** The configuration with another input encoding. */
  static PipelineConfig withEncoding(PipelineConfig c, PipelineConfig.InputFormat format, Path schemaFile) {
    PipelineConfig.Input in = c.input();
    PipelineConfig.Input avro = new PipelineConfig.Input(in.topic(), in.schema(), in.eventTime(), in.timeZone(), in.limits(),
        in.clock(), in.forecast(), new PipelineConfig.Encoding(format, schemaFile.toString()));
    return new PipelineConfig(c.name(), avro, c.target(), c.features(), c.model(), c.outputs(), c.kafka(), c.web(),
        c.sourceName(), c.drift(), c.warnings(), c.targetScale());
  }

  /** The demo records that are well-typed JSON objects (the sample data hold broken ones on purpose). */
  static List<String> typedDemoLines(int n) {
    List<String> out = new ArrayList<>();
    Map<String, FieldType> fields = DemoRun.demoConfig().input().schema().fields();
    for (String line : PipelineOnKafkaTest.demoLines(n)) {
      try {
        JsonNode j = JSON.readTree(line);
        boolean ok = j.isObject();
        for (Map.Entry<String, FieldType> f : fields.entrySet()) {
          JsonNode v = j.get(f.getKey());
          if (v != null && !v.isNull()) {
            ok &= f.getValue() == FieldType.NUMBER ? v.isNumber() : v.isTextual();
          } else if (!f.getKey().equals("sessions") && !f.getKey().equals("weather")
              && !f.getKey().equals("temperature_c") && !f.getKey().equals("price_per_kwh")) {
            ok = false; // a required string of the Avro schema
          }
        }
        if (ok) {
          out.add(line);
        }
      } catch (IOException notJson) {
        // left out
      }
    }
    return out;
  }

  /** The JSON record as Avro binary of {@code schema}, written by Avro's GenericDatumWriter. */
  static byte[] avro(Schema schema, String jsonLine, boolean framed) throws IOException {
    JsonNode j = JSON.readTree(jsonLine);
    GenericRecord r = new GenericData.Record(schema);
    for (Schema.Field f : schema.getFields()) {
      JsonNode v = j.get(f.name());
      if (f.name().equals("note")) {
        r.put("note", "undeclared");
      } else if (v == null || v.isNull()) {
        r.put(f.name(), null);
      } else if (v.isNumber()) {
        r.put(f.name(), v.doubleValue());
      } else {
        r.put(f.name(), v.asText());
      }
    }
    return write(schema, r, framed);
  }

  static byte[] write(Schema schema, GenericRecord r, boolean framed) throws IOException {
    ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    if (framed) {
      bytes.write(0);
      bytes.write(ByteBuffer.allocate(4).putInt(42).array()); // the schema id: carried, not looked up
    }
    BinaryEncoder enc = EncoderFactory.get().binaryEncoder(bytes, null);
    new GenericDatumWriter<GenericRecord>(schema).write(r, enc);
    enc.flush();
    return bytes.toByteArray();
  }

  /** Outputs of one processor as strings. */
  static final class Outputs implements dev.runnel.connect.kafka.Emitter {
    final List<String> predictions = new ArrayList<>();
    final List<String> snapshots = new ArrayList<>();
    final List<String> rejects = new ArrayList<>();
    final List<String> settled = new ArrayList<>();

    @Override public void settled(byte[] k, byte[] v) { settled.add(new String(v, java.nio.charset.StandardCharsets.UTF_8)); }
    @Override public void prediction(byte[] k, byte[] v) { predictions.add(new String(v, java.nio.charset.StandardCharsets.UTF_8)); }
    @Override public void snapshot(byte[] k, byte[] v) { snapshots.add(new String(v, java.nio.charset.StandardCharsets.UTF_8)); }
    @Override public void reject(byte[] k, byte[] v) { rejects.add(new String(v, java.nio.charset.StandardCharsets.UTF_8)); }
  }

  @Test
  void avroValuesGiveTheOutputsAndStateOfTheSameJsonRecords() throws IOException {
    Path schemaFile = dir.resolve("session.avsc");
    Files.writeString(schemaFile, DEMO_SCHEMA);
    Schema schema = new Schema.Parser().parse(DEMO_SCHEMA);
    List<String> lines = typedDemoLines(3000);
    assertTrue(lines.size() > 2500, lines.size() + " records");
    PipelineConfig jsonCfg = DemoRun.demoConfig();
    for (PipelineConfig.InputFormat f : List.of(PipelineConfig.InputFormat.AVRO, PipelineConfig.InputFormat.AVRO_FRAMED)) {
      PipelineProcessor fromJson = new PipelineProcessor(jsonCfg, new TopicPartition("in", 0));
      PipelineProcessor fromAvro = new PipelineProcessor(withEncoding(jsonCfg, f, schemaFile), new TopicPartition("in", 0));
      fromJson.restore(null);
      fromAvro.restore(null);
      Outputs a = new Outputs();
      Outputs b = new Outputs();
      for (int i = 0; i < lines.size(); i++) {
        fromJson.process(i, 0L, null, lines.get(i).getBytes(java.nio.charset.StandardCharsets.UTF_8), a);
        fromAvro.process(i, 0L, null, avro(schema, lines.get(i), f == PipelineConfig.InputFormat.AVRO_FRAMED), b);
      }
      assertTrue(a.predictions.size() > 2000, f + ": " + a.predictions.size());
      assertEquals(a.predictions, b.predictions, f.word());
      assertEquals(a.snapshots, b.snapshots, f.word());
      assertEquals(a.settled, b.settled, f.word());
      assertArrayEquals(fromJson.checkpoint(), fromAvro.checkpoint(), f.word());
    }
  }

  /** Bad values: the reject the same value gives in JSON, or malformed_json saying why for bytes that are no Avro of the schema. */
  @Test
  void badValuesAreRejectsThatSayWhyAndTheStreamGoesOn() throws IOException {
    String schemaText = """
        {"type": "record", "name": "Reading", "fields": [
          {"name": "hub", "type": "string"},
          {"name": "at", "type": {"type": "long", "logicalType": "timestamp-millis"}},
          {"name": "temp", "type": ["null", "double"]},
          {"name": "open", "type": "boolean"},
          {"name": "blob", "type": ["null", "bytes"]},
          {"name": "sessions", "type": "double"}]}""";
    Path schemaFile = dir.resolve("reading.avsc");
    Files.writeString(schemaFile, schemaText);
    Schema schema = new Schema.Parser().parse(schemaText);
    PipelineConfig json = ConfigLoader.parse("""
        name: avro-rejects
        input:
          fields: {hub: text, at: time, temp: number, open: flag, blob: text, sessions: number}
          event_time: {field: at, format: iso8601}
          limits: {max_text_length: 12}
        target: sessions
        features:
          - {kind: onehot, field: hub}
          - {kind: numeric, field: temp}
        """, "avro-rejects.yaml");
    PipelineConfig cfg = withEncoding(json, PipelineConfig.InputFormat.AVRO_FRAMED, schemaFile);
    long at = 1_772_359_200_000L; // 2026-03-01T10:00:00Z
    PipelineProcessor p = new PipelineProcessor(cfg, new TopicPartition("in", 0));
    p.restore(null);
    Outputs out = new Outputs();
    List<byte[]> values = new ArrayList<>();
    values.add(write(schema, rec(schema, "QM-01", at, 3.5, null), true));                    // 0: fine
    values.add(write(schema, rec(schema, "QM-01", at, Double.NaN, null), true));             // 1: not_finite
    values.add(write(schema, rec(schema, "a-very-long-hub-name", at, 3.5, null), true));    // 2: too_long
    values.add(write(schema, rec(schema, "QM-01", -40_000_000_000_000L, 3.5, null), true));  // 3: absurd_time
    values.add(write(schema, rec(schema, "QM-01", at, 3.5, new byte[] {1}), true));          // 4: bytes: wrong_type
    byte[] wrongMagic = write(schema, rec(schema, "QM-01", at, 3.5, null), true);
    wrongMagic[0] = 5;
    values.add(wrongMagic);                                                                  // 5: framing
    byte[] whole = write(schema, rec(schema, "QM-01", at, 3.5, null), true);
    values.add(java.util.Arrays.copyOf(whole, whole.length - 4));                            // 6: ends early
    values.add(write(schema, rec(schema, "QM-02", at + 1000, 4.5, null), false));           // 7: no framing
    values.add(write(schema, rec(schema, "QM-01", at + 2000, 2.5, null), true));             // 8: fine again
    for (int i = 0; i < values.size(); i++) {
      p.process(i, 0L, null, values.get(i), out);
    }
    Map<Long, JsonNode> rejects = new java.util.TreeMap<>();
    for (String r : out.rejects) {
      JsonNode j = JSON.readTree(r);
      rejects.put(j.path("source").path("offset").asLong(), j);
    }
    assertEquals(List.of(1L, 2L, 3L, 4L, 5L, 6L, 7L), new ArrayList<>(rejects.keySet()));
    assertEquals("not_finite", rejects.get(1L).path("reason").asText());
    assertEquals("too_long", rejects.get(2L).path("reason").asText());
    assertEquals("absurd_time", rejects.get(3L).path("reason").asText());
    assertEquals("wrong_type", rejects.get(4L).path("reason").asText());
    for (long i : new long[] {5, 6, 7}) {
      assertEquals("malformed_json", rejects.get(i).path("reason").asText(), "value " + i);
    }
    assertTrue(rejects.get(5L).path("detail").asText().contains("0x05"), rejects.get(5L).toString());
    assertTrue(rejects.get(6L).path("detail").asText().contains("not an Avro record of schema Reading"), rejects.get(6L).toString());
    assertEquals(2, out.predictions.size(), "the good values before and after the bad ones");
    // the timestamp-millis value is the event time as ISO 8601 (java.time.Instant's text of the same millis)
    assertTrue(out.predictions.get(0).contains("\"event_time\":\"" + java.time.Instant.ofEpochMilli(at) + "\""), out.predictions.get(0));
  }

  @Test
  void aSchemaFileIsRequiredAndMustBeARecordSchema() throws IOException {
    ConfigException missing = assertThrows(ConfigException.class, () -> ConfigLoader.parse("""
        name: avro-missing
        input:
          fields: {hub: text, sessions: number}
          format: avro
        target: sessions
        features:
          - {kind: onehot, field: hub}
        """, "a.yaml"));
    assertTrue(missing.getMessage().contains("input.avro_schema_file"), missing.getMessage());
    Path notRecord = dir.resolve("s.avsc");
    Files.writeString(notRecord, "\"string\"");
    PipelineConfig cfg = withEncoding(DemoRun.demoConfig(), PipelineConfig.InputFormat.AVRO, notRecord);
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> AvroValues.of(cfg));
    assertTrue(e.getMessage().startsWith("input.avro_schema_file") && e.getMessage().contains("record"), e.getMessage());
    PipelineConfig absent = withEncoding(DemoRun.demoConfig(), PipelineConfig.InputFormat.AVRO, dir.resolve("nope.avsc"));
    IllegalArgumentException e2 = assertThrows(IllegalArgumentException.class, () -> AvroValues.of(absent));
    assertTrue(e2.getMessage().contains("nope.avsc"), e2.getMessage());
  }

  private static GenericRecord rec(Schema s, String hub, long at, Double temp, byte[] blob) {
    GenericRecord r = new GenericData.Record(s);
    r.put("hub", hub);
    r.put("at", at);
    r.put("temp", temp);
    r.put("open", true);
    r.put("blob", blob == null ? null : ByteBuffer.wrap(blob));
    r.put("sessions", 30.0);
    return r;
  }
}
