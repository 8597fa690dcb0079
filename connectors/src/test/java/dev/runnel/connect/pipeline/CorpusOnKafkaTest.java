package dev.runnel.connect.pipeline;
import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.connect.testing.TestBroker;
import dev.runnel.core.corpus.InputCorpus;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;

/**
 * The corpus of bad and awkward records (stream-core's {@code corpus/input-kinds.jsonl}) mixed into
 * the demo feed, through the exactly-once runner on the real embedded broker, once per event-time
 * format: every kind's outcome on {@code <name>.rejects} (its reason at its offset) or
 * {@code <name>.predictions}, the committed state equal to stream-core's direct run over the same
 * records bit for bit, and its model and featurizer equal to those of the feed without the rejected
 * records.
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class CorpusOnKafkaTest {

  private static final ObjectMapper JSON = new ObjectMapper();

  static PipelineStep direct(PipelineConfig cfg, List<byte[]> lines) {
    PipelineStep step = new PipelineStep(cfg);
    PipelineStep.Sink none = new PipelineStep.Sink() {
      @Override public void prediction(Prediction p, EventRecord r) { }
      @Override public void reject(RejectReason reason, String detail) { }
      @Override public void snapshotDue() { }
    };
    long offset = 0;
    for (byte[] b : lines) step.process(b, 0, b.length, 0L, 0, offset++, none);
    return step;
  }

  @Test
  void everyKindGetsItsReasonOnTheRejectsTopicAndTheStateIsTheCleanRuns(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    List<InputCorpus.Kind> all = InputCorpus.load(InputCorpus.FILE);
    assertTrue(all.size() >= 40, all.size() + " kinds");
    int checked = 0;
    for (String feedName : InputCorpus.FEEDS) {
      String name = "corpus-" + feedName.replace('_', '-');
      PipelineConfig cfg = ConfigLoader.parse(InputCorpus.configYaml(feedName), "demo (" + feedName + ")")
          .withNameAndTopic(name, name + ".in");
      InputCorpus.Mixed mixed = InputCorpus.mix(InputCorpus.feed(feedName), InputCorpus.ofFeed(all, feedName));
      String topic = cfg.input().topic().orElseThrow();
      KafkaTestSupport.createTopic(bs, topic, 1);
      try (KafkaProducer<byte[], byte[]> p = new KafkaProducer<>(KafkaTestSupport.producerConfig(bs))) {
        for (byte[] v : mixed.lines()) p.send(new ProducerRecord<>(topic, 0, null, v));
        p.flush();
      }
      byte[] state = PipelineOnKafkaTest.runToEnd(broker, cfg, mixed.lines().size());

      Map<Long, String> reasonAt = new HashMap<>();
      for (ConsumerRecord<byte[], byte[]> r : KafkaTestSupport.readAll(bs, name + ".rejects")) {
        JsonNode j = JSON.readTree(r.value());
        assertNull(reasonAt.put(j.path("source").path("offset").asLong(), j.path("reason").asText()), "one reject per offset");
      }
      Map<Long, Integer> predictedAt = new HashMap<>();
      for (ConsumerRecord<byte[], byte[]> r : KafkaTestSupport.readAll(bs, name + ".predictions")) {
        predictedAt.merge(JSON.readTree(r.value()).path("source").path("offset").asLong(), 1, Integer::sum);
      }
      int corpusRejects = 0;
      for (int i = 0; i < mixed.lines().size(); i++) {
        InputCorpus.Kind k = mixed.kindAt().get(i);
        if (k == null) continue;
        long off = i;
        if (k.expected().equals("accepted")) {
          assertNull(reasonAt.get(off), feedName + " kind " + k.kind() + " was rejected");
          assertEquals(1, predictedAt.getOrDefault(off, 0), feedName + " kind " + k.kind() + ": one prediction");
        } else {
          assertEquals(k.expected(), reasonAt.get(off), feedName + " kind " + k.kind());
          assertEquals(0, predictedAt.getOrDefault(off, 0), feedName + " kind " + k.kind() + ": no prediction");
          corpusRejects++;
        }
        checked++;
      }
      PipelineStep clean = direct(cfg, mixed.withoutRejected());
      assertEquals(corpusRejects + clean.rejected(), reasonAt.size(), feedName + ": the corpus's rejects and the feed's own, no more");
      assertEquals(mixed.lines().size(), reasonAt.size() + predictedAt.size(), feedName + ": one output per record");

      assertArrayEquals(direct(cfg, mixed.lines()).checkpoint(), state, feedName + ": the committed state is stream-core's direct run's, bit for bit");
      PipelineStep restored = new PipelineStep(cfg);
      restored.restore(state);
      assertArrayEquals(PipelineOnKafkaTest.modelAndFeaturizerBytes(clean), PipelineOnKafkaTest.modelAndFeaturizerBytes(restored),
          feedName + ": model and featurizer equal those of the feed without the rejected records");
    }
    assertEquals(all.size(), checked, "every kind went through Kafka");
  }
}
