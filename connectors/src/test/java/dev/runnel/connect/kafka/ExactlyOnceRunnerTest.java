package dev.runnel.connect.kafka;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.connect.testing.TestBroker;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.concurrent.TimeUnit;
import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.admin.ConsumerGroupDescription;
import org.apache.kafka.clients.admin.MemberDescription;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;

/** The runner in this JVM against the embedded broker; SumProcessor as the processor, an in-memory run as the reference. */
@ExtendWith(EmbeddedKafkaExtension.class)
class ExactlyOnceRunnerTest {
  /** Short timeouts so that the tests run quickly on a small machine. */
  static final Map<String, String> TEST_CLIENT_PROPS = Map.of(
      "session.timeout.ms", "6000", "heartbeat.interval.ms", "1000", "producer.transaction.timeout.ms", "15000");

  static Thread start(ExactlyOnceRunner r) {
    Thread t = new Thread(r, "runner-" + r.settings().instanceId());
    t.setDaemon(true);
    t.start();
    return t;
  }

  static void awaitCommitted(Admin admin, RunnerSettings s, long total, ExactlyOnceRunner... runners) throws Exception {
    KafkaTestSupport.await("all " + total + " input records committed by " + s.groupId(), Duration.ofSeconds(120), () -> {
      for (ExactlyOnceRunner r : runners) if (r.failure() != null) throw new AssertionError("runner failed: " + r.failure());
      try {
        return KafkaTestSupport.committedTotal(admin, s.groupId(), s.inputTopic()) >= total;
      } catch (Exception e) {
        return false;
      }
    });
  }

  @Test void twentyThousandRecordsGiveOnePredictionPerInputOffset(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    String topic = "e2e-in";
    KafkaTestSupport.createTopic(bs, topic, 2);
    ExactlyOnceCheck check = new ExactlyOnceCheck(ExactlyOnceCheck.input(11, 2, 10_000, 0));
    KafkaTestSupport.produce(bs, topic, check.input);
    RunnerSettings s = RunnerSettings.of("e2e", topic, bs).withClientProperties(TEST_CLIENT_PROPS).withCommitInterval(500, 3000);
    ExactlyOnceRunner runner = new ExactlyOnceRunner(s, new SumProcessorFactory());
    Thread t = start(runner);
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      awaitCommitted(admin, s, check.total(), runner);
    }
    runner.close();
    t.join(30_000);
    assertNull(runner.failure());
    RunnerCounters c = runner.counters();
    assertEquals(20_000, c.recordsIn());
    assertEquals(20_000 + 20, c.outputsOut(), "20,000 predictions + 10 snapshots per partition");
    assertTrue(c.commits() >= 2, "more than one transaction: " + c);
    assertEquals(0, c.aborts());
    assertEquals(20_000, check.predictions.get(0).size() + check.predictions.get(1).size());
    check.verify(bs, "e2e", topic);
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      org.apache.kafka.common.config.ConfigResource state =
          new org.apache.kafka.common.config.ConfigResource(org.apache.kafka.common.config.ConfigResource.Type.TOPIC, "e2e.state");
      org.apache.kafka.clients.admin.Config cfg = admin.describeConfigs(List.of(state)).all().get(20, TimeUnit.SECONDS).get(state);
      assertEquals("compact", cfg.get("cleanup.policy").value());
      assertEquals(Integer.toString(16 * 1024 * 1024), cfg.get("max.message.bytes").value());
      assertEquals(2, admin.describeTopics(List.of("e2e.predictions")).allTopicNames().get(20, TimeUnit.SECONDS)
          .get("e2e.predictions").partitions().size(), "predictions have the input's partition count");
    }
  }

  @Test void secondInstanceTakesOverPartitionsOfAClosedOneFromTheirCheckpoints(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    String topic = "rebalance-in";
    KafkaTestSupport.createTopic(bs, topic, 4);
    ExactlyOnceCheck check = new ExactlyOnceCheck(ExactlyOnceCheck.input(23, 4, 12_500, 997));
    KafkaTestSupport.produce(bs, topic, check.input);
    RunnerSettings base = RunnerSettings.of("rebalance", topic, bs).withClientProperties(TEST_CLIENT_PROPS).withCommitInterval(200, 500);
    ExactlyOnceRunner a = new ExactlyOnceRunner(base.withInstanceId("a"), new SumProcessorFactory());
    ExactlyOnceRunner b = new ExactlyOnceRunner(base.withInstanceId("b"), new SumProcessorFactory());
    Thread ta = start(a);
    KafkaTestSupport.await("instance a processing", Duration.ofSeconds(60), () -> a.counters().recordsIn() > 0);
    Thread tb = start(b);
    KafkaTestSupport.await("instance b processing", Duration.ofSeconds(60), () -> b.counters().recordsIn() >= 2000);
    b.close();
    tb.join(30_000);
    long bIn = b.counters().recordsIn();
    assertTrue(bIn < check.total() / 2, "b was closed mid-stream (processed " + bIn + ")");
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      awaitCommitted(admin, base, check.total(), a);
    }
    a.close();
    ta.join(30_000);
    assertNull(a.failure());
    assertNull(b.failure());
    assertTrue(a.counters().recordsIn() + bIn >= check.total());
    check.verify(bs, "rebalance", topic);
  }

  @Test void clientIdFromThePropertyMapIsVisibleOnTheBroker(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    String topic = "clientid-in";
    KafkaTestSupport.createTopic(bs, topic, 1);
    Map<String, String> env = Map.of("RUNNEL_TEST_CLIENT_ID", "runnel-visible-client");
    RunnerSettings s = RunnerSettings.of("clientid", topic, bs)
        .withClientProperties(Map.of("client.id", "${RUNNEL_TEST_CLIENT_ID}", "session.timeout.ms", "6000"));
    ExactlyOnceRunner runner = new ExactlyOnceRunner(s, new SumProcessorFactory(), env::get);
    Thread t = start(runner);
    List<String> clientIds = new ArrayList<>();
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      KafkaTestSupport.await("a member in group " + s.groupId(), Duration.ofSeconds(60), () -> {
        try {
          ConsumerGroupDescription d = admin.describeConsumerGroups(List.of(s.groupId())).all().get(10, TimeUnit.SECONDS).get(s.groupId());
          clientIds.clear();
          for (MemberDescription m : d.members()) clientIds.add(m.clientId());
          return !clientIds.isEmpty();
        } catch (Exception e) {
          return false;
        }
      });
    }
    runner.close();
    t.join(30_000);
    assertEquals(List.of("runnel-visible-client"), clientIds);
    assertNull(runner.failure());
  }

  @Test void overridingAGuaranteeIsRefusedWithTheKeyInTheMessage() {
    RunnerSettings s = RunnerSettings.of("x", "in", "127.0.0.1:1").withClientProperties(Map.of("isolation.level", "read_uncommitted"));
    IllegalArgumentException e = org.junit.jupiter.api.Assertions.assertThrows(IllegalArgumentException.class,
        () -> new ExactlyOnceRunner(s, new SumProcessorFactory()));
    assertTrue(e.getMessage().contains("isolation.level"), e.getMessage());
  }

  /** Two instances with the same instance id (a misconfiguration): exactly one stops with a message, the other finishes exactly once. */
  @Test void twoInstancesWithTheSameIdEndWithOneStoppedWithAClearMessage(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    String topic = "fence-in";
    KafkaTestSupport.createTopic(bs, topic, 1);
    ExactlyOnceCheck check = new ExactlyOnceCheck(ExactlyOnceCheck.input(59, 1, 30_000, 0));
    KafkaTestSupport.produce(bs, topic, check.input);
    RunnerSettings s = RunnerSettings.of("fence", topic, bs).withClientProperties(TEST_CLIENT_PROPS).withCommitInterval(100, 500)
        .withInstanceId("same");
    ExactlyOnceRunner first = new ExactlyOnceRunner(s, new SumProcessorFactory());
    Thread t1 = start(first);
    KafkaTestSupport.await("first instance processing", Duration.ofSeconds(60), () -> first.counters().recordsIn() >= 1000);
    ExactlyOnceRunner second = new ExactlyOnceRunner(s, new SumProcessorFactory());
    Thread t2 = start(second);
    KafkaTestSupport.await("one instance stopping", Duration.ofSeconds(60), () -> first.failure() != null || second.failure() != null);
    ExactlyOnceRunner stopped = first.failure() != null ? first : second;
    ExactlyOnceRunner survivor = stopped == first ? second : first;
    assertTrue(stopped.failure().contains("give every instance its own instance id"), stopped.failure());
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      awaitCommitted(admin, s, check.total(), survivor);
    }
    survivor.close();
    first.close();
    second.close();
    t1.join(30_000);
    t2.join(30_000);
    assertNull(survivor.failure());
    check.verify(bs, "fence", topic);
  }
}
