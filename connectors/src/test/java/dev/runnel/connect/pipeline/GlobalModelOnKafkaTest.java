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
 * across them and scalers that differ by partition. Each partition's processor publishes its shares
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
  static PipelineStep[] awaitSyncedState(String bs, PipelineConfig cfg, ExactlyOnceRunner... runners) throws Exception {
    PipelineStep[][] got = new PipelineStep[1][];
    KafkaTestSupport.await("every partition's committed state at the sync point", Duration.ofSeconds(180), () -> {
      for (ExactlyOnceRunner r : runners) {
        if (r.failure() != null) {
          throw new AssertionError("runner failed: " + r.failure());
        }
      }
      got[0] = GlobalFeed.committedStates(bs, cfg);
      return GlobalFeed.synced(got[0], PER_PARTITION);
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
    KafkaTestSupport.produce(bs, name + ".in", lines);
    Map<Integer, PipelineProcessor> latest = new ConcurrentHashMap<>();
    ExactlyOnceRunner runner = new ExactlyOnceRunner(settings(cfg, bs), remembering(cfg, latest));
    Thread t = new Thread(runner, "global-runner");
    t.setDaemon(true);
    t.start();
    PipelineStep[] steps;
    try {
      steps = awaitSyncedState(bs, cfg, runner);
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
    PipelineStep[] reference = GlobalFeed.uninterrupted(cfg, lines);
    double worst = 0;
    for (int p = 0; p < GlobalFeed.PARTITIONS; p++) {
      assertEquals(PER_PARTITION, steps[p].trained());
      double[] union = GlobalFeed.againstUnion(steps[p].globalModel(), recs, 1);
      assertTrue(union[0] < 1e-9, "partition " + p + ": weights differ from the union solution (EJML QR) by " + union[0]);
      assertTrue(union[1] < 1e-9, "partition " + p + ": standard errors differ from the union solution by " + union[1]);
      double[] control = GlobalFeed.againstUnion(steps[p].globalModel(), recs, GlobalFeed.PARTITIONS);
      assertTrue(control[0] > 1e-6, "the prior counted once per partition is told apart: " + control[0]);
      double[] run = GlobalFeed.difference(steps[p].globalModel(), reference[p].globalModel());
      assertTrue(run[0] < 1e-9 && run[1] < 1e-9, "partition " + p + " against the uninterrupted run: " + run[0] + ", " + run[1]);
      worst = Math.max(worst, Math.max(union[0], union[1]));
    }
    // the scalers really differ by partition: the views state temperature in different bases
    int k0 = steps[0].globalModel().viewIndex("temperature_c");
    int k3 = steps[3].globalModel().viewIndex("temperature_c");
    assertNotEquals(steps[0].globalModel().viewOffset(k0), steps[3].globalModel().viewOffset(k3));
    // each input offset has exactly one output
    int[][] outputs = GlobalFeed.outputsPerOffset(bs, name, PER_PARTITION);
    for (int p = 0; p < GlobalFeed.PARTITIONS; p++) {
      for (int o = 0; o < PER_PARTITION; o++) {
        assertEquals(1, outputs[p][o], "partition " + p + " offset " + o + ": outputs");
      }
    }
    System.out.println("GlobalModelOnKafkaTest: largest difference from the union solution " + worst);
  }
}
