package dev.runnel.connect.pipeline;

import dev.runnel.connect.kafka.Emitter;
import dev.runnel.connect.kafka.PartitionProcessor;
import dev.runnel.connect.kafka.ProcessorFactory;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.OutputJson;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.pipeline.SettledForecast;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import dev.runnel.core.pipeline.RequestForecast;
import java.nio.charset.StandardCharsets;
import java.util.concurrent.locks.ReentrantLock;
import org.apache.kafka.common.TopicPartition;

/**
 * Runs the stream-core {@link PipelineStep} for one input partition inside the exactly-once
 * runner: each Kafka record becomes a prediction or a reject (and now and then a coefficient
 * snapshot; with {@code input.forecast}, an actual also settles the forecasts pending for it), and the step's checkpoint is the partition's state. Nothing here computes: every
 * number comes from stream-core, so a replay of the same records gives the same bits.
 *
 * <p>Reading from other threads ({@link #forecast}, {@link #stats}): the runner's thread holds this
 * processor's lock while it restores or processes one record, and a reader holds it while it reads, so
 * a reader sees the state after some whole record, never a half-updated model. A lock rather than
 * serving on the runner's thread between records: the runner's thread waits up to 200 ms in each poll
 * when the input is idle, and a request should not wait for that; uncontended, the lock costs two
 * atomic operations per record.
 */
public final class PipelineProcessor implements PartitionProcessor {

  private static final byte[] EMPTY = new byte[0];

  private final PipelineStep step;
  private final OutputJson json;
  private final int partition;
  private final byte[] partitionKey;
  private final StepSink sink = new StepSink();
  private final ReentrantLock lock = new ReentrantLock();
  private volatile boolean restored;
  /** Made on the first request; used under the lock only. */
  private RequestForecast requests;
  private OutputJson requestJson;
  private final PipelineConfig config;

  /**
   * @param config the pipeline configuration. Not modified.
   * @param tp the input partition this processor serves
   */
  public PipelineProcessor(PipelineConfig config, TopicPartition tp) {
    this.config = config;
    this.step = new PipelineStep(config);
    this.json = new OutputJson(config.name(), config.model().intervalLevel());
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

  @Override
  public void restore(byte[] checkpointOrNull) {
    lock.lock();
    try {
      if (checkpointOrNull != null) {
        step.restore(checkpointOrNull);
      }
      restored = true;
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
    lock.lock();
    try {
      if (requests == null) {
        requests = new RequestForecast(step);
        requestJson = new OutputJson(config.name(), config.model().intervalLevel());
      }
      RejectReason r = requests.forecast(value, 0, value.length, arrivalMillis, partition);
      if (r != null) {
        return new Answer(r, value.length == 0 ? "the record has no value" : requests.lastDetail(), null);
      }
      return new Answer(null, "", requestJson.prediction(requests.prediction(), requests.record()));
    } finally {
      lock.unlock();
    }
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
    lock.lock();
    try {
      return new Stats(step.model().noiseSd(), step.metrics().recentMae(), step.drift().alarms().size(), step.records());
    } finally {
      lock.unlock();
    }
  }

  @Override
  public void process(long offset, long timestampMillis, byte[] key, byte[] value, Emitter out) {
    byte[] v = value == null ? EMPTY : value;
    sink.bind(out, key, v, offset);
    lock.lock();
    try {
      step.process(v, 0, v.length, timestampMillis, partition, offset, sink);
    } finally {
      lock.unlock();
    }
  }

  /** The reject for a record whose processing threw, in the format of every reject; the step is not touched. */
  @Override
  public void processingFailed(long offset, long timestampMillis, byte[] key, byte[] value, String message, Emitter out) {
    byte[] v = value == null ? EMPTY : value;
    out.reject(key, json.reject(RejectReason.PROCESSING_FAILED, message, partition, offset, v, 0, v.length));
  }

  @Override
  public byte[] checkpoint() {
    lock.lock(); // writing the model applies its pending re-basing: not while a reader reads
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
      out.prediction(key, json.prediction(p, record));
    }

    @Override
    public void reject(RejectReason reason, String detail) {
      String d = value.length == 0 ? "the record has no value" : detail;
      out.reject(key, json.reject(reason, d, partition, offset, value, 0, value.length));
    }

    @Override
    public void snapshotDue() {
      out.snapshot(partitionKey, json.snapshot(step.snapshot(), partition));
    }

    @Override
    public void settled(SettledForecast s, EventRecord record) {
      out.settled(key, json.settled(s, record));
    }
  }
}
