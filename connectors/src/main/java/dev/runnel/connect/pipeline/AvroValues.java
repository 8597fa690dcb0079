package dev.runnel.connect.pipeline;

import com.fasterxml.jackson.core.JsonEncoding;
import com.fasterxml.jackson.core.JsonFactory;
import com.fasterxml.jackson.core.JsonGenerator;
import com.fasterxml.jackson.core.json.JsonWriteFeature;
import com.fasterxml.jackson.core.util.ByteArrayBuilder;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.record.FieldType;
import dev.runnel.core.record.RecordSchema;
import dev.runnel.core.record.TimeFormat;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.util.Collection;
import java.util.List;
import org.apache.avro.AvroRuntimeException;
import org.apache.avro.LogicalType;
import org.apache.avro.Schema;
import org.apache.avro.SchemaParseException;
import org.apache.avro.generic.GenericDatumReader;
import org.apache.avro.generic.GenericEnumSymbol;
import org.apache.avro.generic.GenericRecord;
import org.apache.avro.io.BinaryDecoder;
import org.apache.avro.io.DecoderFactory;

/**
 * Turns an Avro record value into the JSON object the record decoder reads, so an Avro record meets
 * the same checks, reject reasons and limits as a JSON one (docs/operations.md, "Input formats").
 * The schema is the one in {@code input.avro_schema_file}; with {@code input.format: avro_framed}
 * each value starts with one byte 0 and a 4-byte schema id (the common registry framing), and the id
 * is not looked up: the value must be written with the file's schema. One thread.
 *
 * <p>Per declared field present in the Avro record: Avro {@code null} is an absent field; strings and
 * enum symbols are JSON strings; {@code int}, {@code long}, {@code float} and {@code double} are JSON
 * numbers (NaN and infinities as the non-finite words, so {@code not_finite}); {@code boolean} is a
 * JSON boolean; a {@code long} with the logical type {@code timestamp-millis} or
 * {@code timestamp-micros} for a {@code time} field that is not an epoch event time is ISO 8601 text
 * in UTC. Bytes, fixed, records, arrays and maps have no JSON value of a declared type and are written
 * as an empty object, which the decoder rejects as {@code wrong_type}. Undeclared Avro fields are left
 * out.
 */
public final class AvroValues {

  private final Schema schema;
  private final boolean framed;
  private final String[] names;
  private final FieldType[] types;
  private final boolean[] epochTime;
  private final GenericDatumReader<GenericRecord> reader;
  private final JsonFactory json = JsonFactory.builder().disable(JsonWriteFeature.WRITE_NAN_AS_STRINGS).build();
  private final ByteArrayBuilder out = new ByteArrayBuilder(512);
  private BinaryDecoder decoder;
  private GenericRecord reuse;
  private String problem = "";

  /**
   * @param schema the writer's schema, a record
   * @param framed whether each value carries the 5-byte registry framing
   * @param fields the declared fields. Not modified.
   * @param epochTimeField the event-time field when its format is an epoch format (its timestamps stay
   *     numbers), else null
   * @throws IllegalArgumentException if the schema is not a record
   */
  public AvroValues(Schema schema, boolean framed, RecordSchema fields, String epochTimeField) {
    if (schema.getType() != Schema.Type.RECORD) {
      throw new IllegalArgumentException("input.avro_schema_file: the schema is a " + schema.getType().getName()
          + "; give the schema of a record whose fields are the input fields");
    }
    this.schema = schema;
    this.framed = framed;
    this.names = fields.names().toArray(new String[0]);
    this.types = new FieldType[names.length];
    this.epochTime = new boolean[names.length];
    for (int i = 0; i < names.length; i++) {
      types[i] = fields.type(i);
      epochTime[i] = names[i].equals(epochTimeField);
    }
    this.reader = new GenericDatumReader<>(schema);
  }

  /**
   * The converter a configuration asks for, or null for JSON input.
   *
   * @throws IllegalArgumentException if {@code input.avro_schema_file} cannot be read or is not an Avro
   *     record schema (the message names the key, the file and the fix)
   */
  public static AvroValues of(PipelineConfig config) {
    PipelineConfig.Encoding enc = config.input().encoding();
    if (enc.format() == PipelineConfig.InputFormat.JSON) {
      return null;
    }
    Path file = Path.of(enc.avroSchemaFile());
    Schema s;
    try {
      s = new Schema.Parser().parse(Files.readString(file));
    } catch (IOException e) {
      throw new IllegalArgumentException("input.avro_schema_file: " + file + " cannot be read (" + e.getMessage()
          + "); give the path of the Avro schema file the values are written with");
    } catch (SchemaParseException e) {
      throw new IllegalArgumentException("input.avro_schema_file: " + file + " is not an Avro schema: " + e.getMessage());
    }
    String epochField = config.input().eventTime()
        .filter(et -> et.format() != TimeFormat.ISO8601).map(PipelineConfig.EventTime::field).orElse(null);
    return new AvroValues(s, enc.format() == PipelineConfig.InputFormat.AVRO_FRAMED, config.input().schema(), epochField);
  }

  /** The schema values are read with. */
  public Schema schema() {
    return schema;
  }

  /** Why the last {@link #toJson} returned null; empty after a success. */
  public String problem() {
    return problem;
  }

  /**
   * The JSON object for {@code value}, or null when it is no Avro record of the schema ({@link #problem}
   * says why: a missing or wrong framing byte, a value that ends early, bytes left after the record).
   *
   * @param value the record value. Not modified.
   * @return new bytes, or null
   */
  public byte[] toJson(byte[] value) {
    problem = "";
    int off = 0;
    if (framed) {
      if (value.length < 5) {
        problem = "the value has " + value.length + " bytes; a framed Avro value starts with 5 (a byte 0 and a 4-byte schema id)";
        return null;
      }
      if (value[0] != 0) {
        problem = String.format(java.util.Locale.ROOT,
            "the value starts with the byte 0x%02x; a framed Avro value starts with 0x00 and a 4-byte schema id", value[0] & 0xff);
        return null;
      }
      off = 5;
    }
    GenericRecord rec;
    try {
      decoder = DecoderFactory.get().binaryDecoder(value, off, value.length - off, decoder);
      rec = reader.read(reuse, decoder);
      if (!decoder.isEnd()) {
        problem = "bytes are left after the Avro record of schema " + schema.getFullName()
            + "; the value was written with another schema";
        return null;
      }
    } catch (IOException | AvroRuntimeException | IndexOutOfBoundsException | NegativeArraySizeException e) {
      problem = "not an Avro record of schema " + schema.getFullName() + ": " + oneLine(e);
      return null;
    }
    reuse = rec;
    return write(rec);
  }

  private byte[] write(GenericRecord rec) {
    out.reset();
    try (JsonGenerator g = json.createGenerator(out, JsonEncoding.UTF8)) {
      g.writeStartObject();
      for (int i = 0; i < names.length; i++) {
        Schema.Field f = schema.getField(names[i]);
        if (f == null) {
          continue;
        }
        Object v = rec.get(f.pos());
        if (v == null) {
          continue;
        }
        g.writeFieldName(names[i]);
        writeValue(g, v, valueSchema(f.schema(), v), types[i], epochTime[i]);
      }
      g.writeEndObject();
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
    return out.toByteArray();
  }

  private static void writeValue(JsonGenerator g, Object v, Schema s, FieldType type, boolean epoch) throws IOException {
    if (v instanceof CharSequence || v instanceof GenericEnumSymbol<?>) {
      g.writeString(v.toString());
    } else if (v instanceof Boolean b) {
      g.writeBoolean(b);
    } else if (v instanceof Integer n) {
      g.writeNumber(n);
    } else if (v instanceof Long n) {
      LogicalType lt = s == null ? null : s.getLogicalType();
      if (type == FieldType.TIME && !epoch && lt != null && lt.getName().equals("timestamp-millis")) {
        g.writeString(Instant.ofEpochMilli(n).toString());
      } else if (type == FieldType.TIME && !epoch && lt != null && lt.getName().equals("timestamp-micros")) {
        g.writeString(Instant.ofEpochSecond(Math.floorDiv(n, 1_000_000L), Math.floorMod(n, 1_000_000L) * 1000L).toString());
      } else {
        g.writeNumber(n);
      }
    } else if (v instanceof Float x) {
      g.writeNumber(x.doubleValue());
    } else if (v instanceof Double x) {
      g.writeNumber(x);
    } else if (v instanceof Collection<?>) {
      g.writeStartArray();
      g.writeEndArray();
    } else {
      // bytes, fixed, a record, a map: no value of a declared type
      g.writeStartObject();
      g.writeEndObject();
    }
  }

  /** The branch of a union the value was read from (null and one other type is the usual union). */
  private static Schema valueSchema(Schema s, Object v) {
    if (s.getType() != Schema.Type.UNION) {
      return s;
    }
    List<Schema> types = s.getTypes();
    for (Schema t : types) {
      if (t.getType() == Schema.Type.LONG && v instanceof Long) {
        return t;
      }
    }
    return null;
  }

  private static String oneLine(Throwable e) {
    String m = e.getMessage() == null ? e.getClass().getSimpleName() : e.getMessage();
    return m.replace('\n', ' ').replace('\r', ' ');
  }
}
