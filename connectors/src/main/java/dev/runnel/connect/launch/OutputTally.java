package dev.runnel.connect.launch;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.connect.kafka.Emitter;
import dev.runnel.connect.kafka.PartitionProcessor;
import dev.runnel.connect.kafka.ProcessorFactory;
import java.io.IOException;
import java.util.Map;
import java.util.TreeMap;
import java.util.concurrent.ConcurrentHashMap;
import java.util.concurrent.atomic.AtomicLong;
import java.util.concurrent.atomic.LongAdder;

/**
 * Counts what a running pipeline sends, by kind: predictions, snapshots, rejects by reason,
 * settled forecasts. It
 * wraps the processors of a {@link ProcessorFactory} and sees each output as it is handed to the
 * runner, so, like the runner's own counters, it includes work of transactions that were later
 * aborted and replayed. Written by the runner's thread, read by any.
 */
public final class OutputTally {

  private static final ObjectMapper JSON = new ObjectMapper();

  private final LongAdder predictions = new LongAdder();
  private final LongAdder snapshots = new LongAdder();
  private final LongAdder settled = new LongAdder();
  private final Map<String, AtomicLong> rejects = new ConcurrentHashMap<>();

  /** A factory whose processors count their outputs here. */
  public ProcessorFactory wrap(ProcessorFactory inner) {
    return tp -> new Counting(inner.create(tp));
  }

  /** Predictions sent. */
  public long predictions() {
    return predictions.sum();
  }

  /** Coefficient snapshots sent. */
  public long snapshots() {
    return snapshots.sum();
  }

  /** Settled forecasts sent (docs/forecasting.md). */
  public long settled() {
    return settled.sum();
  }

  /** Rejects sent, by reason id (sorted). */
  public Map<String, Long> rejectsByReason() {
    Map<String, Long> m = new TreeMap<>();
    rejects.forEach((k, v) -> m.put(k, v.get()));
    return m;
  }

  /**
   * The reason id inside a reject record, JSON or Avro (told by the headers the processor puts on its
   * rejects), or "unknown" (rare path: rejects are few).
   */
  static String reasonOf(org.apache.kafka.common.header.Header[] headers, byte[] value) {
    try {
      JsonNode n = dev.runnel.connect.output.OutputRecords.read(headers, value);
      String r = n.path("reason").asText("");
      return r.isEmpty() ? "unknown" : r;
    } catch (IOException e) {
      return "unknown";
    }
  }

  private final class Counting implements PartitionProcessor, Emitter {
    private final PartitionProcessor inner;
    private Emitter out;
    /** The headers of the inner processor's rejects: they tell the encoding. */
    private final org.apache.kafka.common.header.Header[] rejectHeaders;

    Counting(PartitionProcessor inner) {
      this.inner = inner;
      this.rejectHeaders = inner.outputHeaders(OutputTopic.REJECTS);
    }

    // the inner processor's headers go on its outputs (without these the runner put none)
    @Override public org.apache.kafka.common.header.Header[] outputHeaders() {
      return inner.outputHeaders();
    }

    @Override public org.apache.kafka.common.header.Header[] outputHeaders(OutputTopic topic) {
      return inner.outputHeaders(topic);
    }

    @Override public void processingFailed(long offset, long timestampMillis, byte[] key, byte[] value, String message, Emitter out) {
      this.out = out;
      inner.processingFailed(offset, timestampMillis, key, value, message, this);
    }

    @Override public void restore(byte[] checkpointOrNull) {
      inner.restore(checkpointOrNull);
    }

    @Override public void process(long offset, long timestampMillis, byte[] key, byte[] value, Emitter out) {
      this.out = out;
      inner.process(offset, timestampMillis, key, value, this);
    }

    @Override public byte[] checkpoint() {
      return inner.checkpoint();
    }

    @Override public void prediction(byte[] key, byte[] value) {
      predictions.increment();
      out.prediction(key, value);
    }

    @Override public void snapshot(byte[] key, byte[] value) {
      snapshots.increment();
      out.snapshot(key, value);
    }

    @Override public void reject(byte[] key, byte[] value) {
      rejects.computeIfAbsent(reasonOf(rejectHeaders, value), k -> new AtomicLong()).incrementAndGet();
      out.reject(key, value);
    }

    @Override public void settled(byte[] key, byte[] value) {
      settled.increment();
      out.settled(key, value);
    }

    @Override public void share(byte[] key, byte[] value) {
      out.share(key, value);
    }

    @Override public boolean sharesModel() {
      return inner.sharesModel();
    }

    @Override public long shareOffset(int sharePartition) {
      return inner.shareOffset(sharePartition);
    }

    @Override public boolean foldShare(int sharePartition, long offset, byte[] value) {
      return inner.foldShare(sharePartition, offset, value);
    }
  }
}
