package dev.runnel.connect.replay;

import java.io.BufferedInputStream;
import java.io.BufferedOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.EOFException;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Arrays;
import java.util.Comparator;
import java.util.PriorityQueue;
import java.util.stream.Stream;

/**
 * A source's records in one order across partitions, whatever order the source handed them in: by
 * Kafka timestamp, ties by partition number, then by offset. Within a partition the source's order
 * (offset order) is kept as it is. This is the order a backtest or replay of {@code model.scope:
 * global} runs records in (docs/backtesting.md, "Global scope"), so a topic and a recording of it
 * give the same bits.
 *
 * <p>How: {@link #spill} reads the source once and writes each partition's records to a temporary
 * file of its own (the records' bytes, about the size of a recording); {@link #read} merges those
 * files, holding one record per partition in memory, as often as asked (a replay that sets a record
 * aside reads again). {@link #close} deletes the files. One thread.
 *
 * <p>The merge looks at the heads only, so a timestamp that goes back within a partition does not
 * break it: such a record simply comes out after the other partitions' records with lower
 * timestamps that were waiting. A record without a timestamp (a negative one, as Kafka gives for
 * message format 0) cannot be placed and is refused when several partitions are merged.
 */
public final class MergedFeed implements AutoCloseable {

  private final Path dir;
  private final int[] partitions;
  private final Path[] files;
  private final long records;

  private MergedFeed(Path dir, int[] partitions, Path[] files, long records) {
    this.dir = dir;
    this.partitions = partitions;
    this.files = files;
    this.records = records;
  }

  /** Reads a source once, handing each record to the handler (a {@link FileSource} or {@link TopicSource} read). */
  @FunctionalInterface
  public interface Source {
    long read(RecordHandler handler) throws IOException;
  }

  /**
   * Reads the source once into per-partition files in a new temporary folder.
   *
   * @param source the source's single read
   * @param what names the source in messages (e.g. {@code --source orders})
   * @return the feed; close it to delete the files
   * @throws IllegalArgumentException (naming {@code model.scope}) if records of several partitions come
   *     and one has no timestamp, or a partition's offsets do not rise
   */
  public static MergedFeed spill(Source source, String what) throws IOException {
    Path dir = Files.createTempDirectory("runnel-global-");
    DataOutputStream[][] holder = {new DataOutputStream[0]};
    long[][] last = {new long[0]};
    long[] noTimestamp = {-1, -1};
    boolean handedOver = false;
    try {
      long n = source.read((buf, off, len, ts, p, o) -> {
        try {
          if (p >= holder[0].length) {
            int size = Math.max(p + 1, holder[0].length * 2);
            holder[0] = Arrays.copyOf(holder[0], size);
            long[] grown = Arrays.copyOf(last[0], size);
            Arrays.fill(grown, last[0].length, size, Long.MIN_VALUE);
            last[0] = grown;
          }
          DataOutputStream out = holder[0][p];
          if (out == null) {
            out = new DataOutputStream(new BufferedOutputStream(Files.newOutputStream(dir.resolve(p + ".bin")), 1 << 16));
            holder[0][p] = out;
          }
          if (o <= last[0][p]) {
            throw new IllegalArgumentException("model.scope: global: " + what + " gave partition " + p + " offset " + o
                + " after offset " + last[0][p] + "; a global-scope replay needs each partition in offset order");
          }
          last[0][p] = o;
          if (ts < 0 && noTimestamp[0] < 0) {
            noTimestamp[0] = p;
            noTimestamp[1] = o;
          }
          out.writeLong(ts);
          out.writeLong(o);
          out.writeInt(len);
          out.write(buf, off, len);
        } catch (IOException e) {
          throw new UncheckedIOException(e);
        }
      });
      DataOutputStream[] outs = holder[0];
      int count = 0;
      for (DataOutputStream out : outs) {
        if (out != null) {
          out.close();
          count++;
        }
      }
      int[] parts = new int[count];
      Path[] files = new Path[count];
      int k = 0;
      for (int p = 0; p < outs.length; p++) {
        if (outs[p] != null) {
          parts[k] = p;
          files[k] = dir.resolve(p + ".bin");
          k++;
        }
      }
      if (count > 1 && noTimestamp[0] >= 0) {
        throw new IllegalArgumentException("model.scope: global: " + what + " holds a record without a timestamp (partition "
            + noTimestamp[0] + ", offset " + noTimestamp[1] + "), so its place among the other partitions' records is not"
            + " known and a replay would not be deterministic; replay it with model.scope: partition, or from a topic"
            + " whose records carry timestamps");
      }
      MergedFeed feed = new MergedFeed(dir, parts, files, n);
      handedOver = true; // the feed owns the folder now
      return feed;
    } catch (UncheckedIOException e) {
      throw e.getCause();
    } finally {
      if (!handedOver) {
        for (DataOutputStream out : holder[0]) {
          if (out != null) {
            try {
              out.close();
            } catch (IOException ignored) {
              // deleting anyway
            }
          }
        }
        delete(dir);
      }
    }
  }

  /** The partitions that had records, ascending. */
  public int[] partitions() {
    return partitions.clone();
  }

  /** The records read by {@link #spill}. */
  public long records() {
    return records;
  }

  /** One partition's file being read: its head record. */
  private static final class Head {
    final int partition;
    final DataInputStream in;
    long ts;
    long offset;
    byte[] buf = new byte[256];
    int len;

    Head(int partition, DataInputStream in) {
      this.partition = partition;
      this.in = in;
    }

    /** Reads the next record; false at the end of the file. */
    boolean next() throws IOException {
      try {
        ts = in.readLong();
      } catch (EOFException end) {
        return false;
      }
      offset = in.readLong();
      len = in.readInt();
      if (len > buf.length) {
        buf = new byte[Math.max(len, buf.length * 2)];
      }
      in.readFully(buf, 0, len);
      return true;
    }
  }

  /** The merge order: timestamp, then partition, then offset. */
  static final Comparator<Head> ORDER = Comparator.<Head>comparingLong(h -> h.ts)
      .thenComparingInt(h -> h.partition).thenComparingLong(h -> h.offset);

  /**
   * Hands every record to the handler in the merged order.
   *
   * @return records handed on
   */
  public long read(RecordHandler handler) throws IOException {
    PriorityQueue<Head> heap = new PriorityQueue<>(Math.max(1, files.length), ORDER);
    Head[] all = new Head[files.length];
    try {
      for (int i = 0; i < files.length; i++) {
        all[i] = new Head(partitions[i], new DataInputStream(new BufferedInputStream(Files.newInputStream(files[i]), 1 << 16)));
        if (all[i].next()) {
          heap.add(all[i]);
        }
      }
      long n = 0;
      while (!heap.isEmpty()) {
        Head h = heap.poll();
        handler.record(h.buf, 0, h.len, h.ts, h.partition, h.offset);
        n++;
        if (h.next()) {
          heap.add(h);
        }
      }
      return n;
    } finally {
      for (Head h : all) {
        if (h != null) {
          h.in.close();
        }
      }
    }
  }

  /** Deletes the files. */
  @Override
  public void close() {
    delete(dir);
  }

  private static void delete(Path dir) {
    try (Stream<Path> s = Files.list(dir)) {
      for (Path f : (Iterable<Path>) s::iterator) {
        Files.deleteIfExists(f);
      }
      Files.deleteIfExists(dir);
    } catch (IOException e) {
      // a temporary folder left behind is not worth failing the replay for
    }
  }
}
