package dev.runnel.connect.file;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Lines longer than the limit are reported with their length and first bytes, and skipped without
 * being held in memory (issue 14, item 4: a 300 MB line made replay run out of memory); every other
 * line is handed exactly as a plain split on line breaks gives it.
 */
class JsonLinesReaderTest {

  /** One line of {@code padBytes} filler between two short lines, made as it is read (never held whole). */
  static final class LongLineStream extends InputStream {
    private final byte[] head;
    private final byte[] tail;
    private final long total;
    private long pos;

    LongLineStream(String before, long padBytes, String after) {
      head = (before + "\n{\"pad\":\"").getBytes(StandardCharsets.UTF_8);
      tail = ("\"}\r\n" + after + "\n").getBytes(StandardCharsets.UTF_8);
      total = head.length + padBytes + tail.length;
    }

    @Override public int read() {
      byte[] one = new byte[1];
      return read(one, 0, 1) < 0 ? -1 : one[0] & 0xff;
    }

    @Override public int read(byte[] b, int off, int len) {
      if (pos >= total) return -1;
      int n = (int) Math.min(len, total - pos);
      long padEnd = total - tail.length;
      for (int k = 0; k < n; k++) {
        long p = pos + k;
        b[off + k] = p < head.length ? head[(int) p] : p < padEnd ? (byte) 'x' : tail[(int) (p - padEnd)];
      }
      pos += n;
      return n;
    }
  }

  @Test void aLineOf300MegabytesIsReportedAndSkippedWithABoundedBuffer() throws IOException {
    long pad = 300_000_000L;
    String first = "{\"hub\":\"QM-01\"}";
    String third = "{\"hub\":\"QM-03\"}";
    int limit = 65_536;
    JsonLinesReader reader = new JsonLinesReader(limit);
    List<String> lines = new ArrayList<>();
    long[] tooLong = new long[3];
    byte[][] prefix = new byte[1][];
    int[] most = {0};
    long handed = reader.readAll(new LongLineStream(first, pad, third), new JsonLinesReader.LineHandler() {
      @Override public void line(byte[] buf, int off, int len, long n) {
        lines.add(n + ":" + new String(buf, off, len, StandardCharsets.UTF_8));
        most[0] = Math.max(most[0], reader.bufferBytes());
      }

      @Override public void tooLong(byte[] buf, int off, int prefixLen, long lineBytes, long n) {
        tooLong[0]++;
        tooLong[1] = lineBytes;
        tooLong[2] = n;
        prefix[0] = Arrays.copyOfRange(buf, off, off + prefixLen);
        most[0] = Math.max(most[0], reader.bufferBytes());
      }
    });
    assertEquals(3, handed);
    assertEquals(List.of("1:" + first, "3:" + third), lines, "the lines around the long one are read as usual");
    assertEquals(1, tooLong[0]);
    // {"pad":" + 300,000,000 x + "} (the CR before the line break is not part of the line)
    assertEquals(8 + pad + 2, tooLong[1], "the long line's whole length");
    assertEquals(2, tooLong[2], "its line number");
    assertEquals(limit + 1, prefix[0].length);
    assertTrue(new String(prefix[0], 0, 12, StandardCharsets.US_ASCII).equals("{\"pad\":\"xxxx"));
    int bound = limit + 2 + JsonLinesReader.READ_BYTES;
    assertTrue(most[0] <= bound && reader.bufferBytes() <= bound,
        "buffer stayed within the limit and one read: " + reader.bufferBytes() + " bytes, bound " + bound);
  }

  /** Reads that return a random number of bytes, so lines and line breaks fall across reads anywhere. */
  static final class ChoppyStream extends ByteArrayInputStream {
    private final Random r;

    ChoppyStream(byte[] b, Random r) {
      super(b);
      this.r = r;
    }

    @Override public synchronized int read(byte[] b, int off, int len) {
      return super.read(b, off, Math.max(1, Math.min(len, 1 + r.nextInt(r.nextBoolean() ? 7 : 300))));
    }
  }

  @Test void randomFilesAgreeWithAPlainSplit() throws IOException {
    Random r = new Random(14);
    for (int round = 0; round < 400; round++) {
      int limit = 1 + r.nextInt(r.nextBoolean() ? 20 : 200);
      ByteArrayOutputStream file = new ByteArrayOutputStream();
      int count = r.nextInt(12);
      for (int k = 0; k < count; k++) {
        int len = r.nextInt(4) == 0 ? limit + r.nextInt(3 * limit + 2) : r.nextInt(limit + 2);
        for (int j = 0; j < len; j++) file.write(r.nextInt(3) == 0 ? '\r' : 'a' + r.nextInt(26));
        if (k < count - 1 || r.nextBoolean()) file.write('\n');
      }
      byte[] bytes = file.toByteArray();
      // the reference: split on line breaks, drop one trailing CR, skip empty lines (common practice for JSON Lines)
      List<String> expected = new ArrayList<>();
      String text = new String(bytes, StandardCharsets.ISO_8859_1);
      String[] parts = text.split("\n", -1);
      int last = text.endsWith("\n") ? parts.length - 1 : parts.length;
      for (int k = 0; k < last; k++) {
        String l = parts[k].endsWith("\r") ? parts[k].substring(0, parts[k].length() - 1) : parts[k];
        if (l.isEmpty()) continue;
        expected.add(l.length() > limit
            ? (k + 1) + " long " + l.length() + " " + l.substring(0, limit + 1)
            : (k + 1) + " " + l);
      }
      List<String> got = new ArrayList<>();
      JsonLinesReader reader = new JsonLinesReader(limit);
      long handed = reader.readAll(new ChoppyStream(bytes, r), new JsonLinesReader.LineHandler() {
        @Override public void line(byte[] buf, int off, int len, long n) {
          got.add(n + " " + new String(buf, off, len, StandardCharsets.ISO_8859_1));
        }

        @Override public void tooLong(byte[] buf, int off, int prefixLen, long lineBytes, long n) {
          got.add(n + " long " + lineBytes + " " + new String(buf, off, prefixLen, StandardCharsets.ISO_8859_1));
        }
      });
      final int rr = round;
      assertEquals(expected, got, () -> "round " + rr + ", limit " + limit + ": " + text.replace("\r", "\\r").replace("\n", "\\n"));
      assertEquals(expected.size(), handed);
      assertTrue(reader.bufferBytes() <= limit + 2 + JsonLinesReader.READ_BYTES);
    }
  }

  @Test void byDefaultALongLineReachesLineAsItsPrefix() throws IOException {
    byte[] b = ("ab\n" + "c".repeat(50) + "\nde").getBytes(StandardCharsets.US_ASCII);
    List<String> got = new ArrayList<>();
    new JsonLinesReader(10).readAll(new ByteArrayInputStream(b), (buf, off, len, n) -> got.add(n + ":" + new String(buf, off, len, StandardCharsets.US_ASCII)));
    assertEquals(List.of("1:ab", "2:" + "c".repeat(11), "3:de"), got);
  }
}
