package dev.runnel.connect.launch;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.connect.kafka.ExactlyOnceRunner;
import dev.runnel.connect.kafka.ProcessorFactory;
import dev.runnel.connect.pipeline.PipelineProcessor;
import dev.runnel.connect.web.Service;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.record.FieldType;
import dev.runnel.core.record.RecordSchema;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.util.Map;
import java.util.TreeMap;
import java.util.concurrent.ConcurrentHashMap;
import org.apache.kafka.common.TopicPartition;
import org.apache.kafka.common.utils.Utils;

/**
 * The running pipeline as the web server sees it ({@link Service}): keeps the current
 * {@link PipelineProcessor} of each input partition (the runner makes a new one after every abort),
 * and answers forecast requests with the processor of the partition that owns the record's key, by
 * Kafka's default partitioning of a key (murmur2 of the key's bytes, made positive, modulo the
 * partition count; {@code org.apache.kafka.common.utils.Utils}, as the producer's built-in partitioner does).
 * The key of a record is the UTF-8 text of {@code web.forecast_key_field}, by default the first of
 * {@code input.forecast.entity_fields}; with one input partition no key is needed.
 */
public final class LiveService implements Service {

  private static final ObjectMapper JSON = new ObjectMapper();

  private final PipelineConfig config;
  private final OutputTally tally;
  private final String keyField;
  private final Map<Integer, PipelineProcessor> processors = new ConcurrentHashMap<>();
  private volatile ExactlyOnceRunner runner;

  /**
   * @throws IllegalArgumentException when {@code web.forecast_key_field} names no text field of {@code input.fields}
   */
  public LiveService(PipelineConfig config, OutputTally tally) {
    this.config = config;
    this.tally = tally;
    this.keyField = keyField(config);
  }

  /** The key field a configuration gives forecast requests, or null for none. */
  static String keyField(PipelineConfig config) {
    String k = config.web().forecastKeyField();
    RecordSchema schema = config.input().schema();
    if (k != null && !k.isEmpty()) {
      int slot = schema.slot(k);
      if (slot < 0 || schema.type(slot) != FieldType.TEXT) {
        throw new IllegalArgumentException("web.forecast_key_field: " + k + " is not a text field of input.fields; name the"
            + " text field your producers key records by (e.g. hub), or leave it out to use the first of"
            + " input.forecast.entity_fields");
      }
      return k;
    }
    PipelineConfig.Forecast fc = config.input().forecast();
    return fc.enabled() && !fc.entityFields().isEmpty() ? fc.entityFields().get(0) : null;
  }

  /** The processors' factory for the runner: each one made is remembered as its partition's current one. */
  public ProcessorFactory factory() {
    return tp -> {
      PipelineProcessor p = new PipelineProcessor(config, tp);
      processors.put(tp.partition(), p);
      return p;
    };
  }

  /** Set once the runner is made (before it starts). */
  public void attach(ExactlyOnceRunner r) {
    this.runner = r;
  }

  @Override
  public ExactlyOnceRunner runner() {
    return runner;
  }

  @Override
  public Map<String, Long> rejectsByReason() {
    return tally.rejectsByReason();
  }

  @Override
  public Map<Integer, PartitionStats> partitionStats() {
    Map<Integer, PartitionStats> out = new TreeMap<>();
    for (TopicPartition tp : runner.heldPartitions()) {
      PipelineProcessor p = processors.get(tp.partition());
      if (p != null && p.restored()) {
        PipelineProcessor.Stats s = p.stats();
        out.put(tp.partition(), new PartitionStats(s.noiseSd(), s.recentMae(), s.activeAlarms()));
      }
    }
    return out;
  }

  /** The partition that owns a key among {@code partitions}: Kafka's default partitioning of a key. */
  public static int partitionOf(byte[] key, int partitions) {
    return Utils.toPositive(Utils.murmur2(key)) % partitions;
  }

  @Override
  public Answer forecast(byte[] record, long arrivalMillis) {
    ExactlyOnceRunner r = runner;
    String notReady = r == null ? "the runner has not started" : r.notReady();
    int count = r == null ? -1 : r.inputPartitionCount();
    if (notReady != null || count <= 0) {
      return new Answer(Outcome.NOT_READY, -1, null, notReady != null ? notReady : "the input topic is not set up yet", null);
    }
    int partition;
    if (count == 1) {
      partition = 0;
    } else {
      JsonNode n;
      try {
        n = JSON.readTree(record);
      } catch (IOException e) {
        n = null;
      }
      if (n == null || !n.isObject()) {
        // a record the stream cannot read: its reject reason does not depend on the partition
        for (TopicPartition tp : r.heldPartitions()) {
          PipelineProcessor p = processors.get(tp.partition());
          if (p != null && p.restored()) {
            PipelineProcessor.Answer a = p.forecast(record, arrivalMillis);
            if (a.reason() != null) {
              return new Answer(Outcome.REJECTED, -1, a.reason().id(), a.detail(), null);
            }
          }
        }
        return new Answer(Outcome.REJECTED, -1, "malformed_json", "the request is not a JSON object", null);
      }
      if (keyField == null) {
        return new Answer(Outcome.REJECTED, -1, "no_key_field", "the input topic has " + count + " partitions and no key"
            + " field is configured; set web.forecast_key_field to the text field your producers key records by", null);
      }
      JsonNode k = n.get(keyField);
      if (k == null || !k.isTextual()) {
        return new Answer(Outcome.REJECTED, -1, "missing_field", "field " + keyField + " (the record's key,"
            + " web.forecast_key_field): " + (k == null || k.isNull() ? "missing" : "not text"), null);
      }
      partition = partitionOf(k.asText().getBytes(StandardCharsets.UTF_8), count);
    }
    TopicPartition tp = new TopicPartition(r.settings().inputTopic(), partition);
    if (!r.heldPartitions().contains(tp)) {
      return new Answer(Outcome.NOT_HELD, partition, null, "partition " + partition + " of " + tp.topic()
          + " is held by another instance of group " + r.settings().groupId() + "; ask the instance that holds it", null);
    }
    PipelineProcessor p = processors.get(partition);
    if (p == null || !p.restored()) {
      return new Answer(Outcome.NOT_READY, partition, null, "partition " + partition + " is being restored", null);
    }
    PipelineProcessor.Answer a = p.forecast(record, arrivalMillis);
    if (a.reason() != null) {
      return new Answer(Outcome.REJECTED, partition, a.reason().id(), a.detail(), null);
    }
    return new Answer(Outcome.FORECAST, partition, null, "", a.prediction());
  }
}
