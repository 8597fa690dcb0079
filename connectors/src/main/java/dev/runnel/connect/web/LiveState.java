package dev.runnel.connect.web;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ArrayNode;
import com.fasterxml.jackson.databind.node.JsonNodeFactory;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.runnel.connect.kafka.RunnerCounters;
import java.io.IOException;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayDeque;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Properties;
import java.util.function.Supplier;
import org.apache.kafka.clients.consumer.ConsumerConfig;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.consumer.KafkaConsumer;
import org.apache.kafka.common.PartitionInfo;
import org.apache.kafka.common.TopicPartition;
import org.apache.kafka.common.serialization.ByteArrayDeserializer;

/**
 * What the web view shows, kept up to date by a background thread that follows the pipeline's own
 * output topics ({@code <name>.predictions} and {@code <name>.coefficients}) as a read_committed
 * reader without a consumer group, so it sees exactly what downstream consumers see and never
 * touches the pipeline's offsets. Bounded: the last {@link #MAX_PREDICTIONS} scored predictions,
 * the last {@link #MAX_SNAPSHOTS} snapshots (weights only) and the latest full snapshot; with
 * {@code input.forecast}, per entity (at most {@link #MAX_AHEAD_ENTITIES}, the most recently updated),
 * its latest {@link #MAX_AHEAD_ACTUALS} actuals and the nearest {@link #MAX_AHEAD_FORECASTS} forecasts
 * ahead of its latest actual ({@link ForecastsAhead}).
 *
 * <p>Thread contract: one reader thread writes; {@link #stateJson()} may be called from any thread.
 */
public final class LiveState implements AutoCloseable {

  /** Predictions kept for the predicted-vs-actual chart. */
  public static final int MAX_PREDICTIONS = 4000;
  /** Snapshots kept for the coefficient paths. */
  public static final int MAX_SNAPSHOTS = 500;
  /** Alarms kept in the alarm log. */
  public static final int MAX_ALARMS = 200;
  /** Weights drawn in the coefficient chart. */
  public static final int SHOWN_WEIGHTS = 6;
  /** Columns the page's picker may ask for at once. */
  public static final int MAX_PICKED = 12;
  /** Entities whose forecasts ahead are kept: the most recently updated. */
  public static final int MAX_AHEAD_ENTITIES = 50;
  /** Latest actuals kept per entity (by target time): a week of hours. */
  public static final int MAX_AHEAD_ACTUALS = 168;
  /** Forecasts ahead kept per entity: the nearest target times. */
  public static final int MAX_AHEAD_FORECASTS = 200;

  private static final ObjectMapper JSON = new ObjectMapper();
  private static final JsonNodeFactory F = JsonNodeFactory.instance;

  private final String pipeline;
  private final String bootstrap;
  private final List<String> entityFields;
  private final Supplier<RunnerCounters> counters;
  private final Thread thread;
  private volatile boolean stop;
  private volatile String readerProblem;

  // guarded by this
  private final ArrayDeque<double[]> predictions = new ArrayDeque<>();
  private final ArrayDeque<String> predictionKeys = new ArrayDeque<>();
  private final ArrayDeque<JsonNode> snapshots = new ArrayDeque<>();
  private final LinkedHashMap<String, JsonNode> alarmLog = new LinkedHashMap<>();
  private final ForecastsAhead ahead = new ForecastsAhead();
  private JsonNode latest;
  private long predictionsSeen;
  private long snapshotsSeen;
  private long sampleNanos;
  private long sampleRecords;
  private double recordsPerSecond;

  /**
   * @param pipeline the pipeline name
   * @param bootstrap bootstrap servers
   * @param clientProperties extra consumer properties (security); may be empty. Not modified.
   * @param counters the runner's counters, or null when the runner is not in this process
   */
  public LiveState(String pipeline, String bootstrap, Map<String, String> clientProperties,
                   Supplier<RunnerCounters> counters) {
    this(pipeline, bootstrap, clientProperties, counters, List.of());
  }

  /**
   * As {@link #LiveState(String, String, Map, Supplier)}, naming the entity of a forecast by these
   * fields of the prediction's {@code fields} ({@code input.forecast.entity_fields}); without them, or
   * when a prediction does not echo them, by its Kafka key.
   */
  public LiveState(String pipeline, String bootstrap, Map<String, String> clientProperties,
                   Supplier<RunnerCounters> counters, List<String> entityFields) {
    this.entityFields = List.copyOf(entityFields);
    this.pipeline = pipeline;
    this.bootstrap = bootstrap;
    this.counters = counters;
    Properties p = dev.runnel.connect.kafka.ClientConfig.groupLessReader(bootstrap, clientProperties, "runnel-web");
    p.put(ConsumerConfig.MAX_POLL_RECORDS_CONFIG, "5000");
    this.thread = new Thread(() -> follow(p), "runnel-web-reader");
    this.thread.setDaemon(true);
  }

  /** Starts following the topics. */
  public LiveState start() {
    thread.start();
    return this;
  }

  private void follow(Properties p) {
    String predTopic = pipeline + ".predictions";
    String coefTopic = pipeline + ".coefficients";
    try (KafkaConsumer<byte[], byte[]> c = new KafkaConsumer<>(p, new ByteArrayDeserializer(), new ByteArrayDeserializer())) {
      List<TopicPartition> assigned = new ArrayList<>();
      while (!stop) {
        if (assigned.isEmpty()) {
          // the runner creates the output topics when it starts; wait for them
          Map<String, List<PartitionInfo>> topics = c.listTopics(Duration.ofSeconds(5));
          List<TopicPartition> tps = new ArrayList<>();
          for (String t : List.of(predTopic, coefTopic)) {
            List<PartitionInfo> infos = topics.get(t);
            if (infos != null) {
              for (PartitionInfo i : infos) {
                tps.add(new TopicPartition(t, i.partition()));
              }
            }
          }
          if (tps.size() >= 2) {
            c.assign(tps);
            c.seekToBeginning(tps);
            assigned = tps;
          } else {
            sleep(300);
            sampleCounters();
            continue;
          }
        }
        for (ConsumerRecord<byte[], byte[]> r : c.poll(Duration.ofMillis(300))) {
          take(r.topic().equals(coefTopic), r.key(), r.headers(), r.value());
        }
        sampleCounters();
      }
    } catch (RuntimeException e) {
      if (!stop) {
        readerProblem = "the web view stopped following the output topics: " + e;
      }
    }
  }

  /** One record of the predictions (JSON or Avro, told by its headers: {@code OutputRecords}) or coefficients topic. */
  private void take(boolean snapshot, byte[] key, org.apache.kafka.common.header.Headers headers, byte[] value) {
    JsonNode n;
    try {
      n = snapshot ? JSON.readTree(value) : dev.runnel.connect.output.OutputRecords.read(headers, value);
    } catch (IOException e) {
      return; // a record the view cannot read is skipped; the topic is authoritative
    }
    if (snapshot) {
      addSnapshot(n);
    } else {
      addPrediction(n, key == null ? "" : new String(key, java.nio.charset.StandardCharsets.UTF_8));
    }
  }

  /** Adds one prediction record with its Kafka key, the series it is drawn in (package-private for tests). */
  synchronized void addPrediction(JsonNode n, String key) {
    predictionsSeen++;
    if (n.has("target_time")) {
      ahead.take(n, entityOf(n, key));
    }
    if (!"scored".equals(n.path("status").asText())) {
      return;
    }
    long t;
    try {
      t = Instant.parse(n.path("event_time").asText()).toEpochMilli();
    } catch (RuntimeException e) {
      return;
    }
    predictions.addLast(new double[] {t, num(n, "predicted"), num(n, "low"), num(n, "high"), num(n, "actual")});
    predictionKeys.addLast(key);
    while (predictions.size() > MAX_PREDICTIONS) {
      predictions.removeFirst();
      predictionKeys.removeFirst();
    }
  }

  /** The entity's name: {@code field=value} per entity field (joined by commas), else the Kafka key. */
  private String entityOf(JsonNode n, String key) {
    if (entityFields.isEmpty()) {
      return key;
    }
    StringBuilder sb = new StringBuilder();
    JsonNode fields = n.path("fields");
    for (String f : entityFields) {
      JsonNode v = fields.get(f);
      if (v == null || !v.isTextual()) {
        return key;
      }
      sb.append(sb.length() == 0 ? "" : ",").append(f).append('=').append(v.asText());
    }
    return sb.toString();
  }

  /** Adds one snapshot record (package-private for tests). */
  synchronized void addSnapshot(JsonNode n) {
    snapshotsSeen++;
    latest = n;
    ObjectNode slim = F.objectNode();
    slim.put("index", n.path("index").asLong(-1));
    slim.set("event_time", n.path("event_time"));
    slim.set("noise_sd", n.path("noise_sd"));
    slim.set("recent_mae", n.path("metrics").path("recent").path("mae"));
    ObjectNode w = slim.putObject("weights");
    for (JsonNode col : n.path("columns")) {
      ArrayNode a = w.putArray(col.path("name").asText());
      a.add(col.path("raw_weight"));
      a.add(col.path("raw_std_error"));
    }
    snapshots.addLast(slim);
    while (snapshots.size() > MAX_SNAPSHOTS) {
      snapshots.removeFirst();
    }
    for (JsonNode a : n.path("alarms")) {
      String key = a.path("kind").asText() + "|" + a.path("column").asText("") + "|" + a.path("fired_at").asText()
          + "|" + n.path("partition").asText();
      ObjectNode entry = ((ObjectNode) a).deepCopy();
      entry.put("partition", n.path("partition").asInt());
      entry.set("last_seen", n.path("event_time"));
      alarmLog.remove(key);
      alarmLog.put(key, entry);
      while (alarmLog.size() > MAX_ALARMS) {
        alarmLog.remove(alarmLog.keySet().iterator().next());
      }
    }
  }

  private synchronized void sampleCounters() {
    if (counters == null) {
      return;
    }
    long now = System.nanoTime();
    if (now - sampleNanos < 1_000_000_000L) {
      return;
    }
    long n = counters.get().recordsIn();
    if (sampleNanos != 0) {
      recordsPerSecond = (n - sampleRecords) / ((now - sampleNanos) / 1e9);
    }
    sampleNanos = now;
    sampleRecords = n;
  }

  /** The document served at {@code /api/state} (see docs/formats.md), with the default coefficient paths. */
  public ObjectNode stateJson() {
    return stateJson(List.of());
  }

  /**
   * The document served at {@code /api/state?columns=a,b}: the coefficient paths of the named columns (the page's
   * picker; names not among the latest snapshot's columns are left out, at most {@link #MAX_PICKED} are kept) in
   * place of the default {@link #SHOWN_WEIGHTS}; with none named, the default ones.
   *
   * @param picked column names asked for; may be empty
   */
  public synchronized ObjectNode stateJson(List<String> picked) {
    ObjectNode root = F.objectNode();
    root.put("format", 2);
    root.put("pipeline", pipeline);
    root.put("bootstrap_servers", bootstrap);
    root.put("generated_at", Instant.now().toString());
    if (readerProblem != null) {
      root.put("problem", readerProblem);
    }
    ObjectNode tp = root.putObject("throughput");
    tp.put("predictions_read", predictionsSeen);
    tp.put("snapshots_read", snapshotsSeen);
    if (counters != null) {
      RunnerCounters c = counters.get();
      tp.put("records_in", c.recordsIn());
      tp.put("outputs_out", c.outputsOut());
      tp.put("rejects", c.rejects());
      tp.put("commits", c.commits());
      tp.put("aborts", c.aborts());
      tp.put("records_per_second", Math.round(recordsPerSecond * 10) / 10.0);
      if (c.lag() >= 0) {
        tp.put("records_behind", c.lag());
      } else {
        tp.putNull("records_behind");
      }
      if (c.lastCommitEpochMillis() > 0) {
        tp.put("last_commit", Instant.ofEpochMilli(c.lastCommitEpochMillis()).toString());
      } else {
        tp.putNull("last_commit");
      }
    }
    ArrayNode preds = root.putArray("predictions");
    java.util.Iterator<String> keys = predictionKeys.iterator();
    for (double[] p : predictions) {
      ArrayNode a = preds.addArray();
      a.add(keys.next());
      a.add(Instant.ofEpochMilli((long) p[0]).toString());
      for (int i = 1; i < p.length; i++) {
        if (Double.isNaN(p[i])) {
          a.addNull();
        } else {
          a.add(p[i]);
        }
      }
    }
    List<String> shown = shownColumns();
    ArrayNode sh = root.putArray("shown_columns");
    shown.forEach(sh::add);
    List<String> drawn = pickedColumns(picked);
    ArrayNode pk = root.putArray("picked_columns");
    drawn.forEach(pk::add);
    ArrayNode paths = root.putArray("coefficient_paths");
    for (String name : drawn.isEmpty() ? shown : drawn) {
      ObjectNode path = paths.addObject();
      path.put("column", name);
      ArrayNode pts = path.putArray("points");
      for (JsonNode s : snapshots) {
        JsonNode ws = s.path("weights").get(name);
        if (ws == null || ws.get(0).isNull()) {
          continue;
        }
        ArrayNode pt = pts.addArray();
        pt.add(s.path("event_time").asText());
        pt.add(ws.get(0));
        pt.add(ws.get(1));
      }
    }
    ArrayNode err = root.putArray("error_path");
    for (JsonNode s : snapshots) {
      ArrayNode pt = err.addArray();
      pt.add(s.path("event_time").asText());
      pt.add(s.path("recent_mae"));
      pt.add(s.path("noise_sd"));
    }
    if (latest != null) {
      ObjectNode l = root.putObject("latest");
      for (String k : List.of("index", "partition", "event_time", "records", "trained", "rejected", "columns_version",
          "ready", "noise_sd", "effective_sample_size", "metrics", "forecast_counts", "horizon_metrics", "vocabularies",
          "standardization", "alarms", "drift")) {
        if (latest.has(k)) {
          l.set(k, latest.get(k));
        }
      }
      ArrayNode cols = l.putArray("columns");
      for (JsonNode c : latest.path("columns")) {
        ObjectNode o = cols.addObject();
        o.set("name", c.path("name"));
        o.set("raw_weight", c.path("raw_weight"));
        o.set("raw_std_error", c.path("raw_std_error"));
        o.set("drift_score", c.path("drift_score"));
      }
    } else {
      root.putNull("latest");
    }
    if (ahead.size() > 0) {
      ahead.write(root.putObject("forecasts_ahead"));
    }
    ArrayNode log = root.putArray("alarm_log");
    List<JsonNode> entries = new ArrayList<>(alarmLog.values());
    for (int i = entries.size() - 1; i >= 0; i--) {
      log.add(entries.get(i));
    }
    return root;
  }

  /**
   * The weights drawn: those with a raised alarm first, then the largest |drift_score|, then the
   * largest |weight/se|, up to {@link #SHOWN_WEIGHTS}; the constant is left out (its scale dwarfs the rest).
   */
  private List<String> shownColumns() {
    List<String> out = new ArrayList<>();
    if (latest == null) {
      return out;
    }
    for (JsonNode a : latest.path("alarms")) {
      String c = a.path("column").asText(null);
      if (c != null && !out.contains(c) && out.size() < SHOWN_WEIGHTS) {
        out.add(c);
      }
    }
    List<JsonNode> cols = new ArrayList<>();
    latest.path("columns").forEach(cols::add);
    cols.removeIf(c -> c.path("name").asText().equals("constant") || c.path("raw_weight").isNull());
    cols.sort(Comparator.comparingDouble((JsonNode c) -> -score(c)));
    for (JsonNode c : cols) {
      String name = c.path("name").asText();
      if (out.size() >= SHOWN_WEIGHTS) {
        break;
      }
      if (!out.contains(name)) {
        out.add(name);
      }
    }
    return out;
  }

  /** The asked-for columns that the latest snapshot has, in the order asked, each once, at most {@link #MAX_PICKED}. */
  private List<String> pickedColumns(List<String> picked) {
    List<String> out = new ArrayList<>();
    if (latest == null || picked.isEmpty()) {
      return out;
    }
    java.util.Set<String> known = new java.util.HashSet<>();
    latest.path("columns").forEach(c -> known.add(c.path("name").asText()));
    for (String p : picked) {
      if (known.contains(p) && !out.contains(p) && out.size() < MAX_PICKED) {
        out.add(p);
      }
    }
    return out;
  }

  private static double score(JsonNode c) {
    double moved = Math.abs(c.path("drift_score").asDouble(0));
    double se = c.path("raw_std_error").asDouble(Double.NaN);
    double t = se > 0 ? Math.abs(c.path("raw_weight").asDouble() / se) : 0;
    // moved weights first (scaled up so any real move beats a merely large weight), then significance
    return (moved >= 2 ? 1e6 * moved : 0) + Math.min(t, 1e5);
  }

  private static double num(JsonNode n, String k) {
    JsonNode v = n.get(k);
    return v == null || !v.isNumber() ? Double.NaN : v.asDouble();
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
    stop = true;
    try {
      thread.join(5_000);
    } catch (InterruptedException e) {
      Thread.currentThread().interrupt();
    }
  }
}
