package dev.runnel.connect.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.connect.testing.TestBroker;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.Paths;
import java.util.List;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code runnel run} as its own process on the real broker: SIGTERM (what {@code Process.destroy()} sends
 * on Linux, and what a service manager sends) stops it cleanly with exit code 0; before, the JVM's exit on
 * the signal gave 143 for a stop that went right.
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class RunStopTest {

  @TempDir
  Path dir;

  @Test
  void sigtermStopsRunCleanlyWithExitCodeZero(TestBroker broker) throws Exception {
    String yaml = Files.readString(Paths.get("../docs/examples/with-weather.yaml"))
        .replace("name: quillmarsh\n", "name: stop-test\n").replace("topic: quillmarsh.sessions", "topic: stop-test.in");
    Path cfg = dir.resolve("stop-test.yaml");
    Files.writeString(cfg, yaml);
    KafkaTestSupport.createTopic(broker.bootstrapServers(), "stop-test.in", 1);
    KafkaTestSupport.produce(broker.bootstrapServers(), "stop-test.in",
        List.of(List.of("{\"kind\":\"actual\",\"hub\":\"QM-01\",\"observed_at\":\"2026-01-05T10:00:00+01:00\",\"weather\":\"rain\","
            + "\"temperature_c\":4.1,\"price_per_kwh\":0.31,\"sessions\":30.5}")));
    Path javaBin = Paths.get(System.getProperty("java.home"), "bin", "java");
    Path log = dir.resolve("run.log");
    Process p = new ProcessBuilder(javaBin.toString(), "-Dorg.slf4j.simpleLogger.logFile=System.err", "-cp", System.getProperty("java.class.path"),
        Main.class.getName(), "run", "--config", cfg.toString(), "--bootstrap-servers", broker.bootstrapServers(), "--no-web", "--quiet")
        .redirectErrorStream(true).redirectOutput(log.toFile()).start();
    try {
      KafkaTestSupport.await("the runner has its partition", java.time.Duration.ofSeconds(90), () -> {
        try {
          return Files.readString(log).contains("assigned");
        } catch (java.io.IOException e) {
          return false;
        }
      });
      Thread.sleep(1500); // the first commit (commit interval 1 s)
      p.destroy(); // SIGTERM
      assertTrue(p.waitFor(90, TimeUnit.SECONDS), "run stopped after SIGTERM");
    } finally {
      p.destroyForcibly();
    }
    String text = Files.readString(log);
    assertEquals(0, p.exitValue(), "exit code after a clean SIGTERM stop; output:\n" + text);
    assertTrue(text.contains("runner stop-test stopped"), "exit " + p.exitValue() + ":\n" + text);
  }
}
