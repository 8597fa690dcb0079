package dev.runnel.connect.replay;

import dev.runnel.connect.file.JsonLinesReader;
import dev.runnel.connect.file.Recording;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;

/**
 * A JSON Lines file as a replay source: either plain (one record per line: partition 0, offset =
 * line number, timestamp 0) or a recording made by {@code runnel record} (detected by its header
 * line; each record keeps its partition, offset and Kafka timestamp, so a replay of the recording
 * equals the replay of the topic).
 */
public final class FileSource {

  private final Path file;

  /**
   * @param file the file
   * @throws IllegalArgumentException if it does not exist or holds no record
   */
  public FileSource(Path file) throws IOException {
    if (!Files.isRegularFile(file)) {
      throw new IllegalArgumentException("--source " + file + ": no such file; give a JSON Lines file or a topic name");
    }
    if (Files.size(file) == 0) {
      throw new IllegalArgumentException("--source " + file + ": the file is empty; it must hold at least one record");
    }
    this.file = file;
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
