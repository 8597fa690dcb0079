package dev.runnel.connect.replay;

import dev.runnel.connect.file.CsvLines;
import dev.runnel.connect.file.FileFormat;
import dev.runnel.connect.file.JsonLinesReader;
import dev.runnel.connect.file.Recording;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Map;
import dev.runnel.core.record.FieldType;

/**
 * A CSV file ({@link CsvLines}: partition 0, offset = line number, timestamp 0) or a JSON Lines
 * file as a replay source: either plain (one record per line: partition 0, offset =
 * line number, timestamp 0) or a recording made by {@code runnel record} (detected by its header
 * line; each record keeps its partition, offset and Kafka timestamp, so a replay of the recording
 * equals the replay of the topic).
 */
public final class FileSource {

  private final Path file;
  private final FileFormat format;
  /** The fields a CSV file's cells are typed by; null when none were given. */
  private final Map<String, FieldType> csvTypes;

  /**
   * A JSON Lines file (a CSV file needs the fields' types: {@link #FileSource(Path, Map)}).
   *
   * @param file the file
   * @throws IllegalArgumentException if it does not exist, holds no record or is neither JSON Lines nor CSV
   */
  public FileSource(Path file) throws IOException {
    this(file, null);
  }

  /**
   * A JSON Lines or CSV file ({@link FileFormat}).
   *
   * @param file the file
   * @param csvTypes the declared fields a CSV file's cells are typed by (for several configurations,
   *     {@link CsvLines#union}); null to refuse CSV. Not modified.
   * @throws IllegalArgumentException if it does not exist, holds no record or is neither JSON Lines nor CSV
   */
  public FileSource(Path file, Map<String, FieldType> csvTypes) throws IOException {
    if (!Files.isRegularFile(file)) {
      throw new IllegalArgumentException("--source " + file + ": no such file; give a JSON Lines or CSV file or a topic name");
    }
    if (Files.size(file) == 0) {
      throw new IllegalArgumentException("--source " + file + ": the file is empty; it must hold at least one record");
    }
    this.format = FileFormat.of(file, "--source");
    if (format == FileFormat.CSV && csvTypes == null) {
      throw new IllegalArgumentException("--source " + file + ": a CSV file is read with the configuration's input.fields"
          + " for its cells' types, and none were given here");
    }
    this.file = file;
    this.csvTypes = csvTypes;
  }

  /** The file's size in bytes (for progress). */
  public long sizeBytes() throws IOException {
    return Files.size(file);
  }

  /**
   * Reads the whole file.
   *
   * @param handler receives each record
   * @param bytesDone updated with the bytes read so far (for progress); may be null
   * @return records handed on
   * @throws IllegalArgumentException if the file holds no record or a recording line is malformed
   */
  public long read(RecordHandler handler, long[] bytesDone) throws IOException {
    if (format == FileFormat.CSV) {
      long rows = new CsvLines(file, csvTypes, JsonLinesReader.DEFAULT_MAX_LINE_BYTES).read(new JsonLinesReader.LineHandler() {
        @Override public void line(byte[] buf, int off, int len, long line) {
          if (bytesDone != null) {
            bytesDone[0] += len + 1; // the JSON object's size: near the row's, enough for progress
          }
          handler.record(buf, off, len, 0L, 0, line);
        }
      });
      if (rows == 0) {
        throw new IllegalArgumentException("--source " + file + ": the CSV file holds a header but no row; it must hold at least one");
      }
      return rows;
    }
    Recording.Line rec = new Recording.Line();
    boolean[] first = {true};
    boolean[] recorded = {false};
    long[] n = {0};
    JsonLinesReader.read(file, (buf, off, len, line) -> {
      if (bytesDone != null) {
        bytesDone[0] += len + 1;
      }
      if (first[0]) {
        first[0] = false;
        if (Recording.isHeader(buf, off, len)) {
          recorded[0] = true;
          return;
        }
      }
      n[0]++;
      if (recorded[0]) {
        rec.parse(buf, off, len, line);
        handler.record(rec.valueBuf(), rec.valueOff(), rec.valueLen(), rec.timestamp(), rec.partition(), rec.offset());
      } else {
        handler.record(buf, off, len, 0L, 0, line);
      }
    });
    if (n[0] == 0) {
      throw new IllegalArgumentException("--source " + file + ": the file holds no record"
          + (recorded[0] ? " (a recording header only)" : "") + "; it must hold at least one");
    }
    return n[0];
  }
}
