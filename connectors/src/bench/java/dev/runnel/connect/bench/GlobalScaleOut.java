package dev.runnel.connect.bench;

import dev.runnel.connect.broker.EmbeddedBroker;
import dev.runnel.connect.kafka.ExactlyOnceRunner;
import dev.runnel.connect.kafka.RunnerSettings;
import dev.runnel.connect.pipeline.PipelineProcessor;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.demo.QuillmarshGenerator;
import dev.runnel.demo.Settings;
import java.lang.management.ManagementFactory;
import java.lang.management.ThreadMXBean;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Optional;
import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.admin.NewTopic;
import org.apache.kafka.clients.consumer.OffsetAndMetadata;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.common.TopicPartition;

/**
 * Two instances on 4 input partitions against one, {@code model.scope: global}, on the embedded
 * broker with the real exactly-once runner and {@code run}'s {@link PipelineProcessor}: the demo
 * feed split by hub (hub number mod 4, as {@link GlobalScopeCost}) is loaded once into a 4-partition
 * topic, then read to its end by
 * <ol>
 *   <li>one instance (cold: the JIT compiles during it; reported, not compared),</li>
 *   <li>two instances in one group (instance ids {@code a}, {@code b}, started together: the group
 *       splits the partitions 2 and 2 after a rebalance, which the time includes),</li>
 *   <li>one instance again (warm, as the two were),</li>
 * </ol>
 * each a pipeline of its own name (its own group, state and shares topics), same feed, same
 * configuration (the demo's, {@code corrections: learn_as_new}, {@code share_every_records: 1000}).
 * Records/s of the whole group: from the first record any of its instances reads to the moment the
 * group's committed offsets reach the end of every partition. All instances run as threads of this
 * JVM, beside the broker's JVM, on whatever cores the machine has: on a machine with fewer cores
 * than instances plus broker this measures contention, not scaling (the raw file says the cores
 * and the load average).
 *
 * <pre>{@code
 * mvn -o -q -pl connectors -am package -DskipTests
 * java -cp 'connectors/target/test-classes:connectors/target/runnel.jar:connectors/target/lib/*' \
 *     dev.runnel.connect.bench.GlobalScaleOut --days 400 --out docs/bench/global-scale-out.md
 * }</pre>
 * Options: {@code --days N} (400), {@code --commit-ms MS} (500), {@code --commit-records N} (5000),
 * {@code --out FILE}.
 */
public final class GlobalScaleOut {

  private GlobalScaleOut() { }

  static final int PARTITIONS = 4;
  static final String IN = "scale.in";

  public static void main(String[] args) throws Exception {
    int days = 400;
    long commitMs = 500;
    int commitRecords = 5000;
    Path out = Path.of("docs/bench/global-scale-out.md");
    for (int a = 0; a + 1 < args.length; a += 2) {
      switch (args[a]) {
        case "--days" -> days = Integer.parseInt(args[a + 1]);
        case "--commit-ms" -> commitMs = Long.parseLong(args[a + 1]);
        case "--commit-records" -> commitRecords = Integer.parseInt(args[a + 1]);
        case "--out" -> out = Path.of(args[a + 1]);
        default -> throw new IllegalArgumentException("unknown option " + args[a]
            + "; use --days N, --commit-ms MS, --commit-records N, --out FILE");
      }
    }
    double loadStart = ManagementFactory.getOperatingSystemMXBean().getSystemLoadAverage();
    StringBuilder md = new StringBuilder();
    Path folder = Files.createTempDirectory("runnel-scale-out");
    try (EmbeddedBroker broker = new EmbeddedBroker(folder, 0, 0, Map.of(), EmbeddedBroker.DEFAULT_START_TIMEOUT, "1g")) {
      broker.start();
      String bs = broker.bootstrapServers();
      try (Admin a = EndToEndBenchmark.admin(bs)) {
        a.createTopics(List.of(new NewTopic(IN, PARTITIONS, (short) 1))).all().get();
      }
      long[] perPartition = load(bs, days);
      long total = 0;
      for (long n : perPartition) {
        total += n;
      }
      EndToEndBenchmark.log("loaded %,d records, per partition %s", total, java.util.Arrays.toString(perPartition));
      PipelineConfig base = GlobalScopeCost.config("global", 1000);
      Map<String, String> props = new HashMap<>();
      props.put("session.timeout.ms", "10000");
      md.append("<!-- written by dev.runnel.connect.bench.GlobalScaleOut; do not edit by hand -->\n");
      md.append(String.format(Locale.ROOT, "Run %s: %,d invented demo records (%d days) on a 4-partition topic of the embedded broker"
          + " (same machine), split by hub (per partition %s), model.scope: global, share_every_records 1000, commit interval %d ms"
          + " or %d records; %d processors seen by the JVM; load average %.2f at the start.%n%n", Instant.now(), total, days,
          java.util.Arrays.toString(perPartition), commitMs, commitRecords, Runtime.getRuntime().availableProcessors(), loadStart));
      md.append("| run | instances | records/s of the group | seconds | records per instance | runner threads' CPU s | load average after |\n");
      md.append("|---|---|---|---|---|---|---|\n");
      String[][] runs = {{"one-cold", "a"}, {"two", "a", "b"}, {"one-warm", "a"}};
      for (String[] run : runs) {
        String name = "scale-" + run[0];
        PipelineConfig cfg = named(base, name);
        List<ExactlyOnceRunner> runners = new ArrayList<>();
        for (int i = 1; i < run.length; i++) {
          RunnerSettings s = RunnerSettings.of(name, IN, bs).withClientProperties(props).withCommitInterval(commitMs, commitRecords)
              .withInstanceId(run[i]);
          runners.add(new ExactlyOnceRunner(s, PipelineProcessor.factory(cfg)));
        }
        double[] r = timeToEnd(runners, bs, "runnel." + name, total);
        StringBuilder each = new StringBuilder();
        for (ExactlyOnceRunner x : runners) {
          each.append(each.length() == 0 ? "" : " / ").append(String.format(Locale.ROOT, "%,d", x.counters().recordsIn()));
        }
        double loadAfter = ManagementFactory.getOperatingSystemMXBean().getSystemLoadAverage();
        EndToEndBenchmark.log("%s: %,.0f records/s (%.1f s; records per instance %s; runner CPU %.1f s)", run[0], r[0], r[1], each, r[2]);
        md.append(String.format(Locale.ROOT, "| %s | %d | %,.0f | %.1f | %s | %.1f | %.2f |%n", run[0], runners.size(), r[0], r[1], each,
            r[2], loadAfter));
      }
    }
    if (out.getParent() != null) {
      Files.createDirectories(out.getParent());
    }
    Files.writeString(out, md.toString(), StandardCharsets.UTF_8);
    System.out.println(md);
    System.out.println("written to " + out);
  }

  /** The configuration under another name, reading {@link #IN}. */
  static PipelineConfig named(PipelineConfig b, String name) {
    return new PipelineConfig(name,
        new PipelineConfig.Input(Optional.of(IN), b.input().schema(), b.input().eventTime(), b.input().timeZone(), b.input().limits()),
        b.target(), b.features(), b.model(), b.outputs(), b.kafka(), b.web(), b.sourceName());
  }

  /** Loads the demo feed, each record to partition (hub number − 1) mod 4; returns the count per partition. */
  static long[] load(String bs, int days) {
    long[] n = new long[PARTITIONS];
    try (KafkaProducer<byte[], byte[]> p = new KafkaProducer<>(EndToEndBenchmark.producerConfig(bs, 20))) {
      for (String l : (Iterable<String>) new QuillmarshGenerator(Settings.defaults().withDays(days)).lines()::iterator) {
        int h = l.indexOf("\"hub\":\"QM-");
        int part = h < 0 ? 0 : (Integer.parseInt(l.substring(h + 10, h + 12)) - 1) % PARTITIONS;
        p.send(new ProducerRecord<>(IN, part, null, l.getBytes(StandardCharsets.UTF_8)));
        n[part]++;
      }
      p.flush();
    }
    return n;
  }

  static long committed(Admin admin, String group) throws Exception {
    Map<TopicPartition, OffsetAndMetadata> m = admin.listConsumerGroupOffsets(group).partitionsToOffsetAndMetadata().get();
    long sum = 0;
    for (Map.Entry<TopicPartition, OffsetAndMetadata> e : m.entrySet()) {
      if (e.getKey().topic().equals(IN) && e.getValue() != null) {
        sum += e.getValue().offset();
      }
    }
    return sum;
  }

  /**
   * Starts the runners together and waits until the group has committed every record.
   *
   * @return {records/s from the first record read to the last commit, seconds, the runner threads' CPU seconds}
   */
  static double[] timeToEnd(List<ExactlyOnceRunner> runners, String bs, String group, long total) throws Exception {
    List<Thread> threads = new ArrayList<>();
    for (ExactlyOnceRunner r : runners) {
      Thread t = new Thread(r, "scale-" + r.settings().name() + "-" + r.settings().instanceId());
      threads.add(t);
    }
    for (Thread t : threads) {
      t.start();
    }
    ThreadMXBean tm = ManagementFactory.getThreadMXBean();
    long first = 0;
    long end;
    double cpu = 0;
    try (Admin admin = EndToEndBenchmark.admin(bs)) {
      long deadline = System.nanoTime() + Duration.ofMinutes(60).toNanos();
      while (true) {
        long in = 0;
        for (ExactlyOnceRunner r : runners) {
          if (r.failure() != null) {
            throw new IllegalStateException("runner failed: " + r.failure());
          }
          in += r.counters().recordsIn();
        }
        if (first == 0 && in > 0) {
          first = System.nanoTime();
        }
        if (first != 0 && committed(admin, group) >= total) {
          end = System.nanoTime();
          for (Thread t : threads) {
            cpu += tm.getThreadCpuTime(t.getId()) / 1e9;
          }
          break;
        }
        if (System.nanoTime() > deadline) {
          throw new IllegalStateException("timed out");
        }
        Thread.sleep(20);
      }
    }
    for (ExactlyOnceRunner r : runners) {
      r.close();
    }
    for (Thread t : threads) {
      t.join(60_000);
    }
    double seconds = (end - first) / 1e9;
    return new double[] {total / seconds, seconds, cpu};
  }
}
