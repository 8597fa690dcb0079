package dev.runnel.connect.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.connect.kafka.ExactlyOnceRunner;
import dev.runnel.connect.kafka.PartitionProcessor;
import dev.runnel.connect.kafka.ProcessorFactory;
import dev.runnel.connect.kafka.RunnerSettings;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import dev.runnel.connect.testing.TestBroker;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.model.ModelShare;
import dev.runnel.core.pipeline.PipelineStep;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.concurrent.ConcurrentHashMap;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;

/**
 * {@code model.scope: global} on the real embedded broker: 4 input partitions with hub levels split
 * across them, scalers that differ by partition and forgetting by event time (the feed and why its
 * first stretch is produced alone: {@link GlobalFeed}). Each partition's processor publishes its shares
 * to {@code <name>.shares} in its transactions and folds the others' (read_committed); at the sync
 * point (every partition learned its records and folded every other partition's last share) each
 * partition's committed view equals the ridge solution over the union of all records (EJML's QR),
 * and the uninterrupted stream-core run's views, to 1e-9 relative.
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class GlobalModelOnKafkaTest {

  static final int PER_PARTITION = 400;

  /** A factory that remembers the latest processor of each partition. */
  static ProcessorFactory remembering(PipelineConfig cfg, Map<Integer, PipelineProcessor> latest) {
    return tp -> {
      PipelineProcessor p = new PipelineProcessor(cfg, tp);
      latest.put(tp.partition(), p);
      return p;
    };
  }

  static RunnerSettings settings(PipelineConfig cfg, String bs) {
    return RunnerSettings.of(cfg.name(), cfg.input().topic().orElseThrow(), bs)
        .withClientProperties(cfg.kafka().clientProperties()).withCommitInterval(200, 300);
  }

  /** Waits until the committed states in {@code <name>.state} are at the sync point; returns them. */
  static PipelineStep[] awaitSyncedState(String bs, PipelineConfig cfg, int perPartition, ExactlyOnceRunner... runners)
      throws Exception {
    PipelineStep[][] got = new PipelineStep[1][];
    KafkaTestSupport.await("every partition's committed state at the sync point", Duration.ofSeconds(180), () -> {
      for (ExactlyOnceRunner r : runners) {
        if (r.failure() != null) {
          throw new AssertionError("runner failed: " + r.failure());
        }
      }
      got[0] = GlobalFeed.committedStates(bs, cfg);
      return GlobalFeed.synced(got[0], perPartition);
    });
    return got[0];
  }

  @Test
  void fourPartitionsOneInstanceEveryViewEqualsTheUnionSolution(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    String name = "global-one";
    PipelineConfig cfg = GlobalFeed.config(name, name + ".in", bs);
    List<GlobalFeed.Rec> recs = new ArrayList<>();
    List<List<String>> lines = GlobalFeed.lines(41, PER_PARTITION, recs);
    KafkaTestSupport.createTopic(bs, name + ".in", GlobalFeed.PARTITIONS);
    KafkaTestSupport.produce(bs, name + ".in", slice(lines, 0, GlobalFeed.FIRST));
    Map<Integer, PipelineProcessor> latest = new ConcurrentHashMap<>();
    ExactlyOnceRunner runner = new ExactlyOnceRunner(settings(cfg, bs), remembering(cfg, latest));
    Thread t = new Thread(runner, "global-runner");
    t.setDaemon(true);
    t.start();
    PipelineStep[] steps;
    try {
      awaitSyncedState(bs, cfg, GlobalFeed.FIRST, runner); // every first share folded: the rest may come (GlobalFeed)
      KafkaTestSupport.produce(bs, name + ".in", slice(lines, GlobalFeed.FIRST, PER_PARTITION));
      steps = awaitSyncedState(bs, cfg, PER_PARTITION, runner);
    } finally {
      runner.close();
      t.join(30_000);
    }
    assertNull(runner.failure());

    // every share went through the topic once per partition's transaction that committed it
    List<ConsumerRecord<byte[], byte[]>> shares = KafkaTestSupport.readAll(bs, name + ".shares");
    assertEquals(GlobalFeed.PARTITIONS * PER_PARTITION / GlobalFeed.SHARE_EVERY, shares.size(), "shares published once each");
    for (ConsumerRecord<byte[], byte[]> r : shares) {
      assertEquals(r.partition(), ModelShare.fromBytes(r.value()).source(), "a partition's shares go to its own share partition");
    }
    double worst = checkSyncPoint(bs, cfg, lines, recs, steps, PER_PARTITION);
    System.out.println("GlobalModelOnKafkaTest: largest difference from the union solution " + worst);
  }

  /**
   * The checks at the sync point: each partition's committed view against the union solution with
   * the forgetting weights (EJML QR) and against the uninterrupted stream-core run, to 1e-9
   * relative; wrong union problems told apart (the prior counted once per partition, no
   * forgetting, and the priors of columns only other partitions hold stated at the last sync
   * point instead of the first: the check sees when those priors came); levels split across
   * partitions and scalers that differ by partition; one output per input offset. Returns the
   * largest difference from the union solution and the uninterrupted run.
   */
  static double checkSyncPoint(String bs, PipelineConfig cfg, List<List<String>> lines, List<GlobalFeed.Rec> recs,
      PipelineStep[] steps, int perPartition) throws Exception {
    PipelineStep[] reference = GlobalFeed.uninterrupted(cfg, lines);
    double worst = 0;
    for (int p = 0; p < GlobalFeed.PARTITIONS; p++) {
      assertEquals(perPartition, steps[p].trained());
      double[] union = GlobalFeed.againstUnion(steps[p], p, recs, GlobalFeed.Union.RIGHT);
      assertTrue(union[0] < 1e-9, "partition " + p + ": weights differ from the union solution (EJML QR) by " + union[0]);
      assertTrue(union[1] < 1e-9, "partition " + p + ": standard errors differ from the union solution by " + union[1]);
      for (GlobalFeed.Union wrong : new GlobalFeed.Union[] {GlobalFeed.Union.PRIOR_PER_PARTITION, GlobalFeed.Union.NO_FORGETTING,
          GlobalFeed.Union.FOREIGN_PRIOR_AT_THE_END}) {
        double[] control = GlobalFeed.againstUnion(steps[p], p, recs, wrong);
        assertTrue(control[0] > 1e-6, "partition " + p + ": the union problem " + wrong + " is told apart: " + control[0]);
      }
      // levels split across partitions: this view holds a level only another partition has
      assertTrue(steps[p].globalModel().viewIndex("hub=H" + ((p + 2) % GlobalFeed.PARTITIONS) + "-0") >= 0,
          "partition " + p + "'s view: " + steps[p].globalModel().viewColumns());
      double[] run = GlobalFeed.difference(steps[p].globalModel(), reference[p].globalModel());
      assertTrue(run[0] < 1e-9 && run[1] < 1e-9, "partition " + p + " against the uninterrupted run: " + run[0] + ", " + run[1]);
      worst = Math.max(worst, Math.max(Math.max(union[0], union[1]), Math.max(run[0], run[1])));
    }
    // the scalers really differ by partition: the views state temperature in different bases
    int k0 = steps[0].globalModel().viewIndex("temperature_c");
    int k3 = steps[3].globalModel().viewIndex("temperature_c");
    assertNotEquals(steps[0].globalModel().viewOffset(k0), steps[3].globalModel().viewOffset(k3));
    // each input offset has exactly one output
    int[][] outputs = GlobalFeed.outputsPerOffset(bs, cfg.name(), perPartition);
    for (int p = 0; p < GlobalFeed.PARTITIONS; p++) {
      for (int o = 0; o < perPartition; o++) {
        assertEquals(1, outputs[p][o], "partition " + p + " offset " + o + ": outputs");
      }
    }
    return worst;
  }

  /** Values {@code from} (inclusive) to {@code to} (exclusive) of each partition's lines. */
  static List<List<String>> slice(List<List<String>> lines, int from, int to) {
    List<List<String>> out = new ArrayList<>();
    for (List<String> l : lines) {
      out.add(l.subList(from, to));
    }
    return out;
  }

  /**
   * Two instances in one group: the first alone, then the second joins (the partitions are split,
   * each moving one restored from its checkpoint and its share offsets), then the first leaves
   * (the second takes every partition back from the first's last commits). At the sync point the
   * committed views equal the union solution and the uninterrupted run to 1e-9 relative.
   */
  @Test
  void twoInstancesWithARebalanceEachWayReachTheUninterruptedViews(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    String name = "global-two";
    PipelineConfig cfg = GlobalFeed.config(name, name + ".in", bs);
    List<GlobalFeed.Rec> recs = new ArrayList<>();
    int per = 600;
    List<List<String>> lines = GlobalFeed.lines(43, per, recs);
    String topic = name + ".in";
    KafkaTestSupport.createTopic(bs, topic, GlobalFeed.PARTITIONS);
    Map<Integer, PipelineProcessor> latest = new ConcurrentHashMap<>();
    RunnerSettings s = settings(cfg, bs);
    ExactlyOnceRunner a = new ExactlyOnceRunner(s.withInstanceId("a"), remembering(cfg, latest));
    ExactlyOnceRunner b = new ExactlyOnceRunner(s.withInstanceId("b"), remembering(cfg, latest));
    Thread ta = new Thread(a, "global-a");
    Thread tb = new Thread(b, "global-b");
    ta.setDaemon(true);
    tb.setDaemon(true);
    try (org.apache.kafka.clients.admin.Admin admin = KafkaTestSupport.admin(bs)) {
      KafkaTestSupport.produce(bs, topic, slice(lines, 0, GlobalFeed.FIRST));
      ta.start();
      awaitSyncedState(bs, cfg, GlobalFeed.FIRST, a); // every first share folded: the rest may come (GlobalFeed)
      KafkaTestSupport.produce(bs, topic, slice(lines, GlobalFeed.FIRST, 230));
      awaitCommitted(admin, s, 4 * 230, a);
      tb.start();
      KafkaTestSupport.await("the second instance holding partitions", Duration.ofSeconds(120),
          () -> !b.heldPartitions().isEmpty() && a.heldPartitions().size() < GlobalFeed.PARTITIONS);
      KafkaTestSupport.produce(bs, topic, slice(lines, 230, 420));
      awaitCommitted(admin, s, 4 * 420, a, b);
      a.close();
      ta.join(30_000);
      assertNull(a.failure());
      KafkaTestSupport.await("the second instance holding every partition", Duration.ofSeconds(120),
          () -> b.heldPartitions().size() == GlobalFeed.PARTITIONS);
      KafkaTestSupport.produce(bs, topic, slice(lines, 420, per));
      PipelineStep[] steps = awaitSyncedState(bs, cfg, per, b);
      b.close();
      tb.join(30_000);
      assertNull(b.failure());
      double worst = checkSyncPoint(bs, cfg, lines, recs, steps, per);
      System.out.println("GlobalModelOnKafkaTest, two instances: largest difference " + worst);
    } finally {
      a.close();
      b.close();
    }
  }

  static void awaitCommitted(org.apache.kafka.clients.admin.Admin admin, RunnerSettings s, long total, ExactlyOnceRunner... runners)
      throws Exception {
    KafkaTestSupport.await(total + " input records committed", Duration.ofSeconds(120), () -> {
      for (ExactlyOnceRunner r : runners) {
        if (r.failure() != null) {
          throw new AssertionError("runner failed: " + r.failure());
        }
      }
      try {
        return KafkaTestSupport.committedTotal(admin, s.groupId(), s.inputTopic()) >= total;
      } catch (Exception e) {
        return false;
      }
    });
  }
}
