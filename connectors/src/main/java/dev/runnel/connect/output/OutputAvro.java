package dev.runnel.connect.output;

import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.OutputJson;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.pipeline.SettledForecast;
import dev.runnel.core.pipeline.Snapshot;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.FieldType;
import dev.runnel.core.record.RecordSchema;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import java.util.Arrays;
import java.util.List;

/**
 * Writes predictions, settled forecasts and rejects (and, through {@link SnapshotAvro}, coefficient snapshots) as Avro binary of the writer schemas in
 * {@link OutputSchemas} (one datum, no framing: the schema's fingerprint goes into a Kafka header).
 * The same fields and values as {@link OutputJson}: the echoed fields of {@code outputs.echo_fields},
 * the rounding of {@code outputs.significant_digits}; doubles are written as they are (8 bytes, the
 * exact value), a number JSON writes as {@code null} is NaN (a non-finite value stays as it is).
 *
 * <p>The binary encoding is written by hand (Avro specification, "Binary Encoding": zig-zag varint
 * longs, little-endian IEEE 754 doubles, a string as its byte length and UTF-8 bytes, a union as the
 * branch index and the value, a map as one block of entries and a zero count), into one reused
 * buffer: a record costs its result array only. {@code OutputAvroTest} and
 * {@code AvroOutputsOnKafkaTest} read what it writes with Avro's own {@code GenericDatumReader}.
 * One thread.
 */
public final class OutputAvro implements OutputEncoder {

  private final double level;
  /** Names of the echoed fields; null = every text and flag field. */
  private final String[] echo;
  private final int digits;
  private RecordSchema namesFor;
  /** UTF-8 bytes of each field name of {@link #namesFor}. */
  private byte[][] names;
  private int[] echoSlots;
  private byte[] buf = new byte[512];
  private int n;

  /**
   * @param intervalLevel the configured interval level, written beside each interval
   * @param echoFields as {@link OutputJson}'s; null = every text and flag field. Not modified.
   * @param significantDigits 0 = exact; 1..15 as {@link OutputJson}'s
   */
  public OutputAvro(double intervalLevel, List<String> echoFields, int significantDigits) {
    if (significantDigits < 0 || significantDigits > OutputJson.MAX_DIGITS) {
      throw new IllegalArgumentException("significantDigits: " + significantDigits
          + " is not allowed; use 0 (exact) or a whole number from 1 to " + OutputJson.MAX_DIGITS);
    }
    this.level = intervalLevel;
    this.echo = echoFields == null ? null : echoFields.toArray(new String[0]);
    this.digits = significantDigits;
  }

  /** The writer a pipeline configuration asks for. */
  public static OutputAvro of(PipelineConfig config) {
    return new OutputAvro(config.model().intervalLevel(), config.outputs().echoFields(), config.outputs().significantDigits());
  }

  /** The JSON snapshot laid into {@code snapshot.avsc} ({@link SnapshotAvro}). */
  @Override
  public byte[] snapshot(OutputJson json, Snapshot s, long partition) {
    return SnapshotAvro.fromJson(json.snapshot(s, partition));
  }

  @Override
  public PipelineConfig.OutputEncoding encoding() {
    return PipelineConfig.OutputEncoding.AVRO;
  }

  @Override
  public byte[] prediction(Prediction p, EventRecord record) {
    n = 0;
    writeLong(p.status().ordinal()); // enum Status: scored, no_target, warming_up (the declaration order)
    writeLong(p.sourcePartition() < 0 ? -1 : p.sourcePartition());
    writeLong(p.sourceOffset() < 0 ? -1 : p.sourceOffset());
    writeLong(p.eventTimeMillis());
    if (p.stamped()) {
      writeLong(1);
      writeLong(p.issueTimeMillis());
      writeLong(1);
      writeLong(p.targetTimeMillis());
      writeLong(1);
      writeLong(p.horizonMillis());
      if (Double.isNaN(p.actual())) {
        writeLong(1);
        writeBoolean(p.targetPassed());
      } else {
        writeLong(0);
      }
    } else {
      writeLong(0);
      writeLong(0);
      writeLong(0);
      writeLong(0);
    }
    RecordSchema schema = record.schema();
    byte[][] nm = fieldNames(schema);
    int[] slots = echoSlots;
    if (slots.length == 0) {
      writeLong(0); // no fields map
    } else {
      writeLong(1);
      int present = 0;
      for (int i : slots) {
        if (record.present(i)) {
          present++;
        }
      }
      if (present > 0) {
        writeLong(present); // one block
        for (int i : slots) {
          if (!record.present(i)) {
            continue;
          }
          writeBytes(nm[i]);
          if (schema.type(i) == FieldType.TEXT) {
            int len = record.textLength(i);
            if (len < 0) {
              writeLong(0); // present without a text: null, as JSON writes it
            } else {
              writeLong(1);
              writeChars(record.textChars(i), len);
            }
          } else {
            writeLong(2);
            writeBoolean(record.flag(i));
          }
        }
      }
      writeLong(0); // end of the map
    }
    writeDouble(rounded(p.predicted()));
    writeDouble(rounded(p.low()));
    writeDouble(rounded(p.high()));
    writeDouble(level);
    writeDouble(p.actual());
    writeDouble(rounded(p.error()));
    writeLong(p.layoutVersion());
    return Arrays.copyOf(buf, n);
  }

  @Override
  public byte[] settled(SettledForecast s, EventRecord record) {
    n = 0;
    byte[][] nm = fieldNames(record.schema());
    int k = s.entityFieldCount();
    if (k > 0) {
      writeLong(k);
      for (int i = 0; i < k; i++) {
        int slot = s.entitySlot(i);
        writeBytes(nm[slot]);
        writeChars(record.textChars(slot), record.textLength(slot));
      }
    }
    writeLong(0);
    writeLong(s.issueTimeMillis());
    writeLong(s.targetTimeMillis());
    writeLong(s.horizonMillis());
    writeDouble(rounded(s.forecast()));
    writeDouble(rounded(s.low()));
    writeDouble(rounded(s.high()));
    writeDouble(level);
    writeDouble(s.actual());
    writeDouble(rounded(s.error()));
    writeBoolean(s.covered());
    if (s.correction()) {
      writeLong(1);
      writeDouble(s.replacedActual());
    } else {
      writeLong(0);
    }
    writeLong(s.requestPartition() < 0 ? -1 : s.requestPartition());
    writeLong(s.requestOffset() < 0 ? -1 : s.requestOffset());
    writeLong(s.actualPartition() < 0 ? -1 : s.actualPartition());
    writeLong(s.actualOffset() < 0 ? -1 : s.actualOffset());
    return Arrays.copyOf(buf, n);
  }

  @Override
  public byte[] reject(RejectReason reason, String detail, long partition, long offset, byte[] raw, int off, int len) {
    n = 0;
    writeBytes(reason.id().getBytes(StandardCharsets.UTF_8));
    writeBytes((detail == null ? "" : detail).getBytes(StandardCharsets.UTF_8));
    writeLong(partition < 0 ? -1 : partition);
    writeLong(offset < 0 ? -1 : offset);
    int keep = Math.min(len, OutputJson.MAX_RAW_BYTES);
    writeLong(len);
    writeBoolean(keep < len);
    // the same text JSON writes: the kept bytes read as UTF-8 (invalid sequences replaced)
    writeBytes(new String(raw, off, keep, StandardCharsets.UTF_8).getBytes(StandardCharsets.UTF_8));
    return Arrays.copyOf(buf, n);
  }

  private double rounded(double v) {
    return digits == 0 ? v : OutputJson.roundSignificant(v, digits);
  }

  private byte[][] fieldNames(RecordSchema schema) {
    if (schema != namesFor) {
      byte[][] b = new byte[schema.size()][];
      for (int i = 0; i < b.length; i++) {
        b[i] = schema.name(i).getBytes(StandardCharsets.UTF_8);
      }
      names = b;
      namesFor = schema;
      echoSlots = echoSlots(schema);
    }
    return names;
  }

  /** As {@link OutputJson}: the configured names in order, or every text and flag field. */
  private int[] echoSlots(RecordSchema schema) {
    return OutputJson.echoSlots(schema, echo);
  }

  private void room(int more) {
    if (buf.length - n < more) {
      buf = Arrays.copyOf(buf, Math.max(2 * buf.length, n + more));
    }
  }

  /** Zig-zag varint (Avro specification, "Binary Encoding": int and long). */
  private void writeLong(long v) {
    room(10);
    long z = (v << 1) ^ (v >> 63);
    while ((z & ~0x7FL) != 0) {
      buf[n++] = (byte) ((z & 0x7F) | 0x80);
      z >>>= 7;
    }
    buf[n++] = (byte) z;
  }

  /** 8 bytes, little-endian, of {@code Double.doubleToRawLongBits} (the exact value; NaN's bits as they are). */
  private void writeDouble(double d) {
    room(8);
    long b = Double.doubleToRawLongBits(d);
    for (int i = 0; i < 8; i++) {
      buf[n++] = (byte) (b >>> (8 * i));
    }
  }

  private void writeBoolean(boolean b) {
    room(1);
    buf[n++] = (byte) (b ? 1 : 0);
  }

  /** A string or bytes: length, then the bytes. */
  private void writeBytes(byte[] b) {
    writeLong(b.length);
    room(b.length);
    System.arraycopy(b, 0, buf, n, b.length);
    n += b.length;
  }

  /** {@code len} chars as a string (UTF-8; a record's texts hold no unpaired surrogate: those are rejected as {@code not_unicode}). */
  private void writeChars(char[] c, int len) {
    int bytes = 0;
    for (int i = 0; i < len; i++) {
      char ch = c[i];
      if (ch < 0x80) {
        bytes += 1;
      } else if (ch < 0x800) {
        bytes += 2;
      } else if (Character.isHighSurrogate(ch) && i + 1 < len && Character.isLowSurrogate(c[i + 1])) {
        bytes += 4;
        i++;
      } else {
        bytes += 3;
      }
    }
    writeLong(bytes);
    room(bytes);
    for (int i = 0; i < len; i++) {
      char ch = c[i];
      if (ch < 0x80) {
        buf[n++] = (byte) ch;
      } else if (ch < 0x800) {
        buf[n++] = (byte) (0xC0 | (ch >> 6));
        buf[n++] = (byte) (0x80 | (ch & 0x3F));
      } else if (Character.isHighSurrogate(ch) && i + 1 < len && Character.isLowSurrogate(c[i + 1])) {
        int cp = Character.toCodePoint(ch, c[++i]);
        buf[n++] = (byte) (0xF0 | (cp >> 18));
        buf[n++] = (byte) (0x80 | ((cp >> 12) & 0x3F));
        buf[n++] = (byte) (0x80 | ((cp >> 6) & 0x3F));
        buf[n++] = (byte) (0x80 | (cp & 0x3F));
      } else {
        // a lone surrogate would be '?' in String.getBytes; the record decoder rejects those (not_unicode)
        buf[n++] = (byte) (0xE0 | (ch >> 12));
        buf[n++] = (byte) (0x80 | ((ch >> 6) & 0x3F));
        buf[n++] = (byte) (0x80 | (ch & 0x3F));
      }
    }
  }
}
