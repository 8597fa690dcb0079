package dev.runnel.connect.kafka;

import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.connect.broker.EmbeddedBroker;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import java.nio.file.Path;
import java.nio.file.Paths;
import java.time.Duration;
import java.util.List;
import org.apache.kafka.clients.admin.Admin;
import org.junit.jupiter.api.Test;

/**
 * The runner notices by itself when the cluster is gone (the clients' own reconnect warnings are turned off)
 * and when it is back, and then goes on exactly once. The state is read from the counters, where the
 * runner's log line reads it from. A broker of its own (killed and restarted here), so that the shared
 * one of the other tests is not restarted once more.
 */
class BrokerAwayTest {

  @Test void theRunnerSaysWhenTheBrokerIsAwayAndWhenItIsBack() throws Exception {
    Path dir = Paths.get("target", "embedded-kafka", "away").toAbsolutePath();
    EmbeddedKafkaExtension.deleteTree(dir);
    EmbeddedBroker broker = new EmbeddedBroker(dir);
    broker.start();
    try {
      run(broker);
    } finally {
      broker.stop();
    }
  }

  private static void run(EmbeddedBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    String topic = "away-in";
    KafkaTestSupport.createTopic(bs, topic, 1);
    ExactlyOnceCheck check = new ExactlyOnceCheck(ExactlyOnceCheck.input(53, 1, 4_000, 0));
    KafkaTestSupport.produce(bs, topic, List.of(check.input.get(0).subList(0, 2_000)));
    RunnerSettings s = RunnerSettings.of("away", topic, bs).withClientProperties(ExactlyOnceRunnerTest.TEST_CLIENT_PROPS)
        .withCommitInterval(200, 500);
    ExactlyOnceRunner runner = new ExactlyOnceRunner(s, new SumProcessorFactory());
    Thread t = ExactlyOnceRunnerTest.start(runner);
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      KafkaTestSupport.await("first half committed", Duration.ofSeconds(60),
          () -> committed(admin, s) >= 2_000);
    }
    assertTrue(runner.counters().brokerAwaySinceEpochMillis() == 0, "reachable while it runs");
    broker.kill();
    KafkaTestSupport.await("the runner notices the broker is away", Duration.ofSeconds(60),
        () -> runner.counters().brokerAwaySinceEpochMillis() > 0);
    broker.start();
    KafkaTestSupport.await("the runner notices the broker is back", Duration.ofSeconds(90),
        () -> runner.counters().brokerAwaySinceEpochMillis() == 0);
    KafkaTestSupport.produce(bs, topic, List.of(check.input.get(0).subList(2_000, 4_000)));
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      ExactlyOnceRunnerTest.awaitCommitted(admin, s, check.total(), runner);
    }
    runner.close();
    t.join(30_000);
    assertNull(runner.failure());
    check.verify(bs, "away", topic);
  }

  private static long committed(Admin admin, RunnerSettings s) {
    try {
      return KafkaTestSupport.committedTotal(admin, s.groupId(), s.inputTopic());
    } catch (Exception e) {
      return -1;
    }
  }
}
