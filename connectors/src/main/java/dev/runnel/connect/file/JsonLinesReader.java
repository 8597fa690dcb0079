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
 *
 * <p>Memory is bounded by the line limit, whatever the file holds: a line longer than
 * {@code maxLineBytes} is handed to {@link LineHandler#tooLong} as its first
 * {@code maxLineBytes + 1} bytes and its whole length, and the rest of it is read and dropped
 * without being kept; the next line is read as usual. The buffer holds at most
 * {@code maxLineBytes + 2} bytes of a line plus one read's worth ({@link #READ_BYTES}).
 */
public final class JsonLinesReader {

  /**
   * The line limit of the static {@code read} methods: the largest {@code input.limits.max_record_bytes}
   * allowed, so no configuration accepts a line they cut.
   */
  public static final int DEFAULT_MAX_LINE_BYTES = 16_777_216;
  /** Bytes asked of the stream per read, and the buffer's first size. */
  static final int READ_BYTES = 1 << 16;

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

    /**
     * A line longer than the reader's limit. By default its prefix is handed to {@link #line}: it
     * is longer than the limit, so a decoder whose record limit is at most the reader's rejects it
     * as too large; override to report the whole length.
     *
     * @param buf the buffer holding the line's first bytes. Not modified.
     * @param off start of those bytes in {@code buf}
     * @param prefixLen how many bytes are there: the limit + 1
     * @param lineBytes the whole line's length in bytes, without the line break
     * @param lineNumber the 1-based line number in the file
     */
    default void tooLong(byte[] buf, int off, int prefixLen, long lineBytes, long lineNumber) throws IOException {
      line(buf, off, prefixLen, lineNumber);
    }
  }

  private final int maxLineBytes;
  private byte[] buf;

  /**
   * @param maxLineBytes the longest line handed whole, in bytes, at least 1
   * @throws IllegalArgumentException if {@code maxLineBytes} is below 1 or above 2^30
   */
  public JsonLinesReader(int maxLineBytes) {
    if (maxLineBytes < 1 || maxLineBytes > (1 << 30)) {
      throw new IllegalArgumentException("maxLineBytes must be in 1..1073741824, got " + maxLineBytes);
    }
    this.maxLineBytes = maxLineBytes;
    this.buf = new byte[READ_BYTES];
  }

  /** The buffer's current size in bytes (it grows with the longest line met, up to the limit). */
  public int bufferBytes() {
    return buf.length;
  }

  /**
   * Reads every line of {@code file} with lines cut at {@link #DEFAULT_MAX_LINE_BYTES}.
   *
   * @return the number of non-empty lines handed to {@code handler}
   * @throws IOException if the file cannot be read
   */
  public static long read(Path file, LineHandler handler) throws IOException {
    return new JsonLinesReader(DEFAULT_MAX_LINE_BYTES).readAll(file, handler);
  }

  /** Reads every line of {@code file}. @return the number of non-empty lines handed on */
  public long readAll(Path file, LineHandler handler) throws IOException {
    try (InputStream in = Files.newInputStream(file)) {
      return readAll(in, handler);
    }
  }

  /**
   * Reads every line of {@code in} (not closed). The buffer never exceeds
   * {@code maxLineBytes + 2 + READ_BYTES} bytes.
   *
   * @return the number of non-empty lines handed to {@code handler} (as {@code line} or {@code tooLong})
   * @throws IOException if the stream cannot be read, or from the handler
   */
  public long readAll(InputStream in, LineHandler handler) throws IOException {
    int start = 0;
    int end = 0;
    long lineNumber = 0;
    long handed = 0;
    // while a line is too long: its prefix is buf[0 .. keep), and skipped counts its bytes past the prefix
    boolean skipping = false;
    int keep = maxLineBytes + 1;
    long skipped = 0;
    byte last = 0;
    while (true) {
      if (skipping) {
        // read past the prefix, count, drop; stop at the line's end
        if (buf.length < keep + READ_BYTES) {
          buf = Arrays.copyOf(buf, keep + READ_BYTES);
        }
        int n = in.read(buf, keep, buf.length - keep);
        if (n < 0) {
          lineNumber++;
          handler.tooLong(buf, 0, keep, keep + skipped - (last == '\r' ? 1 : 0), lineNumber);
          handed++;
          return handed;
        }
        int stop = keep + n;
        int nl = -1;
        for (int i = keep; i < stop; i++) {
          if (buf[i] == '\n') {
            nl = i;
            break;
          }
        }
        if (nl < 0) {
          skipped += n;
          if (n > 0) last = buf[stop - 1];
          continue;
        }
        skipped += nl - keep;
        if (nl > keep) last = buf[nl - 1];
        lineNumber++;
        handler.tooLong(buf, 0, keep, keep + skipped - (last == '\r' ? 1 : 0), lineNumber);
        handed++;
        skipping = false;
        // what followed the line break starts the next lines
        System.arraycopy(buf, nl + 1, buf, 0, stop - nl - 1);
        start = 0;
        end = stop - nl - 1;
        int[] r = handLines(handler, start, end, lineNumber);
        start = r[0];
        lineNumber += r[1];
        handed += r[2];
      } else {
        if (end - start > keep) {
          // more than limit + 1 bytes and no line break: too long even without a trailing CR;
          // keep the prefix, skip the rest
          last = buf[end - 1];
          skipped = end - start - keep;
          System.arraycopy(buf, start, buf, 0, keep);
          start = 0;
          end = 0;
          skipping = true;
          continue;
        }
        if (end == buf.length) {
          if (start > 0) {
            System.arraycopy(buf, start, buf, 0, end - start);
            end -= start;
            start = 0;
          } else {
            buf = Arrays.copyOf(buf, (int) Math.min((long) buf.length * 2, (long) keep + 1 + READ_BYTES));
          }
        }
        int n = in.read(buf, end, buf.length - end);
        if (n < 0) {
          break;
        }
        int scanFrom = end;
        end += n;
        int[] r = handLines(handler, start, end, lineNumber, scanFrom);
        start = r[0];
        lineNumber += r[1];
        handed += r[2];
      }
    }
    if (end > start) {
      lineNumber++;
      int len = end - start;
      if (buf[start + len - 1] == '\r') {
        len--;
      }
      if (len > maxLineBytes) {
        handler.tooLong(buf, start, keep, len, lineNumber);
        handed++;
      } else if (len > 0) {
        handler.line(buf, start, len, lineNumber);
        handed++;
      }
    }
    return handed;
  }

  private int[] handLines(LineHandler handler, int start, int end, long lineNumber) throws IOException {
    return handLines(handler, start, end, lineNumber, start);
  }

  /**
   * Hands every complete line in {@code buf[start .. end)} (line breaks searched from
   * {@code scanFrom}). @return the start of the unfinished line, lines counted, lines handed
   */
  private int[] handLines(LineHandler handler, int start, int end, long lineNumber, int scanFrom) throws IOException {
    int counted = 0;
    int handed = 0;
    for (int i = scanFrom; i < end; i++) {
      if (buf[i] == '\n') {
        counted++;
        int len = i - start;
        if (len > 0 && buf[start + len - 1] == '\r') {
          len--;
        }
        if (len > maxLineBytes) {
          handler.tooLong(buf, start, maxLineBytes + 1, len, lineNumber + counted);
          handed++;
        } else if (len > 0) {
          handler.line(buf, start, len, lineNumber + counted);
          handed++;
        }
        start = i + 1;
      }
    }
    return new int[] {start, counted, handed};
  }
}
