package dev.runnel.connect.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.connect.testing.TestBroker;
import dev.runnel.connect.kafka.Emitter;
import dev.runnel.connect.kafka.ExactlyOnceRunner;
import dev.runnel.connect.kafka.PartitionProcessor;
import dev.runnel.connect.kafka.ProcessorFactory;
import dev.runnel.connect.kafka.RunnerSettings;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import dev.runnel.core.config.PipelineConfig;
import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.Set;
import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.common.TopicPartition;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;

/**
 * A record whose processing throws (a defect, planted here by a test-only wrapper around the real
 * processor) never stops a partition: under exactly once on the real broker, the record ends on
 * {@code <name>.rejects} as {@code processing_failed}, and every output and the committed state equal
 * those of the same stream without the record, bit for bit.
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class PoisonRecordOnKafkaTest {

  private static final ObjectMapper JSON = new ObjectMapper();
  private static final String MARK = "\"planted_failure\":true,";

  /**
   * Wraps the real processor: a record carrying the mark is first processed for real (so the step's
   * model, vocabularies and counters have moved) and then throws, as a defect deep in the model would.
   */
  static final class ThrowingProcessor implements PartitionProcessor {
    private final PipelineProcessor real;

    ThrowingProcessor(PipelineProcessor real) { this.real = real; }

    static ProcessorFactory factory(PipelineConfig cfg) {
      return tp -> new ThrowingProcessor(new PipelineProcessor(cfg, tp));
    }

    @Override public void restore(byte[] checkpointOrNull) { real.restore(checkpointOrNull); }

    @Override public void process(long offset, long ts, byte[] key, byte[] value, Emitter out) {
      real.process(offset, ts, key, value, out);
      if (value != null && new String(value, StandardCharsets.UTF_8).contains(MARK)) {
        throw new IllegalStateException("planted failure at offset " + offset);
      }
    }

    @Override public void processingFailed(long offset, long ts, byte[] key, byte[] value, String message, Emitter out) {
      real.processingFailed(offset, ts, key, value, message, out);
    }

    @Override public byte[] checkpoint() { return real.checkpoint(); }
  }

  /** Outputs of one partition as strings, in order. */
  static final class Outputs implements Emitter {
    final List<String> predictions = new ArrayList<>();
    final List<String> snapshots = new ArrayList<>();
    final List<String> rejects = new ArrayList<>();
    final List<String> settled = new ArrayList<>();   // the demo configuration declares input.forecast

    @Override public void settled(byte[] k, byte[] v) { settled.add(new String(v, StandardCharsets.UTF_8)); }
    @Override public void prediction(byte[] k, byte[] v) { predictions.add(new String(v, StandardCharsets.UTF_8)); }
    @Override public void snapshot(byte[] k, byte[] v) { snapshots.add(new String(v, StandardCharsets.UTF_8)); }
    @Override public void reject(byte[] k, byte[] v) { rejects.add(new String(v, StandardCharsets.UTF_8)); }
  }

  @Test
  void aThrowingRecordBecomesARejectAndTheStreamGoesOnAsIfItHadNeverCome(TestBroker broker) throws Exception {
    PipelineConfig cfg = PipelineOnKafkaTest.config("poison-pipeline");
    String bs = broker.bootstrapServers();
    String topic = cfg.input().topic().orElseThrow();
    List<String> lines = PipelineOnKafkaTest.demoLines(9_000);
    // partition 0: two poison records far apart and two in a row; partition 1: one
    Map<Integer, Set<Integer>> poisonAt = Map.of(0, Set.of(700, 2600, 2601), 1, Set.of(1500));
    List<List<String>> input = new ArrayList<>();
    for (int p = 0; p < 2; p++) {
      List<String> part = new ArrayList<>();
      List<String> clean = lines.subList(p * 4500, (p + 1) * 4500);
      int c = 0;
      while (c < clean.size()) {
        if (poisonAt.get(p).contains(part.size())) {
          part.add(clean.get(c).replaceFirst("\\{", "{" + MARK)); // a good record, processed, then the throw
        } else {
          part.add(clean.get(c++));
        }
      }
      input.add(part);
    }
    assertTrue(input.get(0).get(700).contains(MARK) && input.get(0).get(2601).contains(MARK));

    // the reference: the real processor over the same records with their live offsets and keys, poison left out
    List<Outputs> expected = new ArrayList<>();
    List<byte[]> expectedState = new ArrayList<>();
    for (int p = 0; p < 2; p++) {
      PipelineProcessor ref = new PipelineProcessor(cfg, new TopicPartition(topic, p));
      ref.restore(null);
      Outputs out = new Outputs();
      List<String> part = input.get(p);
      for (int i = 0; i < part.size(); i++) {
        byte[] key = ("k" + i).getBytes(StandardCharsets.UTF_8);
        byte[] value = part.get(i).getBytes(StandardCharsets.UTF_8);
        if (poisonAt.get(p).contains(i)) {
          ref.processingFailed(i, 0L, key, value, IllegalStateException.class.getName() + ": planted failure at offset " + i, out);
        } else {
          ref.process(i, 0L, key, value, out);
        }
      }
      expected.add(out);
      expectedState.add(ref.checkpoint());
    }

    KafkaTestSupport.createTopic(bs, topic, 2);
    KafkaTestSupport.produce(bs, topic, input);
    RunnerSettings s = RunnerSettings.of(cfg.name(), topic, bs)
        .withClientProperties(PipelineOnKafkaTest.TEST_CLIENT_PROPS).withCommitInterval(500, 2000);
    ExactlyOnceRunner runner = new ExactlyOnceRunner(s, ThrowingProcessor.factory(cfg));
    Thread t = new Thread(runner, "poison-runner");
    t.setDaemon(true);
    t.start();
    long total = input.get(0).size() + input.get(1).size();
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      KafkaTestSupport.await("all input committed", Duration.ofSeconds(180), () -> {
        if (runner.failure() != null) {
          throw new AssertionError("runner failed: " + runner.failure());
        }
        try {
          return KafkaTestSupport.committedTotal(admin, s.groupId(), topic) >= total;
        } catch (Exception e) {
          return false;
        }
      });
    }
    runner.close();
    t.join(30_000);
    assertNull(runner.failure());
    assertEquals(4, runner.counters().processingFailures(), "each poison record counted once");

    // outputs per input partition, in log order
    List<Outputs> actual = List.of(new Outputs(), new Outputs());
    for (ConsumerRecord<byte[], byte[]> r : KafkaTestSupport.readAll(bs, cfg.name() + ".predictions")) {
      actual.get(JSON.readTree(r.value()).path("source").path("partition").asInt()).prediction(r.key(), r.value());
    }
    for (ConsumerRecord<byte[], byte[]> r : KafkaTestSupport.readAll(bs, cfg.name() + ".rejects")) {
      actual.get(JSON.readTree(r.value()).path("source").path("partition").asInt()).reject(r.key(), r.value());
    }
    for (ConsumerRecord<byte[], byte[]> r : KafkaTestSupport.readAll(bs, cfg.name() + ".settled")) {
      actual.get(JSON.readTree(r.value()).path("actual_source").path("partition").asInt()).settled(r.key(), r.value());
    }
    for (ConsumerRecord<byte[], byte[]> r : KafkaTestSupport.readAll(bs, cfg.name() + ".coefficients")) {
      actual.get(new String(r.key(), StandardCharsets.UTF_8).endsWith("-0") ? 0 : 1).snapshot(r.key(), r.value());
    }
    Map<String, byte[]> state = new HashMap<>();
    for (ConsumerRecord<byte[], byte[]> r : KafkaTestSupport.readAll(bs, cfg.name() + ".state")) {
      state.put(new String(r.key(), StandardCharsets.UTF_8), r.value());
    }
    int failedSeen = 0;
    for (int p = 0; p < 2; p++) {
      assertEquals(expected.get(p).predictions, actual.get(p).predictions, "predictions of partition " + p);
      assertEquals(expected.get(p).snapshots, actual.get(p).snapshots, "snapshots of partition " + p);
      assertEquals(expected.get(p).rejects, actual.get(p).rejects, "rejects of partition " + p);
      assertEquals(expected.get(p).settled, actual.get(p).settled, "settled forecasts of partition " + p);
      assertTrue(expected.get(p).settled.size() > 1000, "forecasts settled in partition " + p);
      for (String rej : actual.get(p).rejects) {
        JsonNode j = JSON.readTree(rej);
        if (j.path("reason").asText().equals("processing_failed")) {
          failedSeen++;
          long off = j.path("source").path("offset").asLong();
          assertTrue(poisonAt.get(p).contains((int) off), "set aside at a poison offset: " + off);
          assertTrue(j.path("detail").asText().contains("planted failure at offset " + off), j.path("detail").asText());
          assertTrue(j.path("raw").asText().contains(MARK), "the raw record is kept");
        }
      }
      byte[] committed = state.get(topic + "-" + p);
      assertNotNull(committed, "a checkpoint for partition " + p);
      assertArrayEquals(expectedState.get(p), committed, "state of partition " + p + " equals the run without the poison records");
    }
    assertEquals(4, failedSeen, "every poison record on the rejects topic once");
  }
}
