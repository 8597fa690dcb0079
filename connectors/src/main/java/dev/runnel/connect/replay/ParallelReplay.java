package dev.runnel.connect.replay;

import java.io.IOException;
import java.util.Arrays;
import java.util.List;
import java.util.concurrent.ArrayBlockingQueue;
import java.util.concurrent.CancellationException;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicInteger;
import java.util.concurrent.atomic.AtomicReference;
import java.util.function.LongSupplier;

/**
 * One reader, one worker thread per group of configurations: the reader (the calling thread)
 * copies records into batches and hands every batch to every worker; each worker runs its own
 * configurations over the batch's records in order. Reading and the configurations overlap.
 *
 * <p>Guarantees:
 * <ul>
 *   <li><b>Same bits.</b> Every configuration sees every record once, in the order the source
 *       gave them, on one thread; configurations share no mutable state, so each one ends in
 *       the same state as on the sequential path. The caller reads the results after
 *       {@link #run} has returned (all workers are joined by then, which publishes their writes).
 *   <li><b>Bounded memory, back-pressure.</b> At most {@code batchesInFlight} batches exist
 *       (reused, never reallocated unless a record outgrows one); a batch returns to the reader
 *       only when the slowest worker has finished it, so a slow configuration makes the reader
 *       wait. Each worker's queue is bounded by the same number.
 *   <li><b>Progress</b> counts the records every worker has finished (the slowest one), not the
 *       records read ahead; the listener is called on the reader thread only.
 *   <li><b>Failure and cancellation.</b> The first exception of a worker stops the reader and the
 *       other workers, and is thrown by {@link #run} as a {@link ConfigurationFailure} naming the
 *       configuration and the record. {@link #cancel} (Ctrl-C) or an interrupt of the reader stops
 *       everything and makes {@link #run} throw {@link CancellationException}. Either way every
 *       worker thread has ended when {@link #run} returns or throws (it waits up to two seconds
 *       for a step that ignores the interrupt; a worker leaves after its current batch at the
 *       latest). Workers are daemon threads, so they never keep the JVM alive.
 * </ul>
 *
 * <p>One run per instance.
 */
public final class ParallelReplay {

  /** Runs one configuration's step on one record (e.g. {@code Backtest::acceptFor}). */
  @FunctionalInterface
  public interface VariantSink {
    /**
     * @param variant index of the configuration
     * @param buf the record's bytes; valid during the call only. Not modified.
     * @param off start of the value
     * @param len length of the value
     * @param timestampMillis the Kafka timestamp (0 for a plain file line)
     * @param partition source partition
     * @param offset source offset or line number
     */
    void accept(int variant, byte[] buf, int off, int len, long timestampMillis, int partition, long offset);
  }

  /** Pulls a source through a handler once (e.g. {@code h -> fileSource.read(h, bytes)}). */
  @FunctionalInterface
  public interface Feed {
    /** @return records handed to the handler */
    long read(RecordHandler handler) throws IOException;
  }

  /** A configuration's step threw: names the configuration and the record; the cause is the original. */
  public static final class ConfigurationFailure extends RuntimeException {
    private static final long serialVersionUID = 1L;
    private final String label;

    ConfigurationFailure(String label, int partition, long offset, Throwable cause) {
      super("configuration " + label + " failed on the record at partition " + partition + ", offset " + offset
          + ": " + (cause.getMessage() == null || cause.getMessage().isBlank()
              ? cause.getClass().getSimpleName() : cause.getMessage()), cause);
      this.label = label;
    }

    /** The label of the configuration that failed. */
    public String label() {
      return label;
    }
  }

  /** Records per batch by default: small enough for a steady progress line, large enough to make hand-over cheap. */
  public static final int DEFAULT_BATCH_RECORDS = 1024;
  /** Batches that exist at once by default (memory bound: this many batches of about 1024 records each). */
  public static final int DEFAULT_BATCHES_IN_FLIGHT = 8;
  /** Prefix of the worker threads' names. */
  public static final String THREAD_PREFIX = "runnel-replay-";

  private static final Batch END = new Batch(0, 0);
  private static final long WAIT_MS = 100;

  private final List<String> labels;
  private final VariantSink sink;
  private final int batchRecords;
  private final ArrayBlockingQueue<Batch> free;
  private final Worker[] workers;
  private final AtomicReference<RuntimeException> failure = new AtomicReference<>();
  private volatile boolean cancelled;
  /** Set when the run ends early for any reason: workers leave at their next batch. */
  private volatile boolean stopping;
  private boolean used;

  /**
   * @param labels one label per configuration, in index order. Not modified.
   * @param sink runs one configuration on one record; called from the worker threads, each
   *     configuration always from the same thread
   * @param threads worker threads, at least 1; capped at the number of configurations.
   *     Configuration {@code v} runs on worker {@code v % threads}.
   * @throws IllegalArgumentException if there is no label or {@code threads} is less than 1
   */
  public ParallelReplay(List<String> labels, VariantSink sink, int threads) {
    this(labels, sink, threads, DEFAULT_BATCH_RECORDS, DEFAULT_BATCHES_IN_FLIGHT);
  }

  /**
   * As {@link #ParallelReplay(List, VariantSink, int)} with the batch size and the number of
   * batches in flight (tests use small ones to exercise partial batches and back-pressure).
   *
   * @throws IllegalArgumentException if {@code batchRecords} or {@code batchesInFlight} is less than 1
   */
  ParallelReplay(List<String> labels, VariantSink sink, int threads, int batchRecords, int batchesInFlight) {
    if (labels.isEmpty()) {
      throw new IllegalArgumentException("--config: give at least one configuration");
    }
    if (threads < 1) {
      throw new IllegalArgumentException("--threads must be at least 1, got " + threads);
    }
    if (batchRecords < 1 || batchesInFlight < 1) {
      throw new IllegalArgumentException("batch records and batches in flight must be at least 1, got "
          + batchRecords + " and " + batchesInFlight);
    }
    this.labels = List.copyOf(labels);
    this.sink = sink;
    this.batchRecords = batchRecords;
    int n = Math.min(threads, labels.size());
    this.free = new ArrayBlockingQueue<>(batchesInFlight);
    for (int i = 0; i < batchesInFlight; i++) {
      free.add(new Batch(batchRecords, batchRecords * 256));
    }
    this.workers = new Worker[n];
    for (int w = 0; w < n; w++) {
      int[] mine = new int[(labels.size() - w + n - 1) / n];
      for (int k = 0, v = w; v < labels.size(); v += n) {
        mine[k++] = v;
      }
      workers[w] = new Worker(mine, batchesInFlight);
    }
  }

  /** The worker threads this replay runs (configurations are spread over them). */
  public int threads() {
    return workers.length;
  }

  /**
   * Reads the feed once and runs every configuration over it. Blocks until all workers are done.
   *
   * @param feed the source
   * @param doneSoFar how far the reader is, in the listener's unit (bytes read or records read),
   *     read on the reader thread after each record; null to count records
   * @param total the listener's total (file size, expected records)
   * @param listener told now and then how far the slowest worker is; may be null. Called on
   *     the calling thread only.
   * @return records read
   * @throws ConfigurationFailure if a configuration's step threw
   * @throws CancellationException if {@link #cancel} was called or the calling thread was interrupted
   * @throws IllegalStateException if called twice
   */
  public long run(Feed feed, LongSupplier doneSoFar, long total, ReplayDriver.ProgressListener listener)
      throws IOException {
    if (used) {
      throw new IllegalStateException("a ParallelReplay runs once; make a new one");
    }
    used = true;
    for (Worker w : workers) {
      w.thread.start();
    }
    Reader reader = new Reader(doneSoFar, total, listener);
    boolean finished = false;
    try {
      long n = feed.read(reader);
      reader.flush();
      for (Worker w : workers) {
        reader.put(w, END);
      }
      reader.awaitWorkers();
      if (listener != null) {
        listener.progress(n, doneSoFar == null ? n : doneSoFar.getAsLong(), total);
      }
      finished = true;
      return n;
    } catch (RuntimeException | IOException | Error e) {
      // a worker failed or the replay was cancelled (the reader stopped), or the source itself failed
      RuntimeException f = failure.get();
      if (f != null) {
        if (!(e instanceof Stop)) {
          f.addSuppressed(e);
        }
        throw f;
      }
      if (cancelled || e instanceof Stop) {
        throw new CancellationException("the replay was cancelled");
      }
      throw e;
    } finally {
      if (!finished) {
        stopWorkers();
      }
    }
  }

  /**
   * Stops the replay from any thread (for Ctrl-C): the reader stops at its next record or wait,
   * the workers are interrupted and leave at their next batch; waits up to two seconds for the
   * worker threads to end.
   */
  public void cancel() {
    cancelled = true;
    stopWorkers();
  }

  private void stopWorkers() {
    stopping = true;
    boolean interrupted = Thread.interrupted(); // restored below; join must not fail at once
    for (Worker w : workers) {
      w.thread.interrupt();
    }
    long deadline = System.nanoTime() + TimeUnit.SECONDS.toNanos(2);
    for (Worker w : workers) {
      long left = deadline - System.nanoTime();
      while (w.thread.isAlive() && left > 0) {
        try {
          w.thread.join(Math.max(1, TimeUnit.NANOSECONDS.toMillis(left)));
        } catch (InterruptedException e) {
          interrupted = true;
        }
        left = deadline - System.nanoTime();
      }
    }
    if (interrupted) {
      Thread.currentThread().interrupt();
    }
  }

  /** Thrown through the source's read loop to stop it. */
  private static final class Stop extends RuntimeException {
    private static final long serialVersionUID = 1L;

    Stop() {
      super(null, null, false, false);
    }
  }

  /** Records copied out of the source's buffers, shared read-only by all workers. */
  private static final class Batch {
    byte[] bytes;
    final int[] offs;
    final int[] lens;
    final long[] times;
    final int[] partitions;
    final long[] offsets;
    int count;
    int used;
    /** Records read up to the end of this batch. */
    long recordsEnd;
    /** The listener's measure up to the end of this batch. */
    long doneEnd;
    /** Workers that have not finished this batch. */
    final AtomicInteger pending = new AtomicInteger();

    Batch(int records, int bytes) {
      this.bytes = new byte[bytes];
      this.offs = new int[records];
      this.lens = new int[records];
      this.times = new long[records];
      this.partitions = new int[records];
      this.offsets = new long[records];
    }

    void add(byte[] buf, int off, int len, long ts, int partition, long offset) {
      if (used + len > bytes.length) {
        bytes = Arrays.copyOf(bytes, Math.max(bytes.length * 2, used + len));
      }
      System.arraycopy(buf, off, bytes, used, len);
      offs[count] = used;
      lens[count] = len;
      times[count] = ts;
      partitions[count] = partition;
      offsets[count] = offset;
      count++;
      used += len;
    }
  }

  /** The handler the source calls on the reader thread. */
  private final class Reader implements RecordHandler {
    private final LongSupplier doneSoFar;
    private final long total;
    private final ReplayDriver.ProgressListener listener;
    private Batch current;
    private long records;

    Reader(LongSupplier doneSoFar, long total, ReplayDriver.ProgressListener listener) {
      this.doneSoFar = doneSoFar;
      this.total = total;
      this.listener = listener;
    }

    @Override
    public void record(byte[] buf, int off, int len, long timestampMillis, int partition, long offset) {
      if (current == null) {
        current = takeFree();
      }
      current.add(buf, off, len, timestampMillis, partition, offset);
      records++;
      if (current.count == batchRecords) {
        flush();
      }
    }

    /** Hands the current batch (if any record is in it) to every worker. */
    void flush() {
      Batch b = current;
      if (b == null || b.count == 0) {
        return;
      }
      current = null;
      b.recordsEnd = records;
      b.doneEnd = doneSoFar == null ? records : doneSoFar.getAsLong();
      b.pending.set(workers.length);
      for (Worker w : workers) {
        put(w, b);
      }
      report();
    }

    private Batch takeFree() {
      while (true) {
        check();
        try {
          Batch b = free.poll(WAIT_MS, TimeUnit.MILLISECONDS);
          if (b != null) {
            check(); // cancel sets its flag before it interrupts the workers that release batches
            b.count = 0;
            b.used = 0;
            return b;
          }
        } catch (InterruptedException e) {
          cancelled = true;
          Thread.currentThread().interrupt();
          throw new Stop();
        }
        report();
      }
    }

    void put(Worker w, Batch b) {
      while (true) {
        check();
        try {
          if (w.queue.offer(b, WAIT_MS, TimeUnit.MILLISECONDS)) {
            return;
          }
        } catch (InterruptedException e) {
          cancelled = true;
          Thread.currentThread().interrupt();
          throw new Stop();
        }
        report();
      }
    }

    void awaitWorkers() {
      for (Worker w : workers) {
        while (w.thread.isAlive()) {
          check();
          try {
            w.thread.join(WAIT_MS);
          } catch (InterruptedException e) {
            cancelled = true;
            Thread.currentThread().interrupt();
            throw new Stop();
          }
          report();
        }
      }
      check();
    }

    private void check() {
      if (cancelled || failure.get() != null) {
        throw new Stop();
      }
    }

    private void report() {
      if (listener == null) {
        return;
      }
      long recs = Long.MAX_VALUE;
      long done = Long.MAX_VALUE;
      for (Worker w : workers) {
        // read done before records: a worker writes records first, so done never runs ahead of records
        long d = w.doneEnd;
        long r = w.recordsEnd;
        recs = Math.min(recs, r);
        done = Math.min(done, d);
      }
      listener.progress(recs, done, total);
    }
  }

  /** One worker thread and its configurations. */
  private final class Worker implements Runnable {
    final int[] variants;
    final ArrayBlockingQueue<Batch> queue;
    final Thread thread;
    volatile long recordsEnd;
    volatile long doneEnd;

    Worker(int[] variants, int capacity) {
      this.variants = variants;
      this.queue = new ArrayBlockingQueue<>(capacity);
      StringBuilder name = new StringBuilder(THREAD_PREFIX);
      for (int i = 0; i < variants.length; i++) {
        name.append(i == 0 ? "" : "+").append(labels.get(variants[i]));
      }
      this.thread = new Thread(this, name.toString());
      thread.setDaemon(true);
    }

    @Override
    public void run() {
      int v = -1;
      int i = -1;
      Batch b = null;
      try {
        while (!stopping && failure.get() == null) {
          b = queue.take();
          if (b == END) {
            return;
          }
          for (int k = 0; k < variants.length; k++) {
            v = variants[k];
            for (i = 0; i < b.count; i++) {
              sink.accept(v, b.bytes, b.offs[i], b.lens[i], b.times[i], b.partitions[i], b.offsets[i]);
            }
          }
          recordsEnd = b.recordsEnd;
          doneEnd = b.doneEnd;
          if (b.pending.decrementAndGet() == 0) {
            free.offer(b);
          }
          b = null;
        }
      } catch (InterruptedException e) {
        // stopped by cancel or by another worker's failure
      } catch (RuntimeException | Error e) {
        if (stopping) {
          return; // a step that fails because the run is being stopped is not a configuration failure
        }
        if (b == null || i < 0 || i >= b.count) {
          failure.compareAndSet(null, new IllegalStateException("replay worker " + thread.getName() + " failed: " + e, e));
        } else {
          failure.compareAndSet(null, new ConfigurationFailure(labels.get(v), b.partitions[i], b.offsets[i], e));
        }
      }
    }
  }
}
