package dev.runnel.connect.replay;

import dev.runnel.core.evaluate.Backtest;
import java.io.IOException;
import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.atomic.AtomicIntegerArray;
import java.util.function.LongSupplier;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Feeds a source through a {@link Backtest} in one pass, reporting progress now and then: on the
 * calling thread alone ({@code threads} = 1, the sequential path), or with one reader and worker
 * threads that run the configurations ({@link ParallelReplay}). Both give the same bits. A record on
 * which a configuration's step throws does not stop the replay: it becomes a {@code processing_failed}
 * reject of that configuration and the source is replayed again without it (at most
 * {@value #MAX_SET_ASIDE} such records per configuration).
 */
public final class ReplayDriver {

  /** Told how far the pass is: {@code records} finished by every configuration, {@code done} of about {@code total} (records or bytes). */
  @FunctionalInterface
  public interface ProgressListener {
    void progress(long records, long done, long total);

    /**
     * With {@code model.scope: global}, before the pass: how the copy of the source to temporary files
     * goes ({@link MergedFeed}), with the source's own measure, {@code done} of about {@code total}
     * (bytes of a file, records of a topic range). Default: nothing.
     */
    default void spill(MergedFeed.SpillProgress p, long done, long total) { }
  }

  private static final Logger LOG = LoggerFactory.getLogger(ReplayDriver.class);

  /** Highest default thread count, whatever the processor count (the reader needs a core too). */
  static final int MAX_DEFAULT_THREADS = 8;

  private ReplayDriver() { }

  /**
   * The default number of worker threads: one per configuration, at most the processors the JVM
   * may use and at most {@value #MAX_DEFAULT_THREADS}; 1 (the sequential path) for one
   * configuration or one processor.
   *
   * @param configurations number of configurations, at least 1
   */
  public static int defaultThreads(int configurations) {
    return Math.max(1, Math.min(configurations, Math.min(MAX_DEFAULT_THREADS, Runtime.getRuntime().availableProcessors())));
  }

  /** Replays a file on the calling thread; progress is measured in bytes. @return records read */
  public static long run(Backtest bt, FileSource src, ProgressListener listener) throws IOException {
    return run(bt, src, 1, listener);
  }

  /** Replays a topic range on the calling thread; progress is measured in offsets. @return records read */
  public static long run(Backtest bt, TopicSource src, ProgressListener listener) {
    return run(bt, src, 1, listener);
  }

  /**
   * Replays a file; progress is measured in bytes.
   *
   * @param bt the backtest. Modified.
   * @param threads 1 for the sequential path, more for that many worker threads (capped at the
   *     number of configurations)
   * @return records read
   * @throws ParallelReplay.ConfigurationFailure if a configuration's step threw (names it)
   * @throws java.util.concurrent.CancellationException if the replay was stopped (Ctrl-C)
   * @throws IllegalArgumentException if {@code threads} is less than 1
   */
  public static long run(Backtest bt, FileSource src, int threads, ProgressListener listener) throws IOException {
    if (bt.globalScope()) {
      long[] read = {0};
      return runMerged(bt, h -> src.read(h, read), () -> read[0], src.sizeBytes(), threads, listener);
    }
    long[] bytes = {0};
    long n = passes(bt, sink -> replay(labels(bt), sink, h -> src.read(h, bytes), () -> bytes[0], src.sizeBytes(), threads, listener));
    bt.countRecords(n);
    return n;
  }

  /** Most records set aside per configuration in one replay; past it the replay stops (each costs a pass). */
  static final int MAX_SET_ASIDE = 20;

  /** One pass over the source with the given sink. */
  @FunctionalInterface
  interface Pass {
    long run(ParallelReplay.VariantSink sink) throws IOException;
  }

  /**
   * Runs passes until one finds no record that throws. A record on which a configuration's step
   * throws (a defect, not bad input: bad input is a reject) is set aside for that configuration
   * ({@link Backtest#setAside}): the configuration is not fed again in this pass, and after the pass
   * everything is replayed from the start with that record logged as a {@code processing_failed}
   * reject instead, so every state and metric is exactly that of the stream without the record.
   */
  static long passes(Backtest bt, Pass pass) throws IOException {
    return passes(bt, bt::acceptFor, pass);
  }

  /** As {@link #passes(Backtest, Pass)}; {@code step} runs one configuration on one record (tests wrap {@code bt::acceptFor}). */
  static long passes(Backtest bt, ParallelReplay.VariantSink step, Pass pass) throws IOException {
    List<String> labels = labels(bt);
    while (true) {
      AtomicIntegerArray threw = new AtomicIntegerArray(labels.size());
      long n = pass.run((v, buf, off, len, ts, p, o) -> {
        if (threw.get(v) != 0) {
          return;
        }
        try {
          step.accept(v, buf, off, len, ts, p, o);
        } catch (RuntimeException | StackOverflowError e) {
          setAside(bt, labels, threw, v, p, o, e);
        }
      });
      // with horizons a configuration holds records back: run them now (they may throw too)
      for (int v = 0; v < labels.size(); v++) {
        if (threw.get(v) == 0) {
          try {
            bt.finishFor(v);
          } catch (RuntimeException | StackOverflowError e) {
            setAside(bt, labels, threw, v, -1, -1, e);
          }
        }
      }
      boolean again = false;
      for (int v = 0; v < labels.size(); v++) {
        again |= threw.get(v) != 0;
      }
      if (!again) {
        return n;
      }
      bt.reset();
    }
  }

  /** Sets aside the record a configuration threw on: the one named by a {@link Backtest.RecordFailure}, else (p, o). */
  private static void setAside(Backtest bt, List<String> labels, AtomicIntegerArray threw, int v, int p, long o, Throwable e) {
    Throwable cause = e;
    if (e instanceof Backtest.RecordFailure f) {
      // the step ran a record it had held back (horizons): that record is the one to set aside
      p = f.partition();
      o = f.offset();
      cause = f.getCause();
    }
    if (p < 0) {
      // not a record's failure: a defect of the replay itself
      if (e instanceof RuntimeException r) {
        throw r;
      }
      throw (Error) e;
    }
    if (bt.setAsideCount(v) >= MAX_SET_ASIDE) {
      LOG.error("configuration {}: {} records already set aside as processing_failed; stopping the replay (a defect that"
          + " hits most records is not a poison record)", labels.get(v), MAX_SET_ASIDE);
      if (e instanceof RuntimeException r) {
        throw r;
      }
      throw (Error) e;
    }
    threw.set(v, 1);
    String message = cause.getClass().getName() + ": " + cause.getMessage();
    bt.setAside(v, p, o, message);
    LOG.warn("configuration {} threw on the record at partition {}, offset {} ({}); it becomes a processing_failed reject"
        + " and the replay starts again without it", labels.get(v), p, o, message);
  }

  /**
   * Replays a topic range; progress is measured in offsets.
   *
   * @param bt the backtest. Modified.
   * @param threads as for {@link #run(Backtest, FileSource, int, ProgressListener)}
   * @return records read
   * @throws ParallelReplay.ConfigurationFailure if a configuration's step threw (names it)
   * @throws java.util.concurrent.CancellationException if the replay was stopped (Ctrl-C)
   */
  public static long run(Backtest bt, TopicSource src, int threads, ProgressListener listener) {
    try {
      if (bt.globalScope()) {
        return runMerged(bt, h -> src.read(h, null), null, src.expectedRecords(), threads, listener);
      }
      long n = passes(bt, sink -> replay(labels(bt), sink, h -> src.read(h, null), null, src.expectedRecords(), threads, listener));
      bt.countRecords(n);
      return n;
    } catch (IOException e) {
      throw new java.io.UncheckedIOException(e); // a topic source throws no IOException
    }
  }

  /**
   * With a configuration of {@code model.scope: global}: the source read once into a {@link MergedFeed}
   * and every pass fed from it, all partitions in one order (Kafka timestamp, partition, offset), so
   * the shares are made and folded on the same schedule whatever order the source interleaved the
   * partitions in. The copy's progress goes to {@link ProgressListener#spill} ({@code doneSoFar} of
   * {@code total}: the source's measure, null to count records); the pass's is counted in records.
   */
  static long runMerged(Backtest bt, MergedFeed.Source source, LongSupplier doneSoFar, long total, int threads,
                        ProgressListener listener) throws IOException {
    MergedFeed.SpillListener spill = listener == null ? null
        : p -> listener.spill(p, doneSoFar == null ? p.records() : doneSoFar.getAsLong(), total);
    try (MergedFeed feed = MergedFeed.spill(source, "--source", MergedFeed.temporaryRoot(), spill)) {
      bt.expectPartitions(feed.partitions());
      long n = passes(bt, sink -> replay(labels(bt), sink, feed::read, null, feed.records(), threads, listener));
      bt.countRecords(n);
      return n;
    }
  }

  private static List<String> labels(Backtest bt) {
    List<String> labels = new ArrayList<>();
    for (Backtest.Variant v : bt.variants()) {
      labels.add(v.label());
    }
    return labels;
  }

  /**
   * The replay behind both sources.
   *
   * @param doneSoFar the listener's measure so far, read on the calling thread; null to count records
   */
  static long replay(List<String> labels, ParallelReplay.VariantSink sink, ParallelReplay.Feed feed,
                     LongSupplier doneSoFar, long total, int threads, ProgressListener listener) throws IOException {
    if (threads < 1) {
      throw new IllegalArgumentException("--threads must be at least 1 (1 = no worker threads), got " + threads);
    }
    if (threads == 1) {
      return sequential(labels, sink, feed, doneSoFar, total, listener);
    }
    ParallelReplay replay = new ParallelReplay(labels, sink, threads);
    Thread stopper = new Thread(replay::cancel, "runnel-replay-stop");
    boolean hooked = false;
    try {
      Runtime.getRuntime().addShutdownHook(stopper);
      hooked = true;
    } catch (IllegalStateException shuttingDown) {
      throw new java.util.concurrent.CancellationException("the JVM is shutting down; the replay did not start");
    }
    try {
      return replay.run(feed, doneSoFar, total, listener);
    } finally {
      if (hooked) {
        try {
          Runtime.getRuntime().removeShutdownHook(stopper);
        } catch (IllegalStateException shuttingDown) {
          // Ctrl-C: the hook is running or has run
        }
      }
    }
  }

  private static long sequential(List<String> labels, ParallelReplay.VariantSink sink, ParallelReplay.Feed feed,
                                 LongSupplier doneSoFar, long total, ProgressListener listener) throws IOException {
    int variants = labels.size();
    long[] n = {0};
    long read = feed.read((buf, off, len, ts, p, o) -> {
      for (int v = 0; v < variants; v++) {
        try {
          sink.accept(v, buf, off, len, ts, p, o);
        } catch (RuntimeException e) {
          throw new ParallelReplay.ConfigurationFailure(labels.get(v), p, o, e);
        }
      }
      if ((++n[0] & 1023) == 0 && listener != null) {
        listener.progress(n[0], doneSoFar == null ? n[0] : doneSoFar.getAsLong(), total);
      }
    });
    if (listener != null) {
      listener.progress(read, doneSoFar == null ? read : doneSoFar.getAsLong(), total);
    }
    return read;
  }
}
