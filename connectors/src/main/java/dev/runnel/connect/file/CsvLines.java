package dev.runnel.connect.file;

import com.fasterxml.jackson.core.JsonEncoding;
import com.fasterxml.jackson.core.JsonFactory;
import com.fasterxml.jackson.core.JsonGenerator;
import com.fasterxml.jackson.core.util.ByteArrayBuilder;
import com.fasterxml.jackson.databind.MappingIterator;
import com.fasterxml.jackson.databind.ObjectReader;
import com.fasterxml.jackson.dataformat.csv.CsvMapper;
import com.fasterxml.jackson.dataformat.csv.CsvParser;
import dev.runnel.core.record.FieldType;
import java.io.IOException;
import java.nio.file.Path;
import java.util.List;
import java.util.Map;
import java.util.regex.Pattern;

/**
 * Reads a CSV file with a header row as the JSON objects the record decoder reads, one a row, so a
 * CSV row meets the same checks, reject reasons and limits as a JSON Lines record
 * (docs/operations.md, "Input formats"). Cells are read by Jackson's CSV module; each row becomes
 * a JSON object of the declared fields it has, typed by the configuration:
 *
 * <ul>
 *   <li>a {@code number} field's cell is a JSON number when its text (spaces trimmed) is one, or
 *       {@code NaN}/{@code Infinity}/{@code -Infinity} (then {@code not_finite}); other text stays
 *       text, so the decoder rejects it as {@code wrong_type};
 *   <li>a {@code flag} field's cell {@code true} or {@code false} is a JSON boolean, other text stays text;
 *   <li>{@code text} and {@code time} cells are JSON strings;
 *   <li>an empty cell, and a cell missing at the end of a short row, is an absent field (as JSON {@code null});
 *   <li>columns the configuration does not declare are left out; a declared name twice in the header
 *       gives both cells, so the decoder rejects the row as {@code duplicate_field}.
 * </ul>
 *
 * <p>One record per line: a quoted cell cannot hold a line break. A row the CSV reader cannot read
 * (an unclosed quote, more cells than the header) is handed on as its own bytes, which the decoder
 * rejects as {@code malformed_json} with the row kept in the reject. A row longer than the byte
 * limit is handed to {@link JsonLinesReader.LineHandler#tooLong} as a line is. The limit applies to the
 * row and to the JSON object it becomes. One thread.
 */
public final class CsvLines {

  /** JSON's number grammar (RFC 8259, section 6), plus the non-finite words the decoder reads. */
  private static final Pattern JSON_NUMBER =
      Pattern.compile("-?(0|[1-9][0-9]*)(\\.[0-9]+)?([eE][+-]?[0-9]+)?|NaN|[+-]?Infinity");

  private static final CsvMapper MAPPER = new CsvMapper();
  private static final ObjectReader ROW = MAPPER.readerForArrayOf(String.class).with(CsvParser.Feature.WRAP_AS_ARRAY);

  private final Path file;
  private final Map<String, FieldType> types;
  private final JsonLinesReader lines;
  private final JsonFactory json = new JsonFactory();
  private final ByteArrayBuilder out = new ByteArrayBuilder(1024);
  private String[] header;
  /** Per column its declared type, or null for a column the configuration does not declare. */
  private FieldType[] columnTypes;

  /**
   * @param file the CSV file
   * @param types the declared fields and their types (the configuration's {@code input.fields}). Not modified.
   * @param maxRowBytes the longest row handed whole, in bytes ({@code input.limits.max_record_bytes})
   */
  public CsvLines(Path file, Map<String, FieldType> types, int maxRowBytes) {
    this.file = file;
    this.types = types;
    this.lines = new JsonLinesReader(maxRowBytes);
  }

  /** The header's column names, once {@link #read} has read it. */
  public List<String> header() {
    return header == null ? List.of() : List.of(header);
  }

  /**
   * Reads the header, then hands each row to {@code handler} as a JSON object (the buffer is
   * reused: copy what you keep); the line number is the row's line in the file.
   *
   * @return rows handed on
   * @throws IllegalArgumentException if the file has no header, or its header names none of the
   *     declared fields (the message names the file, the header and the fields)
   */
  public long read(JsonLinesReader.LineHandler handler) throws IOException {
    long[] rows = {0};
    lines.readAll(file, new JsonLinesReader.LineHandler() {
      @Override public void line(byte[] buf, int off, int len, long lineNumber) throws IOException {
        if (header == null) {
          readHeader(buf, off, len);
          return;
        }
        rows[0]++;
        String[] cells = cells(buf, off, len);
        if (cells == null) {
          handler.line(buf, off, len, lineNumber);
        } else {
          byte[] obj = toJson(cells);
          handler.line(obj, 0, obj.length, lineNumber);
        }
      }

      @Override public void tooLong(byte[] buf, int off, int prefixLen, long lineBytes, long lineNumber) throws IOException {
        if (header == null) {
          throw new IllegalArgumentException("--source " + file + ": the CSV header is " + lineBytes
              + " bytes, longer than input.limits.max_record_bytes; give a header row of the field names");
        }
        rows[0]++;
        handler.tooLong(buf, off, prefixLen, lineBytes, lineNumber);
      }
    });
    if (header == null) {
      throw new IllegalArgumentException("--source " + file + ": the CSV file is empty; its first line must be a header"
          + " row naming the fields (" + String.join(",", types.keySet()) + ")");
    }
    return rows[0];
  }

  private void readHeader(byte[] buf, int off, int len) {
    int start = off;
    // a UTF-8 byte order mark before the header is not part of the first name
    if (len >= 3 && (buf[off] & 0xff) == 0xEF && (buf[off + 1] & 0xff) == 0xBB && (buf[off + 2] & 0xff) == 0xBF) {
      start += 3;
    }
    String[] names = cells(buf, start, len - (start - off));
    if (names == null) {
      throw new IllegalArgumentException("--source " + file + ": the CSV header row cannot be read as CSV; its first"
          + " line must name the fields, comma-separated");
    }
    FieldType[] t = new FieldType[names.length];
    int declared = 0;
    for (int i = 0; i < names.length; i++) {
      names[i] = names[i].strip();
      t[i] = types.get(names[i]);
      if (t[i] != null) {
        declared++;
      }
    }
    if (declared == 0) {
      String shown = String.join(",", names);
      if (shown.length() > 120) {
        shown = shown.substring(0, 120) + "…";
      }
      throw new IllegalArgumentException("--source " + file + ": the CSV header (" + shown + ") names none of the"
          + " configuration's fields (" + String.join(", ", types.keySet()) + "); give a header row with those names");
    }
    header = names;
    columnTypes = t;
  }

  /** The row's cells, or null when it cannot be read as one CSV row of at most the header's width. */
  private String[] cells(byte[] buf, int off, int len) {
    try (MappingIterator<String[]> it = ROW.readValues(buf, off, len)) {
      if (!it.hasNext()) {
        return null;
      }
      String[] row = it.next();
      if (it.hasNext() || (header != null && row.length > header.length)) {
        return null;
      }
      return row;
    } catch (IOException | RuntimeException e) {
      return null;
    }
  }

  private byte[] toJson(String[] cells) throws IOException {
    out.reset();
    try (JsonGenerator g = json.createGenerator(out, JsonEncoding.UTF8)) {
      g.writeStartObject();
      for (int i = 0; i < cells.length; i++) {
        FieldType t = columnTypes[i];
        String cell = cells[i];
        if (t == null || cell.isEmpty()) {
          continue;
        }
        g.writeFieldName(header[i]);
        switch (t) {
          case NUMBER -> {
            String s = cell.strip();
            if (JSON_NUMBER.matcher(s).matches()) {
              g.writeNumber(s);
            } else {
              g.writeString(cell);
            }
          }
          case FLAG -> {
            String s = cell.strip();
            if (s.equals("true") || s.equals("false")) {
              g.writeBoolean(s.equals("true"));
            } else {
              g.writeString(cell);
            }
          }
          default -> g.writeString(cell);
        }
      }
      g.writeEndObject();
    }
    return out.toByteArray();
  }

  /**
   * The column types of several configurations read from one file: the union of their fields.
   *
   * @param named configuration name to its declared fields, in order. Not modified.
   * @throws IllegalArgumentException if two configurations declare one field with different types
   */
  public static Map<String, FieldType> union(Map<String, Map<String, FieldType>> named) {
    Map<String, FieldType> all = new java.util.LinkedHashMap<>();
    Map<String, String> from = new java.util.HashMap<>();
    for (Map.Entry<String, Map<String, FieldType>> c : named.entrySet()) {
      for (Map.Entry<String, FieldType> f : c.getValue().entrySet()) {
        FieldType had = all.putIfAbsent(f.getKey(), f.getValue());
        if (had == null) {
          from.put(f.getKey(), c.getKey());
        } else if (had != f.getValue()) {
          throw new IllegalArgumentException("input.fields." + f.getKey() + ": " + from.get(f.getKey()) + " declares it "
              + had.word() + " but " + c.getKey() + " declares it " + f.getValue().word()
              + "; configurations that read one CSV file must give a field one type");
        }
      }
    }
    return all;
  }
}
