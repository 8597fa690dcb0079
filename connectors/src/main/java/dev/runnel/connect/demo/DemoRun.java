package dev.runnel.connect.demo;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.connect.kafka.ExactlyOnceRunner;
import dev.runnel.connect.kafka.RunnerCounters;
import dev.runnel.connect.launch.LivePipeline;
import dev.runnel.connect.text.TerminalText;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.demo.GeneratedRecord;
import dev.runnel.demo.QuillmarshGenerator;
import dev.runnel.demo.Settings;
import java.io.IOException;
import java.io.InputStream;
import java.io.PrintStream;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.Iterator;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Properties;
import java.util.concurrent.ExecutionException;
import java.util.concurrent.atomic.AtomicLong;
import java.util.concurrent.atomic.AtomicReference;
import java.util.stream.Stream;
import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.admin.AdminClientConfig;
import org.apache.kafka.clients.admin.NewTopic;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerConfig;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.common.errors.TopicExistsException;
import org.apache.kafka.common.serialization.ByteArraySerializer;

/**
 * The whole demo in one call: the embedded broker, the invented Quillmarsh feed published to an
 * input topic at a set pace, the pipeline running on it exactly once, live progress, and at the
 * end a summary of what the model found, read back from the output topics.
 */
public final class DemoRun {

  /** The demo pipeline's configuration, shipped in the demo-data jar. */
  public static final String CONFIG_RESOURCE = "/dev/runnel/demo/quillmarsh.yaml";

  /**
   * @param dataDir where the broker keeps its data (kept between runs)
   * @param fresh delete the data folder first
   * @param days days of invented data
   * @param seed generator seed
   * @param rate records per second to publish; 0 = as fast as possible
   * @param quiet no live progress
   * @param bootstrap an existing cluster to use instead of the embedded broker, or null
   * @param webPort port of the live web view (0 = any free port; a taken port falls back to a free one), or -1 for no web view
   * @param lingerSeconds keep the web view (and broker) up this long after the summary; 0 = end at once
   */
  public record Options(Path dataDir, boolean fresh, int days, long seed, double rate, boolean quiet, String bootstrap,
                        int webPort, long lingerSeconds) {
    /** Options with the configured web port and no lingering. */
    public Options(Path dataDir, boolean fresh, int days, long seed, double rate, boolean quiet, String bootstrap) {
      this(dataDir, fresh, days, seed, rate, quiet, bootstrap, 8642, 0);
    }

    public Options {
      if (webPort < -1 || webPort > 65535) {
        throw new IllegalArgumentException("--web-port must be a port from 0 to 65535, got " + webPort);
      }
      if (lingerSeconds < 0) {
        throw new IllegalArgumentException("--linger must be 0 or a number of seconds, got " + lingerSeconds);
      }
      if (days < 2 || days > 3660) {
        throw new IllegalArgumentException("--days must be a whole number from 2 to 3660, got " + days);
      }
      if (!(rate >= 0) || Double.isInfinite(rate)) {
        throw new IllegalArgumentException("--rate must be 0 (unpaced) or a positive number of records per second, got " + rate);
      }
    }
  }

  private static final ObjectMapper JSON = new ObjectMapper();

  private DemoRun() { }

  /** Loads the shipped demo configuration. */
  public static PipelineConfig demoConfig() {
    try (InputStream in = DemoRun.class.getResourceAsStream(CONFIG_RESOURCE)) {
      if (in == null) {
        throw new IllegalStateException("the demo configuration " + CONFIG_RESOURCE + " is missing from the classpath");
      }
      return ConfigLoader.parse(new String(in.readAllBytes(), StandardCharsets.UTF_8), "quillmarsh.yaml (built in)");
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /**
   * Runs the demo to its end.
   *
   * @return the summary (also printed to {@code out})
   */
  public static DemoSummary run(Options o, PrintStream out, PrintStream err) throws Exception {
    if (o.fresh() && Files.exists(o.dataDir())) {
      deleteTree(o.dataDir());
    }
    Files.createDirectories(o.dataDir());
    int runNo = nextRunNumber(o.dataDir());
    PipelineConfig base = demoConfig();
    String name = base.name() + "-r" + runNo;
    String topic = name + ".sessions";
    PipelineConfig cfg = base.withNameAndTopic(name, topic);
    Settings settings = Settings.defaults().withDays(o.days()).withSeed(o.seed());
    QuillmarshGenerator gen = new QuillmarshGenerator(settings);
    long total = gen.countRecords();

    LivePipeline.Options lo = new LivePipeline.Options(o.bootstrap(), o.dataDir().resolve("broker"), 0, "0",
        o.webPort() < 0 ? null : o.webPort(), o.webPort() >= 0, true, "demo");
    try (LivePipeline pipeline = LivePipeline.connect(cfg, lo, err)) {
      String bootstrap = pipeline.bootstrapServers();
      err.printf(Locale.ROOT, "demo: run %d, pipeline %s, input topic %s on %s; %,d records of invented data (%d days)%n",
          runNo, name, topic, bootstrap, total, o.days());
      createTopic(bootstrap, topic);
      pipeline.startRunner();
      ExactlyOnceRunner runner = pipeline.runner();
      AtomicLong produced = new AtomicLong();
      AtomicReference<Throwable> produceFailure = new AtomicReference<>();
      Thread feeder = new Thread(() -> {
        try {
          publish(bootstrap, topic, gen, o.rate(), produced);
        } catch (Throwable t) {
          produceFailure.set(t);
        }
      }, "demo-feeder");
      feeder.start();
      LiveView live = new LiveView(bootstrap, name + ".coefficients", out, o.quiet());
      long startNanos = System.nanoTime();
      try {
        while (true) {
          RunnerCounters c = runner.counters();
          live.poll(produced.get(), total, c.recordsIn(), startNanos);
          if (produceFailure.get() != null) {
            throw new IllegalStateException("publishing the demo feed failed: " + produceFailure.get(), produceFailure.get());
          }
          if (runner.failure() != null) {
            throw new IllegalStateException("the pipeline stopped: " + runner.failure());
          }
          if (!feeder.isAlive() && c.recordsIn() >= total) {
            break;
          }
          if (!pipeline.running()) {
            throw new IllegalStateException("the pipeline stopped before the feed was consumed");
          }
        }
      } finally {
        live.close();
        pipeline.stopRunner();
      }
      List<JsonNode> snapshots = readJson(bootstrap, name + ".coefficients");
      List<JsonNode> predictions = readJson(bootstrap, name + ".predictions");
      List<JsonNode> rejects = readJson(bootstrap, name + ".rejects");
      List<JsonNode> settled = readJson(bootstrap, name + ".settled");
      snapshots.sort(Comparator.comparing(s -> s.path("event_time").asText()));
      DemoSummary summary = DemoSummary.of(settings, total, snapshots, predictions, rejects, settled);
      summary.print(out);
      out.printf("The topics stay in %s: replay them with a later backtest, or start fresh with --fresh.%n",
          pipeline.broker() == null ? bootstrap : pipeline.broker().folder());
      if (pipeline.webUrl() != null && o.lingerSeconds() > 0) {
        out.printf("The live view stays at %s for %d s (Ctrl-C to end sooner).%n", pipeline.webUrl(), o.lingerSeconds());
        Thread.sleep(o.lingerSeconds() * 1000L);
      }
      return summary;
    }
  }

  private static void publish(String bootstrap, String topic, QuillmarshGenerator gen, double rate, AtomicLong produced)
      throws InterruptedException {
    Properties p = new Properties();
    p.put(ProducerConfig.BOOTSTRAP_SERVERS_CONFIG, bootstrap);
    p.put(ProducerConfig.ACKS_CONFIG, "all");
    p.put(ProducerConfig.LINGER_MS_CONFIG, "5");
    p.put(ProducerConfig.COMPRESSION_TYPE_CONFIG, "lz4");
    p.put(ProducerConfig.CLIENT_ID_CONFIG, "runnel-demo-feed");
    try (KafkaProducer<byte[], byte[]> producer = new KafkaProducer<>(p, new ByteArraySerializer(), new ByteArraySerializer())) {
      long start = System.nanoTime();
      long n = 0;
      Iterator<GeneratedRecord> it = gen.recordIterator();
      while (it.hasNext()) {
        GeneratedRecord r = it.next();
        byte[] key = r.hubId().getBytes(StandardCharsets.UTF_8);
        producer.send(new ProducerRecord<>(topic, key, r.line().getBytes(StandardCharsets.UTF_8)));
        n++;
        produced.set(n);
        if (rate > 0 && (n & 63) == 0) {
          long due = start + (long) (n / rate * 1e9);
          long wait = due - System.nanoTime();
          if (wait > 0) {
            Thread.sleep(wait / 1_000_000, (int) (wait % 1_000_000));
          }
        }
      }
      producer.flush();
    }
  }

  private static void createTopic(String bootstrap, String topic) throws InterruptedException {
    Properties p = new Properties();
    p.put(AdminClientConfig.BOOTSTRAP_SERVERS_CONFIG, bootstrap);
    try (Admin admin = Admin.create(p)) {
      admin.createTopics(List.of(new NewTopic(topic, 1, (short) 1))).all().get();
    } catch (ExecutionException e) {
      if (!(e.getCause() instanceof TopicExistsException)) {
        throw new IllegalStateException("cannot create the demo input topic " + topic + ": " + e.getCause(), e.getCause());
      }
    }
  }

  /** Every committed record of an output topic in the JSON layout (JSON or Avro values: {@code OutputRecords}). */
  public static List<JsonNode> readJson(String bootstrap, String topic) {
    List<JsonNode> out = new ArrayList<>();
    TopicReader.readAll(bootstrap, topic, r -> {
      try {
        out.add(dev.runnel.connect.output.OutputRecords.read(r.headers(), r.value())); // JSON or Avro outputs
      } catch (IOException e) {
        throw new UncheckedIOException(e);
      }
    });
    return out;
  }

  private static int nextRunNumber(Path dir) throws IOException {
    Path f = dir.resolve("demo-runs");
    int n = Files.exists(f) ? Integer.parseInt(Files.readString(f).trim()) + 1 : 1;
    Files.writeString(f, n + "\n");
    return n;
  }

  private static void deleteTree(Path dir) throws IOException {
    try (Stream<Path> s = Files.walk(dir)) {
      for (Path p : s.sorted(Comparator.reverseOrder()).toList()) {
        Files.delete(p);
      }
    }
  }

  /** Follows the coefficient snapshots while the demo runs and prints a status line every two seconds. */
  private static final class LiveView implements AutoCloseable {
    private final org.apache.kafka.clients.consumer.KafkaConsumer<byte[], byte[]> consumer;
    private final PrintStream out;
    private final boolean quiet;
    private final String topic;
    private boolean assigned;
    private JsonNode previous;
    private JsonNode latest;
    private long lastPrintNanos;

    LiveView(String bootstrap, String topic, PrintStream out, boolean quiet) {
      Properties p = dev.runnel.connect.kafka.ClientConfig.groupLessReader(bootstrap, Map.of(), "runnel-demo-view");
      this.consumer = new org.apache.kafka.clients.consumer.KafkaConsumer<>(p,
          new org.apache.kafka.common.serialization.ByteArrayDeserializer(),
          new org.apache.kafka.common.serialization.ByteArrayDeserializer());
      this.out = out;
      this.quiet = quiet;
      this.topic = topic;
    }

    void poll(long produced, long total, long consumed, long startNanos) {
      if (!assigned) {
        List<org.apache.kafka.common.PartitionInfo> parts = consumer.listTopics(Duration.ofSeconds(5)).get(topic);
        if (parts != null) {
          List<org.apache.kafka.common.TopicPartition> tps = new ArrayList<>();
          for (org.apache.kafka.common.PartitionInfo i : parts) {
            tps.add(new org.apache.kafka.common.TopicPartition(topic, i.partition()));
          }
          consumer.assign(tps);
          consumer.seekToBeginning(tps);
          assigned = true;
        } else {
          sleep(200);
        }
      }
      if (assigned) {
        for (var r : consumer.poll(Duration.ofMillis(200))) {
          try {
            JsonNode s = dev.runnel.connect.output.OutputRecords.read(r.headers(), r.value()); // JSON or Avro snapshots
            previous = latest;
            latest = s;
          } catch (IOException e) {
            // a snapshot we cannot read is skipped in the live view; the summary reads them again
          }
        }
      }
      long now = System.nanoTime();
      if (quiet || now - lastPrintNanos < 2_000_000_000L) {
        return;
      }
      lastPrintNanos = now;
      double secs = Math.max(1e-9, (now - startNanos) / 1e9);
      StringBuilder sb = new StringBuilder(String.format(Locale.ROOT,
          "published %,d/%,d (%.0f%%)  processed %,d  %,.0f records/s", produced, total,
          100.0 * produced / Math.max(1, total), consumed, consumed / secs));
      if (latest != null) {
        sb.append(String.format(Locale.ROOT, "  | latest snapshot %s: recent MAE %.2f",
            latest.path("event_time").asText("?").replace(":00Z", "Z"),
            latest.path("metrics").path("recent").path("mae").asDouble(Double.NaN)));
        if (previous != null) {
          sb.append("  moved most: ").append(biggestMoves(previous, latest, 2));
        }
      }
      out.println(TerminalText.safe(sb));
    }

    /** The columns whose weight moved most between two snapshots, in standard errors. */
    static String biggestMoves(JsonNode a, JsonNode b, int k) {
      Map<String, JsonNode> before = new java.util.HashMap<>();
      for (JsonNode c : a.path("columns")) {
        before.put(c.path("name").asText(), c);
      }
      List<String[]> moves = new ArrayList<>();
      for (JsonNode c : b.path("columns")) {
        JsonNode old = before.get(c.path("name").asText());
        if (old == null || old.path("raw_weight").isNull() || c.path("raw_weight").isNull()) {
          continue;
        }
        double w0 = old.path("raw_weight").asDouble();
        double w1 = c.path("raw_weight").asDouble();
        double se = c.path("raw_std_error").asDouble(Double.NaN);
        double z = se > 0 ? Math.abs(w1 - w0) / se : 0;
        moves.add(new String[] {String.format(Locale.ROOT, "%08.3f", z),
            String.format(Locale.ROOT, "%s %.2f→%.2f", c.path("name").asText(), w0, w1)});
      }
      moves.sort((x, y) -> y[0].compareTo(x[0]));
      StringBuilder sb = new StringBuilder();
      for (int i = 0; i < Math.min(k, moves.size()); i++) {
        if (i > 0) {
          sb.append(", ");
        }
        sb.append(moves.get(i)[1]);
      }
      return sb.toString();
    }

    private static void sleep(long ms) {
      try {
        Thread.sleep(ms);
      } catch (InterruptedException e) {
        Thread.currentThread().interrupt();
      }
    }

    @Override
    public void close() {
      consumer.close(Duration.ofSeconds(5));
    }
  }
}
