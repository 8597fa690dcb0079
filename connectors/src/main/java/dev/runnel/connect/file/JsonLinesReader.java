package dev.runnel.connect.file;

import java.io.IOException;
import java.io.InputStream;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Arrays;

/**
 * Reads a JSON Lines file as raw byte lines, without decoding them into strings: each line is
 * handed to a callback as a slice of a reused buffer. Empty lines are skipped; a trailing
 * carriage return is dropped. One thread.
 */
public final class JsonLinesReader {

  /** Receives one line. The buffer is reused: copy what you keep. */
  @FunctionalInterface
  public interface LineHandler {
    /**
     * @param buf the buffer holding the line. Not modified.
     * @param off start of the line in {@code buf}
     * @param len length of the line in bytes, without the line break
     * @param lineNumber the 1-based line number in the file
     */
    void line(byte[] buf, int off, int len, long lineNumber) throws IOException;
  }

  private JsonLinesReader() { }

  /**
   * Reads every line of {@code file}.
   *
   * @return the number of non-empty lines handed to {@code handler}
   * @throws IOException if the file cannot be read
   */
  public static long read(Path file, LineHandler handler) throws IOException {
    try (InputStream in = Files.newInputStream(file)) {
      return read(in, handler);
    }
  }

  /** Reads every line of {@code in} (not closed). */
  public static long read(InputStream in, LineHandler handler) throws IOException {
    byte[] buf = new byte[1 << 16];
    int start = 0;
    int end = 0;
    long lineNumber = 0;
    long handed = 0;
    while (true) {
      if (end == buf.length) {
        if (start > 0) {
          System.arraycopy(buf, start, buf, 0, end - start);
          end -= start;
          start = 0;
        } else {
          buf = Arrays.copyOf(buf, buf.length * 2);
        }
      }
      int n = in.read(buf, end, buf.length - end);
      if (n < 0) {
        break;
      }
      int scanFrom = end;
      end += n;
      for (int i = scanFrom; i < end; i++) {
        if (buf[i] == '\n') {
          lineNumber++;
          int len = i - start;
          if (len > 0 && buf[start + len - 1] == '\r') {
            len--;
          }
          if (len > 0) {
            handler.line(buf, start, len, lineNumber);
            handed++;
          }
          start = i + 1;
        }
      }
    }
    if (end > start) {
      lineNumber++;
      int len = end - start;
      if (buf[start + len - 1] == '\r') {
        len--;
      }
      if (len > 0) {
        handler.line(buf, start, len, lineNumber);
        handed++;
      }
    }
    return handed;
  }
}
