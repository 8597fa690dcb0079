package dev.runnel.connect.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.connect.broker.EmbeddedBroker;
import dev.runnel.connect.testing.TestBroker;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.OutputJson;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.Paths;
import java.time.Duration;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Random;
import java.util.concurrent.TimeUnit;
import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;

/**
 * The real command line ({@code runnel run --config ...}) in its own JVM, killed with SIGKILL at
 * three seeded points and restarted each time: the output topics, read as read_committed, hold
 * exactly the outputs of one uninterrupted stream-core run over the same records — the same
 * bytes per input offset, none missing, none twice — and the final committed state equals that
 * run's checkpoint bit for bit.
 *
 * <p>The demo configuration runs with {@code input.forecast} (entity {@code hub}, target time
 * {@code observed_at}; the demo's hour-ahead and 18:00 day-ahead requests are settled by the actuals
 * that arrive an hour after each hour ends, some a day late): {@code <name>.settled} holds exactly the uninterrupted
 * run's settled forecasts, in order, each once, although the pending forecasts crossed the kills
 * in the checkpoints.
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class PipelineCrashTest {

  private static final String NAME = "crash-pipeline";
  private static final String TOPIC = NAME + ".in";

  static Path writeConfig(String bootstrap) throws Exception {
    String yaml;
    try (InputStream in = PipelineCrashTest.class.getResourceAsStream("/dev/runnel/demo/quillmarsh.yaml")) {
      yaml = new String(in.readAllBytes(), StandardCharsets.UTF_8);
    }
    yaml = yaml.replace("name: quillmarsh\n", "name: " + NAME + "\n")
        .replace("topic: quillmarsh.sessions", "topic: " + TOPIC)
        .replace("bootstrap_servers: \"\"", "bootstrap_servers: \"" + bootstrap + "\"")
        .replace("commit_interval_ms: 500", "commit_interval_ms: 200")
        .replace("commit_interval_records: 5000", "commit_interval_records: 1500\n  client_properties:\n"
            + "    session.timeout.ms: \"6000\"\n    heartbeat.interval.ms: \"1000\"\n"
            + "    producer.transaction.timeout.ms: \"15000\"");
    Path file = Paths.get("target", NAME + ".yaml").toAbsolutePath();
    Files.writeString(file, yaml);
    return file;
  }

  private static Process startRunner(Path config, int run) throws Exception {
    Path log = Paths.get("target", NAME + "-" + run + ".log").toAbsolutePath();
    List<String> cmd = List.of(Paths.get(System.getProperty("java.home"), "bin", "java").toString(),
        "-Xmx256m", "-XX:+UseSerialGC", "-Dorg.slf4j.simpleLogger.logFile=" + log,
        "-cp", EmbeddedBroker.childClasspath(), "dev.runnel.connect.cli.Main",
        "run", "--config", config.toString(), "--quiet");
    return new ProcessBuilder(cmd).redirectErrorStream(true).redirectOutput(log.toFile()).start();
  }

  @Test
  void threeKillsOfTheRealRunnerLeaveTheUninterruptedRunsOutputsAndState(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    Path config = writeConfig(bs);
    PipelineConfig cfg = ConfigLoader.load(config);
    List<String> lines = PipelineOnKafkaTest.demoLines(40_000);
    KafkaTestSupport.createTopic(bs, TOPIC, 1);
    KafkaTestSupport.produce(bs, TOPIC, List.of(lines));
    long total = lines.size();
    String group = "runnel." + NAME;
    Random rnd = new Random(20261202);
    long[] killAt = new long[3];
    for (int i = 0; i < 3; i++) {
      killAt[i] = (long) (total * (0.1 + 0.7 * rnd.nextDouble()));
    }
    Arrays.sort(killAt);
    long[] committedAtKill = new long[3];
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      Process p = startRunner(config, 0);
      for (int k = 0; k < 3; k++) {
        final long threshold = k == 0 ? killAt[0] : Math.min(total, Math.max(killAt[k], committedAtKill[k - 1] + 3_000));
        final Process running = p;
        KafkaTestSupport.await("committed offsets reaching " + threshold, Duration.ofSeconds(180), () -> {
          if (!running.isAlive()) {
            throw new AssertionError("runner exited with " + running.exitValue() + "; see target/" + NAME + "-*.log");
          }
          try {
            return KafkaTestSupport.committedTotal(admin, group, TOPIC) >= threshold;
          } catch (Exception e) {
            return false;
          }
        });
        Thread.sleep(rnd.nextInt(150));
        p.destroyForcibly();
        assertTrue(p.waitFor(20, TimeUnit.SECONDS));
        committedAtKill[k] = KafkaTestSupport.committedTotal(admin, group, TOPIC);
        p = startRunner(config, k + 1);
      }
      final Process last = p;
      KafkaTestSupport.await("all input committed", Duration.ofSeconds(180), () -> {
        if (!last.isAlive()) {
          throw new AssertionError("runner exited with " + last.exitValue());
        }
        try {
          return KafkaTestSupport.committedTotal(admin, group, TOPIC) >= total;
        } catch (Exception e) {
          return false;
        }
      });
      last.destroy();
      assertTrue(last.waitFor(30, TimeUnit.SECONDS));
    }
    for (int k = 0; k < 3; k++) {
      assertTrue(committedAtKill[k] < total, "kill " + k + " happened mid-stream: " + committedAtKill[k] + " of " + total);
    }

    // the uninterrupted reference: stream-core directly, outputs as the processor would write them
    PipelineStep step = new PipelineStep(cfg);
    OutputJson json = OutputJson.of(cfg); // what the runner writes (outputs.echo_fields, significant_digits)
    List<byte[]> expected = new ArrayList<>();
    List<byte[]> expectedSettled = new ArrayList<>();
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
        @Override public void settled(dev.runnel.core.pipeline.SettledForecast s, EventRecord r) { expectedSettled.add(json.settled(s, r)); }
      });
    }
    assertTrue(cfg.input().forecast().enabled() && expectedSettled.size() > 1000, "forecasts settled: " + expectedSettled.size());
    List<ConsumerRecord<byte[], byte[]>> settled = KafkaTestSupport.readAll(bs, NAME + ".settled");
    assertEquals(expectedSettled.size(), settled.size(), "each forecast settled exactly once");
    for (int i = 0; i < settled.size(); i++) {
      assertArrayEquals(expectedSettled.get(i), settled.get(i).value(), "settled forecast " + i);
    }
    ObjectMapper m = new ObjectMapper();
    byte[][] got = new byte[(int) total][];
    for (String t : new String[] {NAME + ".predictions", NAME + ".rejects"}) {
      for (ConsumerRecord<byte[], byte[]> r : KafkaTestSupport.readAll(bs, t)) {
        JsonNode j = m.readTree(r.value());
        int o = (int) j.path("source").path("offset").asLong();
        assertEquals(null, got[o], "offset " + o + " has two outputs");
        got[o] = r.value();
      }
    }
    for (int o = 0; o < total; o++) {
      assertArrayEquals(expected.get(o), got[o], "output of offset " + o);
    }
    List<ConsumerRecord<byte[], byte[]>> state = KafkaTestSupport.readAll(bs, NAME + ".state");
    assertArrayEquals(step.checkpoint(), state.get(state.size() - 1).value(), "final state equals the uninterrupted run's");
  }
}
