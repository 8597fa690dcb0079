package dev.runnel.connect.file;

import com.fasterxml.jackson.core.JsonFactory;
import com.fasterxml.jackson.core.JsonParser;
import com.fasterxml.jackson.core.JsonToken;
import java.io.IOException;
import java.io.OutputStream;
import java.nio.ByteBuffer;
import java.nio.charset.CharacterCodingException;
import java.nio.charset.CodingErrorAction;
import java.nio.charset.StandardCharsets;
import java.util.Base64;

/**
 * The recorded-topic file format (see docs/formats.md, "Recorded topics"): a header line
 * {@code {"runnel_recording":1,"topic":"...","partitions":N}}, then one line per Kafka record
 * {@code {"partition":0,"offset":12,"timestamp":1774393200000,"key":"k","value":<the value>}}.
 * The value is embedded verbatim when it is one line of valid JSON, so the line holds the exact
 * bytes; otherwise it is {@code "value_text":"..."} (UTF-8 text) or {@code "value_base64":"..."};
 * a record without a value has {@code "value_absent":true}. The key is {@code "key":"..."},
 * {@code "key_base64":"..."} or {@code "key":null}. The value field is always last.
 */
public final class Recording {

  /** Version of the format written. */
  public static final int FORMAT_VERSION = 1;
  /** The header's first field; a file whose first line starts with it is a recording. */
  public static final String HEADER_PREFIX = "{\"runnel_recording\":";

  static final JsonFactory JSON = new JsonFactory();

  private Recording() { }

  /** Writes the header line. */
  public static void writeHeader(OutputStream out, String topic, int partitions) throws IOException {
    StringBuilder sb = new StringBuilder(96);
    sb.append(HEADER_PREFIX).append(FORMAT_VERSION).append(",\"topic\":");
    quote(sb, topic);
    sb.append(",\"partitions\":").append(partitions).append("}\n");
    out.write(sb.toString().getBytes(StandardCharsets.UTF_8));
  }

  /** Writes one record line. {@code key} and {@code value} may be null. Not modified. */
  public static void writeRecord(OutputStream out, int partition, long offset, long timestamp, byte[] key,
                                 byte[] value, StringBuilder scratch) throws IOException {
    StringBuilder sb = scratch;
    sb.setLength(0);
    sb.append("{\"partition\":").append(partition).append(",\"offset\":").append(offset)
        .append(",\"timestamp\":").append(timestamp).append(',');
    if (key == null) {
      sb.append("\"key\":null");
    } else {
      String k = utf8OrNull(key);
      if (k != null) {
        sb.append("\"key\":");
        quote(sb, k);
      } else {
        sb.append("\"key_base64\":\"").append(Base64.getEncoder().encodeToString(key)).append('"');
      }
    }
    sb.append(',');
    if (value == null) {
      sb.append("\"value_absent\":true}\n");
      out.write(sb.toString().getBytes(StandardCharsets.UTF_8));
      return;
    }
    if (isOneLineJson(value)) {
      sb.append("\"value\":");
      out.write(sb.toString().getBytes(StandardCharsets.UTF_8));
      out.write(value);
      out.write('}');
      out.write('\n');
      return;
    }
    String text = utf8OrNull(value);
    if (text != null) {
      sb.append("\"value_text\":");
      quote(sb, text);
    } else {
      sb.append("\"value_base64\":\"").append(Base64.getEncoder().encodeToString(value)).append('"');
    }
    sb.append("}\n");
    out.write(sb.toString().getBytes(StandardCharsets.UTF_8));
  }

  /** Whether the bytes are exactly one JSON value on one line (no CR/LF), with nothing after it. */
  static boolean isOneLineJson(byte[] v) {
    if (v.length == 0) {
      return false;
    }
    for (byte b : v) {
      if (b == '\n' || b == '\r') {
        return false;
      }
    }
    try (JsonParser p = JSON.createParser(v)) {
      if (p.nextToken() == null) {
        return false;
      }
      p.skipChildren();
      return p.nextToken() == null;
    } catch (IOException e) {
      return false;
    }
  }

  static String utf8OrNull(byte[] b) {
    try {
      return StandardCharsets.UTF_8.newDecoder().onMalformedInput(CodingErrorAction.REPORT)
          .onUnmappableCharacter(CodingErrorAction.REPORT).decode(ByteBuffer.wrap(b)).toString();
    } catch (CharacterCodingException e) {
      return null;
    }
  }

  static void quote(StringBuilder sb, String s) {
    sb.append('"');
    for (int i = 0; i < s.length(); i++) {
      char c = s.charAt(i);
      switch (c) {
        case '"' -> sb.append("\\\"");
        case '\\' -> sb.append("\\\\");
        case '\n' -> sb.append("\\n");
        case '\r' -> sb.append("\\r");
        case '\t' -> sb.append("\\t");
        default -> {
          if (c < 0x20) {
            sb.append(String.format("\\u%04x", (int) c));
          } else {
            sb.append(c);
          }
        }
      }
    }
    sb.append('"');
  }

  /** Whether a first line is a recording header. */
  public static boolean isHeader(byte[] buf, int off, int len) {
    byte[] p = HEADER_PREFIX.getBytes(StandardCharsets.UTF_8);
    if (len < p.length) {
      return false;
    }
    for (int i = 0; i < p.length; i++) {
      if (buf[off + i] != p[i]) {
        return false;
      }
    }
    return true;
  }

  /** One parsed record line; mutable and reused. */
  public static final class Line {
    int partition;
    long offset;
    long timestamp;
    byte[] key;
    byte[] valueBuf;
    int valueOff;
    int valueLen;
    boolean absent;

    public int partition() { return partition; }
    public long offset() { return offset; }
    public long timestamp() { return timestamp; }
    /** The key bytes, or null. Not a copy. */
    public byte[] key() { return key; }
    /** The value's bytes: a slice {@link #valueOff()}, {@link #valueLen()} of this array. Not a copy. */
    public byte[] valueBuf() { return valueBuf; }
    public int valueOff() { return valueOff; }
    public int valueLen() { return valueLen; }
    /** True when the record had no value (a tombstone). */
    public boolean absent() { return absent; }

    /**
     * Parses a record line. The value, when embedded verbatim, stays a slice of {@code buf}.
     *
     * @throws IllegalArgumentException with the line number if the line is not a record line
     */
    public void parse(byte[] buf, int off, int len, long lineNumber) {
      partition = -1;
      offset = -1;
      timestamp = 0;
      key = null;
      absent = false;
      valueBuf = null;
      try (JsonParser p = JSON.createParser(buf, off, len)) {
        if (p.nextToken() != JsonToken.START_OBJECT) {
          throw bad(lineNumber, "not a JSON object");
        }
        while (p.nextToken() == JsonToken.FIELD_NAME) {
          String f = p.currentName();
          JsonToken t = p.nextToken();
          switch (f) {
            case "partition" -> partition = p.getIntValue();
            case "offset" -> offset = p.getLongValue();
            case "timestamp" -> timestamp = p.getLongValue();
            case "key" -> key = t == JsonToken.VALUE_NULL ? null : p.getText().getBytes(StandardCharsets.UTF_8);
            case "key_base64" -> key = Base64.getDecoder().decode(p.getText());
            case "value_absent" -> {
              absent = true;
              valueBuf = buf;
              valueOff = off;
              valueLen = 0;
            }
            case "value_text" -> setValue(p.getText().getBytes(StandardCharsets.UTF_8));
            case "value_base64" -> setValue(Base64.getDecoder().decode(p.getText()));
            case "value" -> {
              int start = off + (int) p.currentTokenLocation().getByteOffset();
              int end = off + len;
              while (end > start && buf[end - 1] != '}') {
                end--;
              }
              end--; // the wrapper's closing brace
              while (end > start && (buf[end - 1] == ' ' || buf[end - 1] == '\t')) {
                end--;
              }
              valueBuf = buf;
              valueOff = start;
              valueLen = end - start;
              return; // the value is always last
            }
            default -> p.skipChildren();
          }
        }
      } catch (IOException e) {
        throw bad(lineNumber, "not valid JSON (" + e.getMessage().lines().findFirst().orElse("") + ")");
      }
      if (partition < 0 || offset < 0 || valueBuf == null) {
        throw bad(lineNumber, "a record line needs partition, offset and a value field");
      }
    }

    private void setValue(byte[] v) {
      valueBuf = v;
      valueOff = 0;
      valueLen = v.length;
    }

    private static IllegalArgumentException bad(long lineNumber, String what) {
      return new IllegalArgumentException("line " + lineNumber + " of the recording: " + what
          + "; a recording has one record object per line after its header (see docs/formats.md)");
    }
  }
}
