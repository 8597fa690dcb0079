package dev.runnel.connect.kafka;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.connect.broker.EmbeddedBroker;
import dev.runnel.connect.testing.TestBroker;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import java.nio.file.Path;
import java.nio.file.Paths;
import java.time.Duration;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Random;
import java.util.concurrent.TimeUnit;
import org.apache.kafka.clients.admin.Admin;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;

/** The runner in its own JVM, killed with SIGKILL at seeded random points and restarted; outputs must be exactly once. */
@ExtendWith(EmbeddedKafkaExtension.class)
class CrashRecoveryTest {
  private static final String NAME = "crash";
  private static final String TOPIC = "crash-in";

  private static Process startRunner(String bootstrap, int run) throws Exception {
    Path log = Paths.get("target", "crash-runner-" + run + ".log").toAbsolutePath();
    List<String> cmd = new ArrayList<>(List.of(Paths.get(System.getProperty("java.home"), "bin", "java").toString(),
        "-Xmx256m", "-XX:+UseSerialGC", "-Dorg.slf4j.simpleLogger.logFile=" + log,
        "-Drunnel.test.recordsPerMilli=20", // about 20,000 records/s, so the kills land mid-stream (SumProcessor)
        "-cp", EmbeddedBroker.childClasspath(), RunnerMain.class.getName(),
        "--bootstrap", bootstrap, "--name", NAME, "--topic", TOPIC, "--factory", SumProcessorFactory.class.getName(),
        "--commit-interval-ms", "200", "--commit-interval-records", "1500", "--instance-id", "0"));
    for (String kv : new String[] {"session.timeout.ms=6000", "heartbeat.interval.ms=1000", "producer.transaction.timeout.ms=15000"}) {
      cmd.add("--property");
      cmd.add(kv);
    }
    return new ProcessBuilder(cmd).redirectErrorStream(true).redirectOutput(log.toFile()).start();
  }

  @Test void threeKillsAndRestartsLeaveExactlyOnePredictionPerInputOffset(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    KafkaTestSupport.createTopic(bs, TOPIC, 2);
    ExactlyOnceCheck check = new ExactlyOnceCheck(ExactlyOnceCheck.input(31, 2, 50_000, 0));
    KafkaTestSupport.produce(bs, TOPIC, check.input);
    String group = "runnel." + NAME;
    long total = check.total();
    Random rnd = new Random(20261201);
    long[] killAt = new long[3];
    for (int i = 0; i < 3; i++) killAt[i] = (long) (total * (0.1 + 0.7 * rnd.nextDouble()));
    Arrays.sort(killAt);
    long[] committedAtKill = new long[3];
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      Process p = startRunner(bs, 0);
      for (int k = 0; k < 3; k++) {
        // each restarted runner must restore and commit some work of its own before it is killed again;
        // never more than the input holds: a fast runner may have committed nearly all of it before the
        // previous kill landed (the await polls), and a threshold past the total could never be reached
        final long threshold = k == 0 ? killAt[0] : Math.min(total, Math.max(killAt[k], committedAtKill[k - 1] + 5_000));
        final Process running = p;
        KafkaTestSupport.await("committed offsets reaching " + threshold, Duration.ofSeconds(120), () -> {
          if (!running.isAlive()) throw new AssertionError("runner exited with " + running.exitValue() + "; see target/crash-runner-*.log");
          try {
            return KafkaTestSupport.committedTotal(admin, group, TOPIC) >= threshold;
          } catch (Exception e) {
            return false;
          }
        });
        Thread.sleep(rnd.nextInt(150)); // land somewhere inside the next transaction
        p.destroyForcibly();
        assertTrue(p.waitFor(20, TimeUnit.SECONDS));
        committedAtKill[k] = KafkaTestSupport.committedTotal(admin, group, TOPIC);
        p = startRunner(bs, k + 1);
      }
      final Process last = p;
      KafkaTestSupport.await("all input committed", Duration.ofSeconds(120), () -> {
        if (!last.isAlive()) throw new AssertionError("runner exited with " + last.exitValue());
        try {
          return KafkaTestSupport.committedTotal(admin, group, TOPIC) >= total;
        } catch (Exception e) {
          return false;
        }
      });
      last.destroy(); // SIGTERM: clean stop
      assertTrue(last.waitFor(30, TimeUnit.SECONDS));
    }
    for (int k = 0; k < 3; k++) {
      assertTrue(committedAtKill[k] < total, "kill " + k + " happened mid-stream: committed " + committedAtKill[k] + " of " + total);
    }
    check.verify(bs, NAME, TOPIC);
  }
}
