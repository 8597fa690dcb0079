package dev.runnel.connect.output;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.JsonNodeFactory;
import com.fasterxml.jackson.databind.node.ObjectNode;
import java.io.BufferedReader;
import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.apache.avro.AvroRuntimeException;
import org.apache.avro.Schema;
import org.apache.avro.file.DataFileStream;
import org.apache.avro.generic.GenericDatumReader;
import org.apache.avro.generic.GenericRecord;
import org.apache.avro.io.BinaryDecoder;
import org.apache.avro.io.DecoderFactory;
import org.apache.kafka.common.header.Header;
import org.apache.kafka.common.header.Headers;

/**
 * Reads a published prediction, settled forecast, reject or coefficient snapshot in either encoding and gives it in the
 * JSON layout of docs/formats.md, so every reader in the project (the live page, the demo summary,
 * the run's reject tally) reads JSON and Avro outputs alike. On Kafka the encoding is told by the
 * header {@value OutputSchemas#HEADER_SCHEMA}: present, the value is Avro binary of the schema with
 * that fingerprint; absent, it is JSON. Avro values are decoded by Avro's {@code GenericDatumReader}
 * and laid out as {@code OutputJson} writes them: the same field names and order, a field JSON leaves
 * out left out, NaN as {@code null}, times as ISO 8601 text.
 */
public final class OutputRecords {

  private static final ObjectMapper JSON = new ObjectMapper();
  private static final JsonNodeFactory F = JsonNodeFactory.instance;

  private OutputRecords() { }

  /**
   * One output record from Kafka.
   *
   * @param headers the record's headers. Not modified.
   * @param value the record's value. Not modified.
   * @throws IOException when the value is not JSON (no schema header) or not Avro of a known schema
   */
  public static JsonNode read(Headers headers, byte[] value) throws IOException {
    Header h = headers == null ? null : headers.lastHeader(OutputSchemas.HEADER_SCHEMA);
    return read(h == null ? null : h.value(), value);
  }

  /**
   * One output record whose headers are given as an array (what a processor emits with).
   *
   * @param headers not modified; may be null
   */
  public static JsonNode read(Header[] headers, byte[] value) throws IOException {
    byte[] fp = null;
    if (headers != null) {
      for (Header h : headers) {
        if (h.key().equals(OutputSchemas.HEADER_SCHEMA)) {
          fp = h.value();
        }
      }
    }
    return read(fp, value);
  }

  /**
   * @param schemaHeader the {@value OutputSchemas#HEADER_SCHEMA} header's value; null for JSON
   */
  public static JsonNode read(byte[] schemaHeader, byte[] value) throws IOException {
    if (schemaHeader == null) {
      return JSON.readTree(value);
    }
    OutputSchemas.Kind kind = OutputSchemas.byFingerprint(schemaHeader);
    if (kind == null) {
      throw new IOException("header " + OutputSchemas.HEADER_SCHEMA + ": " + hex(schemaHeader)
          + " is not the fingerprint of an output schema this build knows (format " + OutputSchemas.FORMAT_VERSION
          + ": prediction, settled, reject, snapshot; docs/formats.md); read it with a build of the writer's version");
    }
    return toJson(kind, decode(kind.schema(), value));
  }

  /** One Avro datum of {@code schema}, read by Avro's {@code GenericDatumReader} (maps keep their written order). */
  static GenericRecord decode(Schema schema, byte[] value) throws IOException {
    try {
      BinaryDecoder d = DecoderFactory.get().binaryDecoder(value, null);
      GenericRecord r = new OrderedReader(schema).read(null, d);
      if (!d.isEnd()) {
        throw new IOException("the Avro value has bytes after its " + schema.getName() + " record");
      }
      return r;
    } catch (AvroRuntimeException | IndexOutOfBoundsException | NegativeArraySizeException e) {
      throw new IOException("not an Avro " + schema.getName() + " record: " + e.getMessage(), e);
    }
  }

  /**
   * The records of one {@code replay} output file: {@code .jsonl} (one JSON object a line) or
   * {@code .avro} (an Avro object container file of one of the output schemas).
   */
  public static List<JsonNode> readFile(Path file) throws IOException {
    List<JsonNode> out = new ArrayList<>();
    if (file.getFileName().toString().endsWith(".avro")) {
      try (InputStream in = Files.newInputStream(file);
           DataFileStream<GenericRecord> s = new DataFileStream<>(in, new OrderedReader(null))) {
        OutputSchemas.Kind kind = kindOf(s.getSchema());
        if (kind == null) {
          throw new IOException(file + ": its schema " + s.getSchema().getFullName() + " is not an output schema of format "
              + OutputSchemas.FORMAT_VERSION);
        }
        for (GenericRecord r : s) {
          out.add(toJson(kind, r));
        }
      }
    } else {
      try (BufferedReader r = Files.newBufferedReader(file, StandardCharsets.UTF_8)) {
        for (String l = r.readLine(); l != null; l = r.readLine()) {
          if (!l.isEmpty()) {
            out.add(JSON.readTree(l));
          }
        }
      }
    }
    return out;
  }

  /** The kind whose schema has this one's canonical form, or null. */
  static OutputSchemas.Kind kindOf(Schema s) {
    long fp = org.apache.avro.SchemaNormalization.parsingFingerprint64(s);
    for (OutputSchemas.Kind k : OutputSchemas.Kind.values()) {
      if (k.fingerprint() == fp) {
        return k;
      }
    }
    return null;
  }

  /** A decoded record in the JSON layout of its kind. */
  public static ObjectNode toJson(OutputSchemas.Kind kind, GenericRecord r) {
    return switch (kind) {
      case PREDICTION -> prediction(r);
      case SETTLED -> settled(r);
      case REJECT -> reject(r);
      case SNAPSHOT -> SnapshotAvro.toJson(r);
    };
  }

  private static ObjectNode prediction(GenericRecord r) {
    ObjectNode o = F.objectNode();
    o.put("status", r.get("status").toString());
    GenericRecord src = (GenericRecord) r.get("source");
    long part = (Long) src.get("partition");
    long off = (Long) src.get("offset");
    if (part >= 0 || off >= 0) {
      o.set("source", source(part, off));
    }
    o.put("event_time", time((Long) r.get("event_time")));
    if (r.get("issue_time") != null) {
      o.put("issue_time", time((Long) r.get("issue_time")));
      o.put("target_time", time((Long) r.get("target_time")));
      o.put("horizon_ms", (Long) r.get("horizon_ms"));
      if (r.get("target_passed") != null) {
        o.put("target_passed", (Boolean) r.get("target_passed"));
      }
    }
    Object fields = r.get("fields");
    if (fields != null) {
      ObjectNode f = o.putObject("fields");
      for (Map.Entry<?, ?> e : ((Map<?, ?>) fields).entrySet()) {
        Object v = e.getValue();
        if (v == null) {
          f.putNull(e.getKey().toString());
        } else if (v instanceof Boolean b) {
          f.put(e.getKey().toString(), b);
        } else {
          f.put(e.getKey().toString(), v.toString());
        }
      }
    }
    number(o, "predicted", (Double) r.get("predicted"));
    number(o, "low", (Double) r.get("low"));
    number(o, "high", (Double) r.get("high"));
    number(o, "level", (Double) r.get("level"));
    number(o, "actual", (Double) r.get("actual"));
    number(o, "error", (Double) r.get("error"));
    o.put("columns_version", (Long) r.get("columns_version"));
    return o;
  }

  private static ObjectNode settled(GenericRecord r) {
    ObjectNode o = F.objectNode();
    ObjectNode entity = o.putObject("entity");
    for (Map.Entry<?, ?> e : ((Map<?, ?>) r.get("entity")).entrySet()) {
      entity.put(e.getKey().toString(), e.getValue().toString());
    }
    o.put("issue_time", time((Long) r.get("issue_time")));
    o.put("target_time", time((Long) r.get("target_time")));
    o.put("horizon_ms", (Long) r.get("horizon_ms"));
    number(o, "forecast", (Double) r.get("forecast"));
    number(o, "low", (Double) r.get("low"));
    number(o, "high", (Double) r.get("high"));
    number(o, "level", (Double) r.get("level"));
    number(o, "actual", (Double) r.get("actual"));
    number(o, "error", (Double) r.get("error"));
    o.put("covered", (Boolean) r.get("covered"));
    Object replaced = r.get("replaced_actual");
    if (replaced != null) {
      o.put("correction", true);
      number(o, "replaced_actual", (Double) replaced);
    }
    GenericRecord req = (GenericRecord) r.get("request");
    o.set("request", source((Long) req.get("partition"), (Long) req.get("offset")));
    GenericRecord act = (GenericRecord) r.get("actual_source");
    o.set("actual_source", source((Long) act.get("partition"), (Long) act.get("offset")));
    return o;
  }

  private static ObjectNode reject(GenericRecord r) {
    ObjectNode o = F.objectNode();
    o.put("reason", r.get("reason").toString());
    o.put("detail", r.get("detail").toString());
    GenericRecord src = (GenericRecord) r.get("source");
    long part = (Long) src.get("partition");
    long off = (Long) src.get("offset");
    if (part >= 0 || off >= 0) {
      o.set("source", source(part, off));
    }
    o.put("raw_length", (Long) r.get("raw_length"));
    o.put("raw_truncated", (Boolean) r.get("raw_truncated"));
    o.put("raw", r.get("raw").toString());
    return o;
  }

  /** A source object: the fields that are known (≥ 0), as JSON writes it. */
  private static ObjectNode source(long partition, long offset) {
    ObjectNode s = F.objectNode();
    if (partition >= 0) {
      s.put("partition", partition);
    }
    if (offset >= 0) {
      s.put("offset", offset);
    }
    return s;
  }

  private static void number(ObjectNode o, String name, double v) {
    if (Double.isNaN(v) || Double.isInfinite(v)) {
      o.putNull(name);
    } else {
      o.put(name, v);
    }
  }

  private static String time(long millis) {
    return Instant.ofEpochMilli(millis).toString();
  }

  private static String hex(byte[] b) {
    StringBuilder sb = new StringBuilder();
    for (byte x : b) {
      sb.append(String.format(java.util.Locale.ROOT, "%02x", x));
    }
    return sb.toString();
  }

  /** Avro's generic reader with maps that keep the order their entries were written in. */
  static final class OrderedReader extends GenericDatumReader<GenericRecord> {
    OrderedReader(Schema schema) {
      super(schema);
    }

    @Override
    protected Object newMap(Object old, int size) {
      if (old instanceof LinkedHashMap<?, ?> m) {
        m.clear();
        return m;
      }
      return new LinkedHashMap<>(Math.max(4, 2 * size));
    }
  }
}
