package dev.runnel.connect.bench;

import dev.runnel.connect.broker.EmbeddedBroker;
import dev.runnel.connect.demo.DemoRun;
import dev.runnel.connect.kafka.Emitter;
import dev.runnel.connect.kafka.ExactlyOnceRunner;
import dev.runnel.connect.kafka.PartitionProcessor;
import dev.runnel.connect.kafka.ProcessorFactory;
import dev.runnel.connect.kafka.RunnerSettings;
import dev.runnel.connect.pipeline.PipelineProcessor;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.demo.QuillmarshGenerator;
import dev.runnel.demo.Settings;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.time.Instant;
import java.util.HashMap;
import java.util.Iterator;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Optional;
import java.util.concurrent.atomic.AtomicBoolean;
import org.HdrHistogram.Histogram;
import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.admin.AdminClientConfig;
import org.apache.kafka.clients.admin.NewTopic;
import org.apache.kafka.clients.consumer.ConsumerConfig;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.consumer.KafkaConsumer;
import org.apache.kafka.clients.consumer.OffsetAndMetadata;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerConfig;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.common.TopicPartition;
import org.apache.kafka.common.serialization.ByteArrayDeserializer;
import org.apache.kafka.common.serialization.ByteArraySerializer;

/**
 * Benchmark 5: end to end on the embedded broker, exactly once.
 *
 * <ol>
 *   <li>Pre-loads a 1-partition topic with {@code --records} invented demo records (Quillmarsh
 *       generator, seeded).</li>
 *   <li><b>copy</b>: the exactly-once runner with a processor that copies each input value to the
 *       output topic unchanged (no decoding, no featurizing; an 8-byte checkpoint): the broker's
 *       and the clients' limit under the same transactional protocol and commit interval.</li>
 *   <li><b>run</b>: the same runner with the real pipeline (the {@code run} verb's
 *       {@link PipelineProcessor} and the demo configuration).</li>
 *   <li><b>latency</b>: a fresh topic fed at half the measured {@code run} rate for
 *       {@code --latency-seconds}; a read_committed consumer of the predictions measures, per
 *       prediction, the time from the input's send (producer linger 0, i.e. about its append) to
 *       the committed prediction being read back (HdrHistogram, microseconds).</li>
 * </ol>
 * Throughput is timed from the first record the runner reads to the moment the group's
 * committed offset reaches the end of the topic.
 *
 * <pre>{@code
 * mvn -o -q -pl connectors -am package -DskipTests
 * java -cp 'connectors/target/runnel.jar:connectors/target/lib/*' dev.runnel.connect.bench.EndToEndBenchmark \
 *     --records 2000000 --out docs/bench/e2e-results.md
 * }</pre>
 * Options: {@code --records N}, {@code --commit-ms MS} (500), {@code --commit-records N} (5000),
 * {@code --latency-seconds S} (20), {@code --producer-prop key=value} (repeatable; for the runner's
 * producer, e.g. {@code compression.type=none}), {@code --folder DIR} (broker data; a fresh temp
 * folder by default), {@code --out FILE}.
 */
public final class EndToEndBenchmark {
  private EndToEndBenchmark() { }

  private static final String IN = "bench.in";
  private static final String LIVE = "bench.live";

  /** Copies each record's value to the output topic: no decoding, no model. */
  static final class CopyProcessor implements PartitionProcessor {
    private long count;

    @Override public void restore(byte[] checkpointOrNull) {
      if (checkpointOrNull != null && checkpointOrNull.length == 8) {
        long c = 0;
        for (byte b : checkpointOrNull) {
          c = (c << 8) | (b & 0xff);
        }
        count = c;
      }
    }

    @Override public void process(long offset, long timestampMillis, byte[] key, byte[] value, Emitter out) {
      count++;
      out.prediction(key, value);
    }

    @Override public byte[] checkpoint() {
      byte[] b = new byte[8];
      long c = count;
      for (int i = 7; i >= 0; i--) {
        b[i] = (byte) c;
        c >>>= 8;
      }
      return b;
    }
  }

  public static void main(String[] args) throws Exception {
    long records = 500_000;
    long commitMs = 500;
    int commitRecords = 5000;
    int latencySeconds = 20;
    Path out = Path.of("docs/bench/e2e-results.md");
    Path folder = null;
    Map<String, String> producerProps = new LinkedHashMap<>();
    for (int a = 0; a < args.length; a++) {
      switch (args[a]) {
        case "--records" -> records = Long.parseLong(args[++a]);
        case "--commit-ms" -> commitMs = Long.parseLong(args[++a]);
        case "--commit-records" -> commitRecords = Integer.parseInt(args[++a]);
        case "--latency-seconds" -> latencySeconds = Integer.parseInt(args[++a]);
        case "--out" -> out = Path.of(args[++a]);
        case "--folder" -> folder = Path.of(args[++a]);
        case "--encoding" -> encoding = PipelineConfig.OutputEncoding.valueOf(args[++a].toUpperCase(Locale.ROOT));
        case "--producer-prop" -> {
          String kv = args[++a];
          int eq = kv.indexOf('=');
          if (eq <= 0) throw new IllegalArgumentException("--producer-prop must be key=value, got " + kv);
          producerProps.put("producer." + kv.substring(0, eq), kv.substring(eq + 1));
        }
        default -> throw new IllegalArgumentException("unknown option " + args[a] + "; allowed: --records N, --commit-ms MS,"
            + " --commit-records N, --latency-seconds S, --producer-prop k=v, --folder DIR, --out FILE");
      }
    }
    if (folder == null) {
      folder = Files.createTempDirectory("runnel-e2e-bench");
    }
    StringBuilder md = new StringBuilder();
    try (EmbeddedBroker broker = new EmbeddedBroker(folder, 0, 0, Map.of(), EmbeddedBroker.DEFAULT_START_TIMEOUT, "1g")) {
      broker.start();
      String bs = broker.bootstrapServers();
      Map<String, String> props = new HashMap<>(producerProps);
      props.put("session.timeout.ms", "10000");
      createTopic(bs, IN);
      long t0 = System.nanoTime();
      long loaded = load(bs, IN, records);
      log("loaded %,d records in %.1f s", loaded, (System.nanoTime() - t0) / 1e9);

      PipelineConfig cfg = benchConfig("bench", IN);
      RunnerSettings copyS = RunnerSettings.of("copy", IN, bs).withClientProperties(props).withCommitInterval(commitMs, commitRecords);
      RunnerSettings runS = RunnerSettings.of("bench", IN, bs).withClientProperties(props).withCommitInterval(commitMs, commitRecords);
      Cpu c0 = Cpu.now(null);
      double copyRate = timeToEnd(copyS, tp -> new CopyProcessor(), bs, loaded);
      Cpu c1 = Cpu.now(lastRunner);
      log("copy: %,.0f records/s", copyRate);
      double runRate = timeToEnd(runS, PipelineProcessor.factory(cfg), bs, loaded);
      Cpu c2 = Cpu.now(lastRunner);
      log("run: %,.0f records/s", runRate);
      String cpuTable = cpuTable(c0, c1, c2, loaded);
      String bytesTable = bytesTable(bs, loaded);
      log("%n%s%n%s", cpuTable, bytesTable);

      // latency at half the measured run rate
      createTopic(bs, LIVE);
      double rate = runRate / 2;
      RunnerSettings liveS = RunnerSettings.of("live", LIVE, bs).withClientProperties(props).withCommitInterval(commitMs, commitRecords);
      Histogram h = latency(bs, liveS, benchConfig("live", LIVE), rate, latencySeconds);
      log("latency p50 %.1f ms, p99 %.1f ms, max %.1f ms", h.getValueAtPercentile(50) / 1e3, h.getValueAtPercentile(99) / 1e3,
          h.getMaxValue() / 1e3);

      md.append("<!-- written by dev.runnel.connect.bench.EndToEndBenchmark; do not edit by hand -->\n");
      md.append("Run ").append(Instant.now()).append(": ").append(String.format(Locale.ROOT, "%,d", loaded))
          .append(" invented demo records on a 1-partition topic of the embedded broker (same machine), commit interval ")
          .append(commitMs).append(" ms or ").append(commitRecords).append(" records, runner producer overrides ")
          .append(producerProps.isEmpty() ? "none (lz4, linger 5 ms, 256 KB batches)" : producerProps.toString()).append(", load average at the end ")
          .append(String.format(Locale.ROOT, "%.2f", java.lang.management.ManagementFactory.getOperatingSystemMXBean().getSystemLoadAverage()))
          .append(".\n\n");
      md.append("| measurement | value | target |\n|---|---|---|\n");
      md.append(String.format(Locale.ROOT, "| copy (transactional consume → produce, no featurizing) | %,.0f records/s | – |%n", copyRate));
      md.append(String.format(Locale.ROOT, "| run (exactly-once pipeline, demo configuration) | %,.0f records/s | – |%n", runRate));
      md.append(String.format(Locale.ROOT, "| run ÷ copy | %.2f | ≥ 0.70 (%s) |%n", runRate / copyRate, runRate / copyRate >= 0.7 ? "met" : "not met"));
      md.append(String.format(Locale.ROOT, "| latency offered rate (half of run) | %,.0f records/s for %d s (%,d predictions measured) | – |%n",
          rate, latencySeconds, h.getTotalCount()));
      md.append(String.format(Locale.ROOT, "| latency append → committed prediction p50 | %.1f ms | – |%n", h.getValueAtPercentile(50) / 1e3));
      md.append(String.format(Locale.ROOT, "| latency p99 | %.1f ms | – |%n", h.getValueAtPercentile(99) / 1e3));
      md.append(String.format(Locale.ROOT, "| latency max | %.1f ms | – |%n", h.getMaxValue() / 1e3));
      md.append("\nCPU time per input record (thread and process CPU clocks, so other work on the machine does not count):\n\n");
      md.append(cpuTable);
      md.append("\nBytes on the broker's disk (log segments: compressed batches with their headers, transaction markers):\n\n");
      md.append(bytesTable);
    }
    if (out.getParent() != null) Files.createDirectories(out.getParent());
    Files.writeString(out, md.toString(), StandardCharsets.UTF_8);
    System.out.println(md);
    System.out.println("written to " + out);
  }

  /** The runner thread of the last {@link #timeToEnd}, for its CPU time. */
  static volatile long lastRunnerCpuNanos;
  static volatile long lastIoCpuNanos;
  static volatile Thread lastRunner;

  /** CPU clocks: this process, the runner thread (read before it ends), the broker (child processes). */
  record Cpu(long processNanos, long runnerNanos, long ioNanos, long childrenNanos) {
    static Cpu now(Thread runner) {
      long proc = ((com.sun.management.OperatingSystemMXBean) java.lang.management.ManagementFactory.getOperatingSystemMXBean())
          .getProcessCpuTime();
      long children = ProcessHandle.current().descendants()
          .mapToLong(ph -> ph.info().totalCpuDuration().map(Duration::toNanos).orElse(0L)).sum();
      return new Cpu(proc, runner == null ? 0 : lastRunnerCpuNanos, runner == null ? 0 : lastIoCpuNanos, children);
    }
  }

  static String cpuTable(Cpu c0, Cpu c1, Cpu c2, long records) {
    StringBuilder b = new StringBuilder();
    b.append("| µs CPU per record | copy | run | run − copy |\n|---|---|---|---|\n");
    double[] copy = {c1.runnerNanos(), c1.ioNanos(), c1.processNanos() - c0.processNanos() - c1.runnerNanos() - c1.ioNanos(),
        c1.childrenNanos() - c0.childrenNanos()};
    double[] run = {c2.runnerNanos(), c2.ioNanos(), c2.processNanos() - c1.processNanos() - c2.runnerNanos() - c2.ioNanos(),
        c2.childrenNanos() - c1.childrenNanos()};
    String[] what = {"runner thread (poll, process, send, commit)", "the runner's client I/O threads (producer sender, heartbeat)",
        "rest of the client JVM (GC, JIT compiler, benchmark's own threads)", "broker process"};
    double ct = 0, rt = 0;
    for (int i = 0; i < 4; i++) {
      b.append(String.format(Locale.ROOT, "| %s | %.2f | %.2f | %.2f |%n", what[i], copy[i] / 1e3 / records, run[i] / 1e3 / records,
          (run[i] - copy[i]) / 1e3 / records));
      ct += copy[i];
      rt += run[i];
    }
    b.append(String.format(Locale.ROOT, "| total | %.2f | %.2f | %.2f |%n", ct / 1e3 / records, rt / 1e3 / records, (rt - ct) / 1e3 / records));
    return b.toString();
  }

  static String bytesTable(String bs, long records) throws Exception {
    StringBuilder b = new StringBuilder("| topic | bytes | per input record |\n|---|---|---|\n");
    try (Admin a = admin(bs)) {
      var nodes = a.describeCluster().nodes().get();
      List<Integer> ids = nodes.stream().map(org.apache.kafka.common.Node::id).toList();
      Map<String, Long> sizes = new java.util.TreeMap<>();
      a.describeLogDirs(ids).allDescriptions().get().values().forEach(dirs -> dirs.values().forEach(d ->
          d.replicaInfos().forEach((tp, ri) -> sizes.merge(tp.topic(), ri.size(), Long::sum))));
      long benchOut = 0;
      for (Map.Entry<String, Long> e : sizes.entrySet()) {
        if (e.getKey().startsWith("__")) continue;
        b.append(String.format(Locale.ROOT, "| %s | %,d | %.1f |%n", e.getKey(), e.getValue(), (double) e.getValue() / records));
        if (e.getKey().startsWith("bench.") && !e.getKey().equals(IN) && !e.getKey().equals("bench.state")) benchOut += e.getValue();
      }
      long in = sizes.getOrDefault(IN, 0L);
      b.append(String.format(Locale.ROOT, "| run outputs but state, ÷ input | %,d | %.2f |%n", benchOut, in == 0 ? Double.NaN : (double) benchOut / in));
    }
    return b.toString();
  }

  static void log(String fmt, Object... args) {
    System.err.println("[e2e] " + String.format(Locale.ROOT, fmt, args));
  }

  /** {@code --encoding json|avro}: the pipeline's {@code outputs.encoding} (default json). */
  static PipelineConfig.OutputEncoding encoding = PipelineConfig.OutputEncoding.JSON;

  static PipelineConfig benchConfig(String name, String topic) {
    PipelineConfig b = DemoRun.demoConfig();
    return new PipelineConfig(name,
        new PipelineConfig.Input(Optional.of(topic), b.input().schema(), b.input().eventTime(), b.input().timeZone(), b.input().limits()),
        b.target(), b.features(), b.model(), b.outputs().withEncoding(encoding), b.kafka(), b.web(), b.sourceName());
  }

  static Admin admin(String bs) {
    return Admin.create(Map.of(AdminClientConfig.BOOTSTRAP_SERVERS_CONFIG, bs));
  }

  static void createTopic(String bs, String topic) throws Exception {
    try (Admin a = admin(bs)) {
      a.createTopics(List.of(new NewTopic(topic, 1, (short) 1))).all().get();
    }
  }

  static Map<String, Object> producerConfig(String bs, int lingerMs) {
    Map<String, Object> p = new HashMap<>();
    p.put(ProducerConfig.BOOTSTRAP_SERVERS_CONFIG, bs);
    p.put(ProducerConfig.ACKS_CONFIG, "all");
    p.put(ProducerConfig.LINGER_MS_CONFIG, lingerMs);
    p.put(ProducerConfig.BATCH_SIZE_CONFIG, 256 * 1024);
    p.put(ProducerConfig.COMPRESSION_TYPE_CONFIG, "lz4");
    p.put(ProducerConfig.KEY_SERIALIZER_CLASS_CONFIG, ByteArraySerializer.class.getName());
    p.put(ProducerConfig.VALUE_SERIALIZER_CLASS_CONFIG, ByteArraySerializer.class.getName());
    return p;
  }

  static Iterator<String> demoLines(long n) {
    int days = (int) Math.min(100_000, n / 700 + 2);
    return new QuillmarshGenerator(Settings.defaults().withDays(days)).lines().limit(n).iterator();
  }

  static long load(String bs, String topic, long n) {
    long sent = 0;
    try (KafkaProducer<byte[], byte[]> p = new KafkaProducer<>(producerConfig(bs, 20))) {
      Iterator<String> it = demoLines(n);
      while (it.hasNext()) {
        p.send(new ProducerRecord<>(topic, 0, null, it.next().getBytes(StandardCharsets.UTF_8)));
        sent++;
      }
      p.flush();
    }
    return sent;
  }

  static long committed(Admin admin, String group, String topic) throws Exception {
    Map<TopicPartition, OffsetAndMetadata> m = admin.listConsumerGroupOffsets(group).partitionsToOffsetAndMetadata().get();
    OffsetAndMetadata o = m.get(new TopicPartition(topic, 0));
    return o == null ? 0 : o.offset();
  }

  /** Runs a runner over the whole topic; returns records/s from its first record read to the last commit. */
  static double timeToEnd(RunnerSettings s, ProcessorFactory f, String bs, long total) throws Exception {
    ExactlyOnceRunner runner = new ExactlyOnceRunner(s, f);
    Thread t = new Thread(runner, "bench-" + s.name());
    t.start();
    long first = 0;
    long end;
    try (Admin admin = admin(bs)) {
      long deadline = System.nanoTime() + Duration.ofMinutes(60).toNanos();
      while (true) {
        if (runner.failure() != null) throw new IllegalStateException("runner failed: " + runner.failure());
        if (first == 0 && runner.counters().recordsIn() > 0) first = System.nanoTime();
        if (first != 0 && committed(admin, s.groupId(), s.inputTopic()) >= total) {
          end = System.nanoTime();
          java.lang.management.ThreadMXBean tm = java.lang.management.ManagementFactory.getThreadMXBean();
          lastRunnerCpuNanos = tm.getThreadCpuTime(t.getId());
          lastRunner = t;
          // the runner's own client threads (producer I/O, consumer heartbeat) carry its transactional id or group
          long io = 0;
          for (Thread x : Thread.getAllStackTraces().keySet()) {
            String n = x.getName();
            if (x != t && (n.contains("runnel-" + s.name() + "-") || n.contains("runnel." + s.name()))) {
              long c = tm.getThreadCpuTime(x.getId());
              if (c > 0) io += c;
            }
          }
          lastIoCpuNanos = io;
          break;
        }
        if (System.nanoTime() > deadline) throw new IllegalStateException("timed out");
        Thread.sleep(20);
      }
    }
    runner.close();
    t.join(60_000);
    return total / ((end - first) / 1e9);
  }

  static Histogram latency(String bs, RunnerSettings s, PipelineConfig cfg, double rate, int seconds) throws Exception {
    int n = (int) Math.min(Integer.MAX_VALUE - 8, (long) (rate * seconds));
    long[] sentNanos = new long[n];
    Histogram h = new Histogram(60_000_000L, 3);
    ExactlyOnceRunner runner = new ExactlyOnceRunner(s, PipelineProcessor.factory(cfg));
    Thread rt = new Thread(runner, "bench-live");
    rt.start();
    AtomicBoolean stop = new AtomicBoolean();
    long warmupCount = (long) (rate * 2); // the first 2 s are not measured
    Map<String, Object> cc = new HashMap<>();
    cc.put(ConsumerConfig.BOOTSTRAP_SERVERS_CONFIG, bs);
    cc.put(ConsumerConfig.ISOLATION_LEVEL_CONFIG, "read_committed");
    cc.put(ConsumerConfig.ENABLE_AUTO_COMMIT_CONFIG, false);
    cc.put(ConsumerConfig.AUTO_OFFSET_RESET_CONFIG, "earliest");
    cc.put(ConsumerConfig.KEY_DESERIALIZER_CLASS_CONFIG, ByteArrayDeserializer.class.getName());
    cc.put(ConsumerConfig.VALUE_DESERIALIZER_CLASS_CONFIG, ByteArrayDeserializer.class.getName());
    cc.put(ConsumerConfig.FETCH_MAX_WAIT_MS_CONFIG, 5);
    long[] seen = new long[1];
    Thread reader = new Thread(() -> {
      try (KafkaConsumer<byte[], byte[]> c = new KafkaConsumer<>(cc)) {
        c.assign(List.of(new TopicPartition(s.predictionsTopic(), 0)));
        while (!stop.get()) {
          for (ConsumerRecord<byte[], byte[]> r : c.poll(Duration.ofMillis(50))) {
            long now = System.nanoTime();
            long off = r.headers().lastHeader(dev.runnel.connect.output.OutputSchemas.HEADER_SCHEMA) != null
                ? avroSourceOffset(r.value()) : sourceOffset(r.value());
            seen[0]++;
            if (off >= warmupCount && off < n) {
              h.recordValue(Math.max(0, (now - sentNanos[(int) off]) / 1000));
            }
          }
        }
      }
    }, "bench-latency-reader");
    reader.start();
    // wait until the runner has its assignment (first output visible), with one probe record
    Thread.sleep(3000);
    try (KafkaProducer<byte[], byte[]> p = new KafkaProducer<>(producerConfig(bs, 0))) {
      Iterator<String> it = demoLines(n);
      long start = System.nanoTime();
      double interval = 1e9 / rate;
      for (int i = 0; i < n && it.hasNext(); i++) {
        long due = start + (long) (i * interval);
        long now;
        while ((now = System.nanoTime()) < due) {
          if (due - now > 200_000) Thread.sleep(0, 100_000);
        }
        sentNanos[i] = System.nanoTime();
        p.send(new ProducerRecord<>(LIVE, 0, null, it.next().getBytes(StandardCharsets.UTF_8)));
      }
      p.flush();
    }
    Thread.sleep(3L * s.commitIntervalMs() + 3000);
    stop.set(true);
    reader.join(10_000);
    runner.close();
    rt.join(60_000);
    return h;
  }

  /**
   * The input offset an Avro prediction names (docs/formats.md, "Avro outputs": the enum {@code status},
   * then {@code source.partition} and {@code source.offset}, each a zig-zag varint); -1 if cut short.
   */
  static long avroSourceOffset(byte[] v) {
    int[] at = {0};
    for (int field = 0; field < 3; field++) {
      long z = 0;
      int shift = 0;
      while (true) {
        if (at[0] >= v.length || shift > 63) return -1;
        int b = v[at[0]++] & 0xFF;
        z |= (long) (b & 0x7F) << shift;
        shift += 7;
        if ((b & 0x80) == 0) break;
      }
      if (field == 2) return (z >>> 1) ^ -(z & 1);
    }
    return -1;
  }

  /** The input offset a prediction names ({@code "offset":N} inside {@code "source"}); -1 if none. */
  static long sourceOffset(byte[] v) {
    byte[] key = "\"offset\":".getBytes(StandardCharsets.US_ASCII);
    outer:
    for (int i = 0; i + key.length < v.length; i++) {
      for (int k = 0; k < key.length; k++) {
        if (v[i + k] != key[k]) continue outer;
      }
      long x = 0;
      int j = i + key.length;
      boolean any = false;
      while (j < v.length && v[j] >= '0' && v[j] <= '9') {
        x = 10 * x + (v[j++] - '0');
        any = true;
      }
      return any ? x : -1;
    }
    return -1;
  }
}
