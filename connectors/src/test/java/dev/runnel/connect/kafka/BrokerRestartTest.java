package dev.runnel.connect.kafka;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.connect.demo.DemoRun;
import dev.runnel.connect.pipeline.PipelineProcessor;
import dev.runnel.connect.testing.TestBroker;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.OutputJson;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.pipeline.SettledForecast;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import dev.runnel.demo.QuillmarshGenerator;
import dev.runnel.demo.Settings;
import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;

/**
 * The broker process is killed (SIGKILL) and restarted while the runner works; the runner recovers by
 * itself. With the demo pipeline ({@code input.forecast}), forecasts are pending in the checkpoint when
 * the broker goes away, and every forecast is still settled exactly once, with the bytes and in the
 * order of an uninterrupted stream-core run.
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class BrokerRestartTest {

  @Test void runnerRecoversFromABrokerCrashWithExactlyOnceOutputs(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    String topic = "restart-in";
    KafkaTestSupport.createTopic(bs, topic, 2);
    ExactlyOnceCheck check = new ExactlyOnceCheck(ExactlyOnceCheck.input(47, 2, 25_000, 0));
    int firstPart = 15_000;
    List<List<String>> first = new ArrayList<>();
    List<List<String>> second = new ArrayList<>();
    for (List<String> vs : check.input) {
      first.add(vs.subList(0, firstPart));
      second.add(vs.subList(firstPart, vs.size()));
    }
    KafkaTestSupport.produce(bs, topic, first);
    RunnerSettings s = RunnerSettings.of("restart", topic, bs).withClientProperties(ExactlyOnceRunnerTest.TEST_CLIENT_PROPS)
        .withCommitInterval(200, 1000);
    ExactlyOnceRunner runner = new ExactlyOnceRunner(s, new SumProcessorFactory());
    Thread t = ExactlyOnceRunnerTest.start(runner);
    KafkaTestSupport.await("runner a third of the way", Duration.ofSeconds(60), () -> runner.counters().recordsIn() >= 10_000);
    broker.kill();
    long inAtKill = runner.counters().recordsIn();
    Thread.sleep(2000);
    broker.start();
    assertTrue(bs.equals(broker.bootstrapServers()), "the restarted broker uses the same port");
    KafkaTestSupport.produce(bs, topic, second);
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      ExactlyOnceRunnerTest.awaitCommitted(admin, s, check.total(), runner);
    }
    runner.close();
    t.join(30_000);
    assertNull(runner.failure());
    assertTrue(inAtKill < check.total(), "the broker was killed mid-stream");
    check.verify(bs, "restart", topic);
  }

  @Test void withForecastsPendingEveryForecastIsSettledOnceAcrossABrokerCrash(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    String name = "restart-forecast";
    PipelineConfig cfg = DemoRun.demoConfig().withNameAndTopic(name, name + ".in");
    String topic = cfg.input().topic().orElseThrow();
    KafkaTestSupport.createTopic(bs, topic, 1);
    List<String> lines = new QuillmarshGenerator(Settings.defaults().withDays(60)).lines().limit(24_000).toList();
    int firstPart = 14_000;
    KafkaTestSupport.produce(bs, topic, List.of(lines.subList(0, firstPart)));
    RunnerSettings s = RunnerSettings.of(name, topic, bs).withClientProperties(ExactlyOnceRunnerTest.TEST_CLIENT_PROPS)
        .withCommitInterval(200, 1500);
    ExactlyOnceRunner runner = new ExactlyOnceRunner(s, PipelineProcessor.factory(cfg));
    Thread t = ExactlyOnceRunnerTest.start(runner);
    long committedAtKill;
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      KafkaTestSupport.await("the runner committed 6000 records", Duration.ofSeconds(120), () -> {
        if (runner.failure() != null) {
          throw new AssertionError("runner failed: " + runner.failure());
        }
        try {
          return KafkaTestSupport.committedTotal(admin, s.groupId(), topic) >= 6_000;
        } catch (Exception e) {
          return false;
        }
      });
      committedAtKill = KafkaTestSupport.committedTotal(admin, s.groupId(), topic);
    }
    broker.kill();
    long inAtKill = runner.counters().recordsIn();
    Thread.sleep(2000);
    broker.start();
    KafkaTestSupport.produce(bs, topic, List.of(lines.subList(firstPart, lines.size())));
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      ExactlyOnceRunnerTest.awaitCommitted(admin, s, lines.size(), runner);
    }
    runner.close();
    t.join(30_000);
    assertNull(runner.failure());
    assertTrue(inAtKill < lines.size() && committedAtKill < firstPart, "the broker was killed mid-stream: " + committedAtKill);

    // the uninterrupted run: stream-core directly over the same records, outputs as the processor writes them
    PipelineStep step = new PipelineStep(cfg);
    OutputJson json = OutputJson.of(cfg); // what the runner writes (output format 3)
    List<byte[]> expected = new ArrayList<>();
    List<byte[]> expectedSettled = new ArrayList<>();
    int[] pendingAfter = new int[lines.size()];
    long offset = 0;
    for (String line : lines) {
      byte[] b = line.getBytes(StandardCharsets.UTF_8);
      long off = offset++;
      step.process(b, 0, b.length, 0L, 0, off, new PipelineStep.Sink() {
        @Override public void prediction(Prediction pr, EventRecord r) { expected.add(json.prediction(pr, r)); }
        @Override public void reject(RejectReason reason, String detail) {
          expected.add(json.reject(reason, detail, 0, off, b, 0, b.length));
        }
        @Override public void snapshotDue() { }
        @Override public void settled(SettledForecast sf, EventRecord r) { expectedSettled.add(json.settled(sf, r)); }
      });
      pendingAfter[(int) off] = step.pendingForecasts();
    }
    assertTrue(pendingAfter[(int) committedAtKill - 1] > 0, "forecasts were pending in the committed state when the broker"
        + " went away: " + pendingAfter[(int) committedAtKill - 1]);
    List<ConsumerRecord<byte[], byte[]>> settled = KafkaTestSupport.readAll(bs, name + ".settled");
    assertTrue(expectedSettled.size() > 1000, "forecasts settled: " + expectedSettled.size());
    // each forecast (its request's offset, and whether it is a settling again after a correction) once
    ObjectMapper m = new ObjectMapper();
    Map<String, Integer> perForecast = new HashMap<>();
    for (ConsumerRecord<byte[], byte[]> r : settled) {
      JsonNode j = m.readTree(r.value());
      perForecast.merge(j.path("request").path("offset").asLong() + "/" + j.path("actual_source").path("offset").asLong(), 1,
          Integer::sum);
    }
    perForecast.forEach((k, n) -> assertEquals(1, n, "forecast/actual " + k + " settled " + n + " times"));
    assertEquals(expectedSettled.size(), settled.size(), "each forecast settled exactly once");
    for (int i = 0; i < settled.size(); i++) {
      assertArrayEquals(expectedSettled.get(i), settled.get(i).value(), "settled forecast " + i);
    }
    byte[][] got = new byte[lines.size()][];
    for (String tp : new String[] {name + ".predictions", name + ".rejects"}) {
      for (ConsumerRecord<byte[], byte[]> r : KafkaTestSupport.readAll(bs, tp)) {
        int o = (int) m.readTree(r.value()).path("source").path("offset").asLong();
        assertNull(got[o], "offset " + o + " has two outputs");
        got[o] = r.value();
      }
    }
    for (int o = 0; o < lines.size(); o++) {
      assertArrayEquals(expected.get(o), got[o], "output of offset " + o);
    }
    List<ConsumerRecord<byte[], byte[]>> state = KafkaTestSupport.readAll(bs, name + ".state");
    assertArrayEquals(step.checkpoint(), state.get(state.size() - 1).value(), "the final state equals the uninterrupted run's");
  }
}
