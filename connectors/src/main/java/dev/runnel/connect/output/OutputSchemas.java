package dev.runnel.connect.output;

import java.io.IOException;
import java.io.InputStream;
import java.io.UncheckedIOException;
import java.util.Arrays;
import org.apache.avro.Schema;
import org.apache.avro.SchemaNormalization;

/**
 * The Avro writer schemas of output format {@value #FORMAT_VERSION} (docs/formats.md, "Avro
 * outputs"): {@code prediction.avsc}, {@code settled.avsc}, {@code reject.avsc} and {@code snapshot.avsc}, shipped in the
 * jar under {@value #RESOURCE_DIR}. Each record written with {@code outputs.encoding: avro} carries
 * its schema's fingerprint in the Kafka header {@value #HEADER_SCHEMA}: the 64-bit Rabin fingerprint
 * (CRC-64-AVRO) of the schema's Parsing Canonical Form, 8 bytes little-endian, the form Avro's own
 * single-object encoding uses (Avro specification, "Schema Fingerprints"). No schema registry is
 * needed: a reader finds the schema by the fingerprint among these four.
 */
public final class OutputSchemas {

  /** The output format these schemas are of (the JSON layouts' version, {@code OutputJson.FORMAT_VERSION}). */
  public static final int FORMAT_VERSION = 3;
  /** Where the schema files are in the jar. */
  public static final String RESOURCE_DIR = "/dev/runnel/output/";
  /** Kafka header on every Avro output record: the writer schema's fingerprint, 8 bytes little-endian. */
  public static final String HEADER_SCHEMA = "runnel.schema";

  /** Which output a schema is for. */
  public enum Kind {
    PREDICTION("prediction.avsc"), SETTLED("settled.avsc"), REJECT("reject.avsc"), SNAPSHOT("snapshot.avsc");

    private final String file;
    private final Schema schema;
    private final long fingerprint;
    private final byte[] fingerprintBytes;

    Kind(String file) {
      this.file = file;
      try (InputStream in = OutputSchemas.class.getResourceAsStream(RESOURCE_DIR + file)) {
        if (in == null) {
          throw new IllegalStateException("the Avro output schema " + RESOURCE_DIR + file + " is missing from the classpath");
        }
        this.schema = new Schema.Parser().parse(in);
      } catch (IOException e) {
        throw new UncheckedIOException(e);
      }
      this.fingerprint = SchemaNormalization.parsingFingerprint64(schema);
      this.fingerprintBytes = littleEndian(fingerprint);
    }

    /** The schema file's name in {@link #RESOURCE_DIR}. */
    public String file() { return file; }

    /** The writer schema. */
    public Schema schema() { return schema; }

    /** The CRC-64-AVRO fingerprint of the schema's Parsing Canonical Form. */
    public long fingerprint() { return fingerprint; }

    /** {@link #fingerprint()} as the header's 8 bytes, little-endian. @return new bytes */
    public byte[] fingerprintBytes() { return fingerprintBytes.clone(); }
  }

  private OutputSchemas() { }

  /**
   * The kind whose schema has this fingerprint.
   *
   * @param header the {@value #HEADER_SCHEMA} header's value. Not modified.
   * @return null when it is none of the four (another format version, or not a fingerprint)
   */
  public static Kind byFingerprint(byte[] header) {
    if (header == null || header.length != 8) {
      return null;
    }
    for (Kind k : Kind.values()) {
      if (Arrays.equals(k.fingerprintBytes, header)) {
        return k;
      }
    }
    return null;
  }

  static byte[] littleEndian(long v) {
    byte[] b = new byte[8];
    for (int i = 0; i < 8; i++) {
      b[i] = (byte) (v >>> (8 * i));
    }
    return b;
  }
}
