package dev.runnel.connect.pipeline;

import dev.runnel.connect.kafka.Emitter;
import dev.runnel.connect.kafka.PartitionProcessor;
import dev.runnel.connect.kafka.ProcessorFactory;
import dev.runnel.connect.output.OutputEncoder;
import dev.runnel.connect.output.OutputSchemas;
import dev.runnel.core.config.ModelScope;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.model.ModelShare;
import dev.runnel.core.pipeline.OutputJson;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.pipeline.SettledForecast;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import dev.runnel.core.pipeline.RequestForecast;
import java.nio.charset.StandardCharsets;
import java.util.concurrent.ConcurrentLinkedQueue;
import java.util.concurrent.locks.LockSupport;
import java.util.concurrent.locks.ReentrantLock;
import java.util.function.Supplier;
import org.apache.kafka.common.TopicPartition;
import org.apache.kafka.common.header.Header;
import org.apache.kafka.common.header.internals.RecordHeader;

/**
 * Runs the stream-core {@link PipelineStep} for one input partition inside the exactly-once
 * runner: each Kafka record becomes a prediction or a reject (and now and then a coefficient
 * snapshot; with {@code input.forecast}, an actual also settles the forecasts pending for it), and the step's checkpoint is the partition's state. Nothing here computes: every
 * number comes from stream-core, so a replay of the same records gives the same bits.
 *
 * <p>Reading from other threads ({@link #forecast}, {@link #stats}): one lock guards the state; the
 * runner's thread holds it while it restores, processes one record or writes the checkpoint, and a
 * reader runs only while it is held, so a reader sees the state after some whole record, never a
 * half-updated model. A reader never waits in the lock's queue: it takes the lock when it is free (the
 * runner is between records or idle in its poll), else it leaves its read in a queue that the runner's
 * thread serves right after the record it is processing, and sleeps until then. Why: with readers
 * queued on the lock, every release by the runner's thread woke a reader that then lost the lock to the
 * runner's next record and slept again; at 1,000 requests a second that cost the stream a third of its
 * throughput on the 2-core test machine (docs/performance.md). The runner's thread, finding the lock
 * held by a reader (microseconds), spins instead of sleeping; uncontended the lock costs two atomic
 * operations per record, and an empty queue one volatile read.
 */
public final class PipelineProcessor implements PartitionProcessor {

  private static final byte[] EMPTY = new byte[0];

  private final PipelineStep step;
  /** {@code model.scope: global}: shares are made after records and folded from {@code <name>.shares}. */
  private final boolean sharing;
  /** Turns Avro values into JSON objects; null for JSON input. */
  private final AvroValues avro;
  private final int maxRecordBytes;
  private final OutputJson json;
  /** Predictions, settled forecasts and rejects in the configured {@code outputs.encoding}. */
  private final OutputEncoder encoder;
  private final int partition;
  private final byte[] partitionKey;
  private final StepSink sink = new StepSink();
  private final ReentrantLock lock = new ReentrantLock();
  /** Reads left for the runner's thread to serve after its current record. */
  private final ConcurrentLinkedQueue<Read<?>> queued = new ConcurrentLinkedQueue<>();

  /** A read waiting for the state. */
  private static final class Read<T> {
    final Supplier<T> work;
    final Thread waiter = Thread.currentThread();
    volatile T result;
    volatile RuntimeException failure;
    volatile boolean done;

    Read(Supplier<T> work) {
      this.work = work;
    }

    void run() {
      try {
        result = work.get();
      } catch (RuntimeException | Error e) {
        // a request's failure is the request's: the runner's thread, which may be serving it, goes on
        failure = e instanceof RuntimeException re ? re : new IllegalStateException("a read of the state failed: " + e, e);
      }
      done = true;
      LockSupport.unpark(waiter);
    }
  }
  private volatile boolean restored;
  /** Made on the first request; used under the lock only. */
  private RequestForecast requests;
  private OutputJson requestJson;
  private final PipelineConfig config;
  /** The format version and pipeline name, on every output record instead of in its value (JSON; snapshots always). */
  private final Header[] headers;
  /** With {@code outputs.encoding: avro}: the schema fingerprint header of predictions, rejects and settled forecasts. */
  private final Header[] predictionHeaders;
  private final Header[] rejectHeaders;
  private final Header[] settledHeaders;
  private final Header[] snapshotHeaders;

  /**
   * @param config the pipeline configuration. Not modified.
   * @param tp the input partition this processor serves
   */
  public PipelineProcessor(PipelineConfig config, TopicPartition tp) {
    this.config = config;
    this.step = new PipelineStep(config, tp.partition());
    this.sharing = config.model().scope() == ModelScope.GLOBAL;
    this.avro = AvroValues.of(config);
    this.maxRecordBytes = config.input().limits().maxRecordBytes();
    this.json = OutputJson.of(config);
    this.headers = new RecordHeader[] {
        new RecordHeader(OutputJson.HEADER_FORMAT, Integer.toString(OutputJson.FORMAT_VERSION).getBytes(StandardCharsets.US_ASCII)),
        new RecordHeader(OutputJson.HEADER_PIPELINE, config.name().getBytes(StandardCharsets.UTF_8))};
    this.encoder = OutputEncoder.of(config, json);
    if (encoder.encoding() == PipelineConfig.OutputEncoding.AVRO) {
      // the fingerprint names the schema, which names the format; the pipeline is in the topic's name
      this.predictionHeaders = schemaHeader(OutputSchemas.Kind.PREDICTION);
      this.rejectHeaders = schemaHeader(OutputSchemas.Kind.REJECT);
      this.settledHeaders = schemaHeader(OutputSchemas.Kind.SETTLED);
      this.snapshotHeaders = schemaHeader(OutputSchemas.Kind.SNAPSHOT);
    } else {
      this.predictionHeaders = headers;
      this.rejectHeaders = headers;
      this.settledHeaders = headers;
      this.snapshotHeaders = headers;
    }
    this.partition = tp.partition();
    this.partitionKey = (tp.topic() + "-" + tp.partition()).getBytes(StandardCharsets.UTF_8);
  }

  /** A factory for the runner: one processor per assigned partition. */
  public static ProcessorFactory factory(PipelineConfig config) {
    return tp -> new PipelineProcessor(config, tp);
  }

  /** The step (for tests and the demo summary; read only between records). */
  public PipelineStep step() {
    return step;
  }

  /** {@link OutputJson#HEADER_FORMAT} and {@link OutputJson#HEADER_PIPELINE}. */
  @Override
  public Header[] outputHeaders() {
    return headers.clone();
  }

  /**
   * JSON: {@link #outputHeaders()} on every topic. Avro: {@value OutputSchemas#HEADER_SCHEMA} alone on
   * predictions, rejects, settled forecasts and snapshots (each with its own schema's fingerprint).
   */
  @Override
  public Header[] outputHeaders(OutputTopic topic) {
    return switch (topic) {
      case PREDICTIONS -> predictionHeaders.clone();
      case COEFFICIENTS -> snapshotHeaders.clone();
      case REJECTS -> rejectHeaders.clone();
      case SETTLED -> settledHeaders.clone();
    };
  }

  private static Header[] schemaHeader(OutputSchemas.Kind kind) {
    return new Header[] {new RecordHeader(OutputSchemas.HEADER_SCHEMA, kind.fingerprintBytes())};
  }

  @Override
  public void restore(byte[] checkpointOrNull) {
    acquire();
    try {
      if (checkpointOrNull != null) {
        step.restore(checkpointOrNull);
      }
      restored = true;
      serveQueued();
    } finally {
      lock.unlock();
    }
  }

  /** Whether {@link #restore} has run: before it, the state is not yet the partition's. */
  public boolean restored() {
    return restored;
  }

  /**
   * The answer to one forecast request: the prediction record (the layout of {@code <name>.predictions},
   * source offset -1), or the reason the stream would reject the record with.
   *
   * @param reason null when forecast
   * @param detail what was wrong, "" when forecast
   * @param prediction the prediction's JSON bytes, null when rejected
   */
  public record Answer(RejectReason reason, String detail, byte[] prediction) { }

  /**
   * Forecasts one record read-only from this partition's current model (docs/operations.md): nothing
   * of the state changes. Any thread; waits for the record being processed, if any.
   *
   * @param value the record's JSON bytes. Not modified.
   * @param arrivalMillis the event time when the configuration names no time field
   */
  public Answer forecast(byte[] value, long arrivalMillis) {
    return read(() -> answer(value, arrivalMillis));
  }

  /** One forecast; under the lock. */
  private Answer answer(byte[] value, long arrivalMillis) {
    if (requests == null) {
      requests = new RequestForecast(step);
      requestJson = OutputJson.of(config);
    }
    RejectReason r = requests.forecast(value, 0, value.length, arrivalMillis, partition);
    if (r != null) {
      return new Answer(r, value.length == 0 ? "the record has no value" : requests.lastDetail(), null);
    }
    return new Answer(null, "", requestJson.prediction(requests.prediction(), requests.record()));
  }

  /**
   * What the metrics show of this partition's model, read after a whole record.
   *
   * @param noiseSd the model's noise standard deviation (NaN before the first estimate)
   * @param recentMae the mean absolute a-priori error, recent records weighted most (NaN before the first)
   * @param activeAlarms drift alarms raised now
   * @param records records processed (rejects included)
   */
  public record Stats(double noiseSd, double recentMae, int activeAlarms, long records) { }

  /** This partition's {@link Stats}; any thread. */
  public Stats stats() {
    return read(() -> new Stats(step.model().noiseSd(), step.metrics().recentMae(), step.drift().alarms().size(), step.records()));
  }

  /**
   * Runs {@code work} on the state after a whole record: at once when the lock is free, else by the
   * runner's thread after its current record (this thread sleeps meanwhile, and takes the lock itself
   * should the runner's thread go idle first).
   */
  private <T> T read(Supplier<T> work) {
    if (lock.tryLock()) {
      try {
        serveQueued();
        return work.get();
      } finally {
        lock.unlock();
      }
    }
    Read<T> r = new Read<>(work);
    queued.add(r);
    while (!r.done) {
      LockSupport.parkNanos(r, 1_000_000);
      if (!r.done && lock.tryLock()) {
        try {
          serveQueued();
        } finally {
          lock.unlock();
        }
      }
    }
    if (r.failure != null) {
      throw r.failure;
    }
    return r.result;
  }

  /** Serves the reads left in the queue; under the lock. */
  private void serveQueued() {
    Read<?> r;
    while ((r = queued.poll()) != null) {
      r.run();
    }
  }

  /**
   * Takes the lock on the runner's thread: a reader holds it for microseconds, so spin rather than
   * sleep (a sleeping runner's thread waits for the scheduler to run it again).
   */
  private void acquire() {
    for (int spins = 0; !lock.tryLock(); spins++) {
      if (spins > 100_000) {
        lock.lock(); // a reader taken off its CPU while holding the lock: wait in the queue after all
        return;
      }
      Thread.onSpinWait();
    }
  }

  @Override
  public void process(long offset, long timestampMillis, byte[] key, byte[] value, Emitter out) {
    byte[] v = value == null ? EMPTY : value;
    byte[] record = v;
    String unreadable = null;
    if (avro != null && v.length > 0 && v.length <= maxRecordBytes) {
      // an Avro value becomes the JSON object the decoder reads (rejects then show that object)
      record = avro.toJson(v);
      if (record == null) {
        unreadable = avro.problem();
        record = v;
      }
    }
    sink.bind(out, key, record, offset);
    acquire();
    try {
      if (unreadable != null) {
        step.processUnreadable(RejectReason.MALFORMED_JSON, unreadable, sink);
      } else {
        step.process(record, 0, record.length, timestampMillis, partition, offset, sink);
      }
      if (sharing) {
        ModelShare s = step.shareIfDue();
        if (s != null) {
          // in the open transaction, like this record's outputs and the checkpoint that starts the next share
          out.share(partitionKey, s.toBytes());
        }
      }
      if (!queued.isEmpty()) {
        serveQueued();
      }
    } finally {
      lock.unlock();
    }
  }

  @Override
  public boolean sharesModel() {
    return sharing;
  }

  @Override
  public long shareOffset(int sharePartition) {
    acquire();
    try {
      return step.shareOffset(sharePartition);
    } finally {
      lock.unlock();
    }
  }

  /**
   * Folds one record of {@code <name>.shares}: a share of another partition goes into the view
   * (once: one folded before is skipped by its sequence number), this partition's own are skipped;
   * false while the stream clock has no time yet (the share then waits, docs/operations.md "Scaling").
   *
   * @throws IllegalStateException naming the record when it is not a share of this pipeline's model,
   *     or when it cannot be folded (a share of its source was lost before it)
   */
  @Override
  public boolean foldShare(int sharePartition, long offset, byte[] value) {
    acquire();
    try {
      if (value != null) {
        ModelShare s;
        try {
          s = ModelShare.fromBytes(value);
        } catch (java.io.IOException e) {
          throw new IllegalStateException("the record is not a model share: " + e.getMessage(), e);
        }
        if (s.source() != partition) {
          try {
            if (step.fold(s) == null) {
              return false;
            }
          } catch (IllegalArgumentException e) {
            throw new IllegalStateException(e.getMessage() + " (was a share deleted by the topic's retention before this"
                + " partition read it? Then start a new pipeline name, or reset this pipeline's state)", e);
          }
        }
      }
      step.shareOffset(sharePartition, offset + 1);
      return true;
    } finally {
      lock.unlock();
    }
  }

  /**
   * Runs {@code f} on the step after a whole record (any thread; as {@link #stats}); {@code f} must
   * only read, and copy what it keeps.
   */
  public <T> T readStep(java.util.function.Function<PipelineStep, T> f) {
    return read(() -> f.apply(step));
  }

  /** The reject for a record whose processing threw, in the format of every reject; the step is not touched. */
  @Override
  public void processingFailed(long offset, long timestampMillis, byte[] key, byte[] value, String message, Emitter out) {
    byte[] v = value == null ? EMPTY : value;
    out.reject(key, encoder.reject(RejectReason.PROCESSING_FAILED, message, partition, offset, v, 0, v.length));
  }

  @Override
  public byte[] checkpoint() {
    acquire(); // writing the model applies its pending re-basing: not while a reader reads
    try {
      return step.checkpoint();
    } finally {
      lock.unlock();
    }
  }

  /** Turns the step's outcomes into output records. Reused for every record. */
  private final class StepSink implements PipelineStep.Sink {
    private Emitter out;
    private byte[] key;
    private byte[] value;
    private long offset;

    void bind(Emitter out, byte[] key, byte[] value, long offset) {
      this.out = out;
      this.key = key;
      this.value = value;
      this.offset = offset;
    }

    @Override
    public void prediction(Prediction p, EventRecord record) {
      out.prediction(key, encoder.prediction(p, record));
    }

    @Override
    public void reject(RejectReason reason, String detail) {
      String d = value.length == 0 ? "the record has no value" : detail;
      out.reject(key, encoder.reject(reason, d, partition, offset, value, 0, value.length));
    }

    @Override
    public void snapshotDue() {
      out.snapshot(partitionKey, encoder.snapshot(json, step.snapshot(), partition));
    }

    @Override
    public void settled(SettledForecast s, EventRecord record) {
      out.settled(key, encoder.settled(s, record));
    }
  }
}
