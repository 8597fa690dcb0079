package dev.runnel.connect.kafka;

import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.connect.testing.TestBroker;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import org.apache.kafka.clients.admin.Admin;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;

/** The broker process is killed (SIGKILL) and restarted while the runner works; the runner recovers by itself. */
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
}
