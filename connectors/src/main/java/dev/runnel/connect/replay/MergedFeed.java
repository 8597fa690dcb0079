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
 * aside reads again). {@link #close} deletes the files. The folder is made under {@code java.io.tmpdir}
 * ({@link #temporaryRoot()}); the files take the records' values plus {@value #RECORD_OVERHEAD_BYTES}
 * bytes each. One thread.
 *
 * <p>The merge looks at the heads only, so a timestamp that goes back within a partition does not
 * break it: such a record simply comes out after the other partitions' records with lower
 * timestamps that were waiting. A record without a timestamp (a negative one, as Kafka gives for
 * message format 0) cannot be placed and is refused when several partitions are merged.
 */
public final class MergedFeed implements AutoCloseable {

  /** Bytes a record takes in a partition's file besides its value: timestamp, offset, length. */
  static final int RECORD_OVERHEAD_BYTES = 8 + 8 + 4;

  private final Path dir;
  private final int[] partitions;
  private final Path[] files;
  private final long records;
  private final long bytes;

  private MergedFeed(Path dir, int[] partitions, Path[] files, long records, long bytes) {
    this.dir = dir;
    this.partitions = partitions;
    this.files = files;
    this.records = records;
    this.bytes = bytes;
  }

  /**
   * How far the copy is: where the files go, records and bytes written so far, the free space left
   * there when the copy started, and whether it is over.
   *
   * @param dir the temporary folder of this copy
   * @param records records written so far
   * @param bytesWritten bytes written so far, over all files
   * @param usableBytes bytes free for this JVM on the folder's file store when the copy started (-1 unknown)
   * @param files files (partitions) so far
   * @param finished true once, after the last record
   */
  public record SpillProgress(Path dir, long records, long bytesWritten, long usableBytes, int files, boolean finished) { }

  /** Told how the copy goes: once before the first record, every {@value #REPORT_EVERY} records, once at the end. */
  @FunctionalInterface
  public interface SpillListener {
    void spill(SpillProgress p);
  }

  /** Records between two calls of a {@link SpillListener}. */
  static final int REPORT_EVERY = 1024;

  /** The folder temporary copies go under: the JVM's {@code java.io.tmpdir}. */
  public static Path temporaryRoot() {
    return Path.of(System.getProperty("java.io.tmpdir"));
  }

  /** The fix to name when the temporary folder cannot hold the copy. */
  static String fix(Path root) {
    return "point java.io.tmpdir at a writable folder with room for about the source's size (e.g. RUNNEL_JAVA_OPTS="
        + "-Djava.io.tmpdir=/var/tmp ./runnel ..., or java -Djava.io.tmpdir=DIR -jar runnel.jar ...; now " + root
        + "), or replay with model.scope: partition, which reads the source as it comes";
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
    return spill(source, what, temporaryRoot(), null);
  }

  /**
   * As {@link #spill(Source, String)}, in a new folder under {@code root}, telling {@code listener}
   * how the copy goes.
   *
   * @param root the folder to make the temporary folder in (usually {@link #temporaryRoot()})
   * @param listener told where the files go and how far the copy is; null for none
   * @throws IllegalArgumentException naming {@code java.io.tmpdir} and the fix if no folder can be made
   *     under {@code root}, or a file in it cannot be written
   * @throws IOException naming the folder, the bytes written so far and the fix if writing fails later
   *     (a full disk)
   */
  public static MergedFeed spill(Source source, String what, Path root, SpillListener listener) throws IOException {
    return spill(source, what, root, listener, true);
  }

  /**
   * As {@link #spill(Source, String, Path, SpillListener)}; with {@code sharing} false (a
   * {@code model.scope: partition} replay of a recording, where no partition's records affect
   * another's outputs) records without timestamps are accepted (the merge order is still fixed by
   * timestamp, partition and offset, so the bytes stay the same) and errors do not name the scope.
   */
  public static MergedFeed spill(Source source, String what, Path root, SpillListener listener, boolean sharing)
      throws IOException {
    String prefix = sharing ? "model.scope: global: " : "replay of a recording: ";
    Path dir;
    try {
      dir = Files.createTempDirectory(root, "runnel-global-");
    } catch (IOException | SecurityException | UnsupportedOperationException e) {
      throw new IllegalArgumentException(prefix + what + " is first copied to one temporary file per"
          + " partition, but no folder can be made in the temporary folder " + root + " (java.io.tmpdir): " + e
          + "; " + fix(root), e);
    }
    long usable = -1;
    try {
      usable = Files.getFileStore(dir).getUsableSpace();
    } catch (IOException | SecurityException e) {
      // unknown: said as such
    }
    long usableAtStart = usable;
    long[] written = {0, 0}; // bytes, records
    int[] fileCount = {0};
    if (listener != null) {
      listener.spill(new SpillProgress(dir, 0, 0, usableAtStart, 0, false));
    }
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
            fileCount[0]++;
          }
          if (o <= last[0][p]) {
            throw new IllegalArgumentException(prefix + what + " gave partition " + p + " offset " + o
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
          written[0] += RECORD_OVERHEAD_BYTES + len;
          if (++written[1] % REPORT_EVERY == 0 && listener != null) {
            listener.spill(new SpillProgress(dir, written[1], written[0], usableAtStart, fileCount[0], false));
          }
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
      if (sharing && count > 1 && noTimestamp[0] >= 0) {
        throw new IllegalArgumentException("model.scope: global: " + what + " holds a record without a timestamp (partition "
            + noTimestamp[0] + ", offset " + noTimestamp[1] + "), so its place among the other partitions' records is not"
            + " known and a replay would not be deterministic; replay it with model.scope: partition, or from a topic"
            + " whose records carry timestamps");
      }
      MergedFeed feed = new MergedFeed(dir, parts, files, n, written[0]);
      handedOver = true; // the feed owns the folder now
      if (listener != null) {
        listener.spill(new SpillProgress(dir, written[1], written[0], usableAtStart, count, true));
      }
      return feed;
    } catch (UncheckedIOException e) {
      throw new IOException(prefix + "copying " + what + " to temporary files in " + dir + " failed after "
          + written[1] + " records, " + written[0] + " bytes (" + e.getCause().getMessage() + "); " + fix(root),
          e.getCause());
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

  /** The temporary folder holding the files (deleted by {@link #close}). */
  public Path directory() {
    return dir;
  }

  /** Bytes of the files, over all partitions. */
  public long bytes() {
    return bytes;
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
