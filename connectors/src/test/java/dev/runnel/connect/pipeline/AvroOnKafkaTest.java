package dev.runnel.connect.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.connect.demo.DemoRun;
import dev.runnel.connect.kafka.ExactlyOnceRunner;
import dev.runnel.connect.kafka.RunnerSettings;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import dev.runnel.connect.testing.TestBroker;
import dev.runnel.core.config.PipelineConfig;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import org.apache.avro.Schema;
import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.common.TopicPartition;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;
import org.junit.jupiter.api.io.TempDir;

/**
 * Avro values with the registry framing on the real broker, under exactly once: the predictions
 * topic holds what the same records as JSON give, and a value that is no Avro of the schema is a
 * reject on the rejects topic while the stream goes on.
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class AvroOnKafkaTest {

  @TempDir Path dir;

  @Test
  void framedAvroOnATopicGivesTheOutputsOfTheSameJsonRecords(TestBroker broker) throws Exception {
    Path schemaFile = dir.resolve("session.avsc");
    Files.writeString(schemaFile, AvroInputTest.DEMO_SCHEMA);
    Schema schema = new Schema.Parser().parse(AvroInputTest.DEMO_SCHEMA);
    PipelineConfig json = DemoRun.demoConfig().withNameAndTopic("avro-pipeline", "avro-pipeline.in");
    PipelineConfig cfg = AvroInputTest.withEncoding(json, PipelineConfig.InputFormat.AVRO_FRAMED, schemaFile);
    String topic = cfg.input().topic().orElseThrow();
    List<String> lines = AvroInputTest.typedDemoLines(1200);
    int badAt = 300;

    // the reference: the same records as JSON through the processor, the bad value as the live run gets it
    PipelineProcessor ref = new PipelineProcessor(json, new TopicPartition(topic, 0));
    ref.restore(null);
    AvroInputTest.Outputs expected = new AvroInputTest.Outputs();
    List<byte[]> values = new ArrayList<>();
    for (int i = 0; i < lines.size(); i++) {
      if (i == badAt) {
        values.add(new byte[] {0, 0, 0, 0, 42, (byte) 0x99});
      }
      values.add(AvroInputTest.avro(schema, lines.get(i), true));
      ref.process(values.size() - 1, 0L, null, lines.get(i).getBytes(StandardCharsets.UTF_8), expected);
    }

    String bs = broker.bootstrapServers();
    KafkaTestSupport.createTopic(bs, topic, 1);
    try (KafkaProducer<byte[], byte[]> p = new KafkaProducer<>(KafkaTestSupport.producerConfig(bs))) {
      for (byte[] v : values) {
        p.send(new ProducerRecord<>(topic, 0, null, v));
      }
      p.flush();
    }
    RunnerSettings s = RunnerSettings.of(cfg.name(), topic, bs)
        .withClientProperties(PipelineOnKafkaTest.TEST_CLIENT_PROPS).withCommitInterval(500, 2000);
    ExactlyOnceRunner runner = new ExactlyOnceRunner(s, PipelineProcessor.factory(cfg));
    Thread t = new Thread(runner, "avro-runner");
    t.setDaemon(true);
    t.start();
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      KafkaTestSupport.await("all input committed", Duration.ofSeconds(180), () -> {
        if (runner.failure() != null) {
          throw new AssertionError("runner failed: " + runner.failure());
        }
        try {
          return KafkaTestSupport.committedTotal(admin, s.groupId(), topic) >= values.size();
        } catch (Exception e) {
          return false;
        }
      });
    }
    runner.close();
    t.join(30_000);
    assertNull(runner.failure());

    List<String> predictions = new ArrayList<>();
    for (ConsumerRecord<byte[], byte[]> r : KafkaTestSupport.readAll(bs, cfg.name() + ".predictions")) {
      predictions.add(new String(r.value(), StandardCharsets.UTF_8));
    }
    List<String> rejects = new ArrayList<>();
    for (ConsumerRecord<byte[], byte[]> r : KafkaTestSupport.readAll(bs, cfg.name() + ".rejects")) {
      rejects.add(new String(r.value(), StandardCharsets.UTF_8));
    }
    assertTrue(expected.predictions.size() > 1000, "predictions " + expected.predictions.size());
    assertEquals(expected.predictions, predictions);
    assertEquals(1, rejects.size(), rejects.toString());
    assertTrue(rejects.get(0).contains("\"reason\":\"malformed_json\"") && rejects.get(0).contains("\"offset\":" + badAt)
        && rejects.get(0).contains("not an Avro record of schema quillmarsh.invented.Session"), rejects.get(0));
  }
}
