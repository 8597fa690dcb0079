package dev.runnel.connect.kafka;

import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.connect.broker.EmbeddedBroker;
import dev.runnel.connect.testing.TestBroker;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import java.nio.file.Path;
import java.nio.file.Paths;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.concurrent.TimeUnit;
import org.apache.kafka.clients.admin.Admin;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;

/**
 * Two instances share a two-partition input; one (its own JVM) is killed with SIGKILL. While the group
 * waits out the dead member's session timeout, the survivor says which partitions wait, how many records,
 * and why (session.timeout.ms, static membership); then it takes them over and says they move again, and
 * the outputs are exactly once.
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class MemberLostTest {
  private static final String NAME = "lost";
  private static final String TOPIC = "lost-in";
  /** Long enough that the survivor reports (10 s without a commit) well before the takeover. */
  private static final String SESSION_TIMEOUT_MS = "25000";

  @Test void theSurvivorSaysWhatWaitsAndWhyUntilItTakesOver(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    KafkaTestSupport.createTopic(bs, TOPIC, 2);
    ExactlyOnceCheck check = new ExactlyOnceCheck(ExactlyOnceCheck.input(61, 2, 6_000, 0));
    List<List<String>> first = new ArrayList<>();
    List<List<String>> second = new ArrayList<>();
    for (List<String> vs : check.input) {
      first.add(vs.subList(0, 3_000));
      second.add(vs.subList(3_000, vs.size()));
    }
    Map<String, String> props = Map.of("session.timeout.ms", SESSION_TIMEOUT_MS, "heartbeat.interval.ms", "1000",
        "producer.transaction.timeout.ms", "15000");
    Path log = Paths.get("target", "lost-runner.log").toAbsolutePath();
    List<String> cmd = new ArrayList<>(List.of(Paths.get(System.getProperty("java.home"), "bin", "java").toString(),
        "-Xmx256m", "-XX:+UseSerialGC", "-Dorg.slf4j.simpleLogger.logFile=" + log,
        "-cp", EmbeddedBroker.childClasspath(), RunnerMain.class.getName(),
        "--bootstrap", bs, "--name", NAME, "--topic", TOPIC, "--factory", SumProcessorFactory.class.getName(),
        "--commit-interval-ms", "200", "--commit-interval-records", "1000", "--instance-id", "1"));
    for (Map.Entry<String, String> e : props.entrySet()) {
      cmd.add("--property");
      cmd.add(e.getKey() + "=" + e.getValue());
    }
    Process other = new ProcessBuilder(cmd).redirectErrorStream(true).redirectOutput(log.toFile()).start();
    try {
      run(bs, check, first, second, props, log, other);
    } finally {
      other.destroyForcibly(); // never leave the child running when an assertion fails
    }
  }

  private static void run(String bs, ExactlyOnceCheck check, List<List<String>> first, List<List<String>> second,
      Map<String, String> props, Path log, Process other) throws Exception {
    KafkaTestSupport.await("the other instance has the partitions", Duration.ofSeconds(60), () -> assignments(log) >= 1);
    RunnerSettings s = RunnerSettings.of(NAME, TOPIC, bs).withClientProperties(props).withCommitInterval(200, 1000);
    ExactlyOnceRunner survivor = new ExactlyOnceRunner(s, new SumProcessorFactory());
    Thread t = ExactlyOnceRunnerTest.start(survivor);
    KafkaTestSupport.await("the other instance gave one partition up", Duration.ofSeconds(60), () -> assignments(log) >= 2);
    KafkaTestSupport.produce(bs, TOPIC, first);
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      // both members work: each partition's first half committed, and this instance did only part of it
      ExactlyOnceRunnerTest.awaitCommitted(admin, s, 6_000, survivor);
      assertTrue(other.isAlive(), "the other instance runs; see " + log);
      assertTrue(survivor.counters().recordsIn() > 0 && survivor.counters().recordsIn() < 6_000,
          "the partitions are shared: " + survivor.counters());
      other.destroyForcibly(); // SIGKILL: it never leaves the group
      assertTrue(other.waitFor(20, TimeUnit.SECONDS));
      KafkaTestSupport.produce(bs, TOPIC, second);
      KafkaTestSupport.await("the survivor reports the waiting partition", Duration.ofSeconds(60), () -> survivor.waitingReport() != null);
      String report = survivor.waitingReport();
      assertTrue(report.contains("records waiting") && report.contains("session.timeout.ms=" + SESSION_TIMEOUT_MS)
          && report.contains("static membership") && report.contains("[" + TOPIC + "-"), report);
      ExactlyOnceRunnerTest.awaitCommitted(admin, s, check.total(), survivor);
    }
    KafkaTestSupport.await("the survivor says the partitions move again", Duration.ofSeconds(30), () -> survivor.waitingReport() == null);
    survivor.close();
    t.join(30_000);
    assertNull(survivor.failure());
    check.verify(bs, NAME, TOPIC);
  }

  /** How often the other instance logged an assignment so far. */
  private static int assignments(Path log) {
    try {
      return (int) java.nio.file.Files.readAllLines(log).stream().filter(l -> l.contains("runner " + NAME + ": assigned")).count();
    } catch (java.io.IOException e) {
      return 0;
    }
  }
}
