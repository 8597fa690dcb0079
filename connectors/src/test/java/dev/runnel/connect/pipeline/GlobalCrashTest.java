package dev.runnel.connect.pipeline;

import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.connect.broker.EmbeddedBroker;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import dev.runnel.connect.testing.TestBroker;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.PipelineStep;
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
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;

/**
 * As {@link PipelineCrashTest}, with {@code model.scope: global} on 4 input partitions and forgetting
 * by event time ({@link GlobalFeed}; its first stretch is produced alone and folded everywhere
 * before the rest is produced and the kills begin): the real
 * command line ({@code runnel run --config ...}) in its own JVM, killed with SIGKILL at three seeded
 * points (shares and folds in flight in open transactions) and restarted each time. At the sync
 * point the committed views of every partition equal the uninterrupted stream-core run's and the
 * union ridge solution (EJML QR) to 1e-9 relative: no share was folded twice or lost; every input
 * offset has exactly one output. (The outputs' bytes are not compared with a reference run: with
 * the global scope a prediction depends on which shares had been folded when it was made.)
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class GlobalCrashTest {

  private static final String NAME = "global-crash";
  private static final String TOPIC = NAME + ".in";
  private static final int PER_PARTITION = 5000;

  private static Process startRunner(Path config, int run) throws Exception {
    Path log = Paths.get("target", NAME + "-" + run + ".log").toAbsolutePath();
    List<String> cmd = List.of(Paths.get(System.getProperty("java.home"), "bin", "java").toString(),
        "-Xmx256m", "-XX:+UseSerialGC", "-Dorg.slf4j.simpleLogger.logFile=" + log,
        "-cp", EmbeddedBroker.childClasspath(), "dev.runnel.connect.cli.Main",
        "run", "--config", config.toString(), "--quiet");
    return new ProcessBuilder(cmd).redirectErrorStream(true).redirectOutput(log.toFile()).start();
  }

  @Test
  void threeKillsOfTheRealRunnerLeaveTheUninterruptedGlobalViews(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    Path config = Paths.get("target", NAME + ".yaml").toAbsolutePath();
    Files.writeString(config, GlobalFeed.yaml(NAME, TOPIC, bs));
    PipelineConfig cfg = ConfigLoader.load(config);
    List<GlobalFeed.Rec> recs = new ArrayList<>();
    List<List<String>> lines = GlobalFeed.lines(20261205, PER_PARTITION, recs);
    KafkaTestSupport.createTopic(bs, TOPIC, GlobalFeed.PARTITIONS);
    KafkaTestSupport.produce(bs, TOPIC, GlobalModelOnKafkaTest.slice(lines, 0, GlobalFeed.FIRST));
    long total = (long) GlobalFeed.PARTITIONS * PER_PARTITION;
    String group = "runnel." + NAME;
    Random rnd = new Random(20261205);
    long[] killAt = new long[3];
    for (int i = 0; i < 3; i++) {
      killAt[i] = (long) (total * (0.1 + 0.35 * rnd.nextDouble()));
    }
    Arrays.sort(killAt);
    long[] committedAtKill = new long[3];
    PipelineStep[][] got = new PipelineStep[1][];
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      Process p = startRunner(config, 0);
      final Process first = p;
      KafkaTestSupport.await("every first share folded", Duration.ofSeconds(180), () -> {
        if (!first.isAlive()) {
          throw new AssertionError("runner exited with " + first.exitValue() + "; see target/" + NAME + "-*.log");
        }
        return GlobalFeed.synced(GlobalFeed.committedStates(bs, cfg), GlobalFeed.FIRST);
      });
      // the rest only now, so that every prior of every view is stated at its first event time (GlobalFeed)
      KafkaTestSupport.produce(bs, TOPIC, GlobalModelOnKafkaTest.slice(lines, GlobalFeed.FIRST, PER_PARTITION));
      for (int k = 0; k < 3; k++) {
        // kills land in the first 60 % of the input: on a quiet machine the runner commits thousands of
        // records in the moments between the threshold being seen and the kill, and a kill after the
        // last record would test nothing (it failed so once, at 20000 of 20000)
        final long threshold = k == 0 ? killAt[0] : Math.min(total * 6 / 10, Math.max(killAt[k], committedAtKill[k - 1] + 1_500));
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
      KafkaTestSupport.await("every partition's committed state at the sync point", Duration.ofSeconds(240), () -> {
        if (!last.isAlive()) {
          throw new AssertionError("runner exited with " + last.exitValue() + "; see target/" + NAME + "-*.log");
        }
        got[0] = GlobalFeed.committedStates(bs, cfg);
        return GlobalFeed.synced(got[0], PER_PARTITION);
      });
      last.destroy();
      assertTrue(last.waitFor(30, TimeUnit.SECONDS));
    }
    for (int k = 0; k < 3; k++) {
      assertTrue(committedAtKill[k] < total, "kill " + k + " happened mid-stream: " + committedAtKill[k] + " of " + total);
    }
    double worst = GlobalModelOnKafkaTest.checkSyncPoint(bs, cfg, lines, recs, got[0], PER_PARTITION);
    System.out.println("GlobalCrashTest: largest difference " + worst + "; committed at the kills " + Arrays.toString(committedAtKill));
  }
}
