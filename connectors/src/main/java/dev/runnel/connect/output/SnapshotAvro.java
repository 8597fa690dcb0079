package dev.runnel.connect.output;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ArrayNode;
import com.fasterxml.jackson.databind.node.JsonNodeFactory;
import com.fasterxml.jackson.databind.node.ObjectNode;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.time.Instant;
import java.time.format.DateTimeParseException;
import java.util.ArrayList;
import java.util.Iterator;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.apache.avro.LogicalType;
import org.apache.avro.LogicalTypes;
import org.apache.avro.Schema;
import org.apache.avro.generic.GenericData;
import org.apache.avro.generic.GenericDatumWriter;
import org.apache.avro.generic.GenericRecord;
import org.apache.avro.io.BinaryEncoder;
import org.apache.avro.io.EncoderFactory;

/**
 * A coefficient snapshot as Avro binary of {@code snapshot.avsc} ({@link OutputSchemas.Kind#SNAPSHOT})
 * and back. The snapshot is made as its JSON layout ({@code OutputJson.snapshot}), read into a tree and
 * laid into the schema field by field (the schema's fields are the JSON's, in its order), then written
 * by Avro's own {@code GenericDatumWriter}. A snapshot comes every {@code snapshots.every} (hours in
 * the demo), so this path's cost does not count; it keeps one layout, the JSON writer's, for both encodings.
 *
 * <p>Values: a double is the JSON number read back (Jackson parses with {@code Double.parseDouble};
 * the JSON text is the shortest decimal that reads back to the same double, {@code Double.toString}'s
 * contract, so the bits are the snapshot's own), a JSON {@code null} number is NaN; a time (a field of
 * logical type {@code timestamp-millis}) is {@code Instant.parse} of the ISO 8601 text, and it is
 * written back with {@code Instant.toString}, as the JSON writer does. A JSON field the schema does not
 * hold fails loudly, so the two layouts cannot drift apart unnoticed.
 */
public final class SnapshotAvro {

  /** Field property: a null union is left out of the JSON (JSON writes the field only when it has a value). */
  static final String ABSENT_WHEN_NULL = "runnel.json_absent_when_null";

  private static final ObjectMapper JSON = new ObjectMapper();
  private static final JsonNodeFactory F = JsonNodeFactory.instance;

  private SnapshotAvro() { }

  /**
   * @param jsonSnapshot one snapshot as {@code OutputJson.snapshot} writes it. Not modified.
   * @return new bytes: one Avro datum of {@code snapshot.avsc}, no framing
   */
  public static byte[] fromJson(byte[] jsonSnapshot) {
    Schema schema = OutputSchemas.Kind.SNAPSHOT.schema();
    try {
      Object datum = toAvro(schema, JSON.readTree(jsonSnapshot), "snapshot");
      ByteArrayOutputStream out = new ByteArrayOutputStream(jsonSnapshot.length / 2);
      BinaryEncoder e = EncoderFactory.get().binaryEncoder(out, null);
      new GenericDatumWriter<Object>(schema).write(datum, e);
      e.flush();
      return out.toByteArray();
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  private static Object toAvro(Schema s, JsonNode n, String at) {
    switch (s.getType()) {
      case RECORD -> {
        if (n == null || !n.isObject()) {
          throw new IllegalStateException(at + ": the JSON snapshot has " + n + " where snapshot.avsc has record " + s.getName());
        }
        GenericData.Record r = new GenericData.Record(s);
        for (Schema.Field f : s.getFields()) {
          r.put(f.pos(), toAvro(f.schema(), n.get(f.name()), at + "." + f.name()));
        }
        for (Iterator<String> it = n.fieldNames(); it.hasNext(); ) {
          String name = it.next();
          if (s.getField(name) == null) {
            throw new IllegalStateException(at + "." + name + ": the JSON snapshot has a field snapshot.avsc ("
                + s.getName() + ") does not hold; add it to the schema");
          }
        }
        return r;
      }
      case UNION -> {
        if (n == null || n.isNull()) {
          return null;
        }
        return toAvro(s.getTypes().get(1), n, at);
      }
      case ARRAY -> {
        List<Object> l = new ArrayList<>(n.size());
        for (JsonNode e : n) {
          l.add(toAvro(s.getElementType(), e, at + "[]"));
        }
        return l;
      }
      case MAP -> {
        Map<String, Object> m = new LinkedHashMap<>();
        for (Iterator<Map.Entry<String, JsonNode>> it = n.fields(); it.hasNext(); ) {
          Map.Entry<String, JsonNode> e = it.next();
          m.put(e.getKey(), toAvro(s.getValueType(), e.getValue(), at + "." + e.getKey()));
        }
        return m;
      }
      case STRING -> {
        if (n == null || !n.isTextual()) {
          throw new IllegalStateException(at + ": the JSON snapshot has " + n + " where snapshot.avsc has a string");
        }
        return n.textValue();
      }
      case LONG -> {
        if (isTime(s)) {
          try {
            return Instant.parse(n.textValue()).toEpochMilli();
          } catch (DateTimeParseException | NullPointerException e) {
            throw new IllegalStateException(at + ": " + n + " is not an ISO 8601 instant", e);
          }
        }
        if (n == null || !n.isIntegralNumber()) {
          throw new IllegalStateException(at + ": the JSON snapshot has " + n + " where snapshot.avsc has a long");
        }
        return n.longValue();
      }
      case DOUBLE -> {
        if (n == null || n.isNull()) {
          return Double.NaN;
        }
        if (!n.isNumber()) {
          throw new IllegalStateException(at + ": the JSON snapshot has " + n + " where snapshot.avsc has a double");
        }
        return n.doubleValue();
      }
      case BOOLEAN -> {
        if (n == null || !n.isBoolean()) {
          throw new IllegalStateException(at + ": the JSON snapshot has " + n + " where snapshot.avsc has a boolean");
        }
        return n.booleanValue();
      }
      default -> throw new IllegalStateException(at + ": snapshot.avsc type " + s.getType() + " is not handled");
    }
  }

  /**
   * A decoded snapshot in the JSON layout: the tree Jackson's parser gives the JSON snapshot's text
   * (equal by {@code equals}), whose text is that JSON snapshot's bytes.
   */
  static ObjectNode toJson(GenericRecord r) {
    return (ObjectNode) toJson(r.getSchema(), r);
  }

  private static JsonNode toJson(Schema s, Object v) {
    switch (s.getType()) {
      case RECORD -> {
        GenericRecord r = (GenericRecord) v;
        ObjectNode o = F.objectNode();
        for (Schema.Field f : s.getFields()) {
          Object x = r.get(f.pos());
          if (x == null && f.schema().getType() == Schema.Type.UNION) {
            boolean absent = Boolean.TRUE.equals(f.getObjectProp(ABSENT_WHEN_NULL))
                // a horizon bucket: "over" only beside a null "up_to" (the last, open bucket)
                || f.name().equals("over") && r.get("up_to") != null;
            if (!absent) {
              o.putNull(f.name());
            }
            continue;
          }
          o.set(f.name(), toJson(f.schema(), x));
        }
        return o;
      }
      case UNION -> {
        return v == null ? F.nullNode() : toJson(s.getTypes().get(1), v);
      }
      case ARRAY -> {
        ArrayNode a = F.arrayNode();
        for (Object e : (List<?>) v) {
          a.add(toJson(s.getElementType(), e));
        }
        return a;
      }
      case MAP -> {
        ObjectNode o = F.objectNode();
        for (Map.Entry<?, ?> e : ((Map<?, ?>) v).entrySet()) {
          o.set(e.getKey().toString(), toJson(s.getValueType(), e.getValue()));
        }
        return o;
      }
      case STRING -> {
        return F.textNode(v.toString());
      }
      case LONG -> {
        long x = (Long) v;
        if (isTime(s)) {
          return F.textNode(Instant.ofEpochMilli(x).toString());
        }
        // the node class Jackson's parser gives the JSON text: int when it fits, so the trees are equal
        return x == (int) x ? F.numberNode((int) x) : F.numberNode(x);
      }
      case DOUBLE -> {
        double d = (Double) v;
        return Double.isFinite(d) ? F.numberNode(d) : F.nullNode();
      }
      case BOOLEAN -> {
        return F.booleanNode((Boolean) v);
      }
      default -> throw new IllegalStateException("snapshot.avsc type " + s.getType() + " is not handled");
    }
  }

  private static boolean isTime(Schema s) {
    LogicalType t = s.getLogicalType();
    return t != null && t.getName().equals(LogicalTypes.timestampMillis().getName());
  }
}
