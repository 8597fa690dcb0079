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
import java.nio.charset.StandardCharsets;
import org.apache.kafka.common.TopicPartition;
import org.apache.kafka.common.header.Header;
import org.apache.kafka.common.header.internals.RecordHeader;

/**
 * Runs the stream-core {@link PipelineStep} for one input partition inside the exactly-once
 * runner: each Kafka record becomes a prediction or a reject (and now and then a coefficient
 * snapshot; with {@code input.forecast}, an actual also settles the forecasts pending for it), and the step's checkpoint is the partition's state. Nothing here computes: every
 * number comes from stream-core, so a replay of the same records gives the same bits.
 */
public final class PipelineProcessor implements PartitionProcessor {

  private static final byte[] EMPTY = new byte[0];

  private final PipelineStep step;
  private final OutputJson json;
  private final int partition;
  private final byte[] partitionKey;
  private final StepSink sink = new StepSink();
  /** The format version and pipeline name, on every output record instead of in its value. */
  private final Header[] headers;

  /**
   * @param config the pipeline configuration. Not modified.
   * @param tp the input partition this processor serves
   */
  public PipelineProcessor(PipelineConfig config, TopicPartition tp) {
    this.step = new PipelineStep(config);
    this.json = OutputJson.of(config);
    this.headers = new RecordHeader[] {
        new RecordHeader(OutputJson.HEADER_FORMAT, Integer.toString(OutputJson.FORMAT_VERSION).getBytes(StandardCharsets.US_ASCII)),
        new RecordHeader(OutputJson.HEADER_PIPELINE, config.name().getBytes(StandardCharsets.UTF_8))};
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

  @Override
  public void restore(byte[] checkpointOrNull) {
    if (checkpointOrNull != null) {
      step.restore(checkpointOrNull);
    }
  }

  @Override
  public void process(long offset, long timestampMillis, byte[] key, byte[] value, Emitter out) {
    byte[] v = value == null ? EMPTY : value;
    sink.bind(out, key, v, offset);
    step.process(v, 0, v.length, timestampMillis, partition, offset, sink);
  }

  /** The reject for a record whose processing threw, in the format of every reject; the step is not touched. */
  @Override
  public void processingFailed(long offset, long timestampMillis, byte[] key, byte[] value, String message, Emitter out) {
    byte[] v = value == null ? EMPTY : value;
    out.reject(key, json.reject(RejectReason.PROCESSING_FAILED, message, partition, offset, v, 0, v.length));
  }

  @Override
  public byte[] checkpoint() {
    return step.checkpoint();
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
