package dev.runnel.connect.web;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ArrayNode;
import com.fasterxml.jackson.databind.node.JsonNodeFactory;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.runnel.connect.kafka.RunnerCounters;
import dev.runnel.connect.output.GlobalSnapshots;
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
 * touches the pipeline's offsets. Bounded: the last {@link #MAX_PREDICTIONS} scored predictions of
 * all series, and per series (an entity: {@link #seriesFields}, else the Kafka key; at most {@link #MAX_SERIES},
 * the most recently updated) its last {@link #MAX_SERIES_PREDICTIONS}; the last {@link #MAX_SNAPSHOTS} snapshots (weights only) and the latest full snapshot; with
 * {@code input.forecast}, per entity (at most {@link #MAX_AHEAD_ENTITIES}, the most recently updated),
 * its latest {@link #MAX_AHEAD_ACTUALS} actuals and the nearest {@link #MAX_AHEAD_FORECASTS} forecasts
 * ahead of its latest actual ({@link ForecastsAhead}). With {@code model.scope: global} the snapshots of all partitions
 * make one model ({@link GlobalSnapshots}): the coefficient paths, the latest snapshot and the alarms are the one
 * model's, and {@code global_model} lists each partition's view and where it differs (docs/operations.md, "Scaling").
 *
 * <p>Thread contract: one reader thread writes; {@link #stateJson()} may be called from any thread.
 */
public final class LiveState implements AutoCloseable {

  /** Predictions of all series kept for the predicted-vs-actual chart's "all series" choice. */
  public static final int MAX_PREDICTIONS = 4000;
  /** Series (entities, or Kafka keys) kept for the predicted-vs-actual chart: the most recently updated. */
  public static final int MAX_SERIES = 50;
  /**
   * Scored predictions kept per series: the latest read. With {@link #MAX_SERIES} and {@link #MAX_PREDICTIONS}, at most
   * 54,000 rows of five doubles (56 bytes each, shared between a series and the rows of all): under 4 MB (counted from
   * object sizes, not measured).
   */
  public static final int MAX_SERIES_PREDICTIONS = 1000;
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
  // access order: the series updated longest ago comes first
  private final LinkedHashMap<String, ArrayDeque<double[]>> series = new LinkedHashMap<>(64, 0.75f, true);
  private long seriesDropped;
  private long namedByKey;
  private boolean targetTimes;
  private final ArrayDeque<JsonNode> snapshots = new ArrayDeque<>();
  private final LinkedHashMap<String, JsonNode> alarmLog = new LinkedHashMap<>();
  private final ForecastsAhead ahead = new ForecastsAhead();
  private JsonNode latest;
  private GlobalSnapshots global;
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
   * As {@link #LiveState(String, String, Map, Supplier)}, naming the series of a prediction (the entity of a
   * forecast, the series the predicted-vs-actual chart draws) by these fields of the prediction's {@code fields}
   * ({@link #seriesFields}); without them, or when a prediction does not echo them, by its Kafka key.
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

  /**
   * The fields that name a series on the page: {@code input.forecast.entity_fields} when forecasting, else the
   * first text field of {@code outputs.echo_fields}; none (the Kafka key names it) without either. A field is
   * only read from a prediction's {@code fields}, so it names the series only when it is echoed.
   */
  public static List<String> seriesFields(dev.runnel.core.config.PipelineConfig config) {
    if (config.input().forecast().enabled()) {
      return config.input().forecast().entityFields();
    }
    dev.runnel.core.record.RecordSchema schema = config.input().schema();
    for (String f : config.outputs().echoFields()) {
      int slot = schema.slot(f);
      if (slot >= 0 && schema.type(slot) == dev.runnel.core.record.FieldType.TEXT) {
        return List.of(f);
      }
    }
    return List.of();
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
        org.apache.kafka.clients.consumer.ConsumerRecords<byte[], byte[]> polled = c.poll(Duration.ofMillis(300));
        for (ConsumerRecord<byte[], byte[]> r : polled) {
          take(r.topic().equals(coefTopic), r.key(), r.headers(), r.value());
        }
        if (polled.isEmpty()) {
          settle();
        }
        sampleCounters();
      }
    } catch (RuntimeException e) {
      if (!stop) {
        readerProblem = "the web view stopped following the output topics: " + e;
      }
    }
  }

  /** One record of the predictions or coefficients topic (JSON or Avro, told by its headers: {@code OutputRecords}). */
  private void take(boolean snapshot, byte[] key, org.apache.kafka.common.header.Headers headers, byte[] value) {
    JsonNode n;
    try {
      n = dev.runnel.connect.output.OutputRecords.read(headers, value);
    } catch (IOException e) {
      return; // a record the view cannot read is skipped; the topic is authoritative
    }
    if (snapshot) {
      addSnapshot(n);
    } else {
      addPrediction(n, key == null ? "" : new String(key, java.nio.charset.StandardCharsets.UTF_8));
    }
  }

  /** Adds one prediction record with its Kafka key (package-private for tests). */
  synchronized void addPrediction(JsonNode n, String key) {
    predictionsSeen++;
    String name = entityOf(n, key);
    if (n.has("target_time")) {
      ahead.take(n, name);
    }
    if (!"scored".equals(n.path("status").asText())) {
      return;
    }
    // drawn at the hour it is about when it has one (a forecasting pipeline's actual), else at its event time
    long t;
    try {
      JsonNode target = n.get("target_time");
      t = Instant.parse((target != null && target.isTextual() ? target : n.path("event_time")).asText()).toEpochMilli();
    } catch (RuntimeException e) {
      return;
    }
    targetTimes |= n.has("target_time");
    double[] row = {t, num(n, "predicted"), num(n, "low"), num(n, "high"), num(n, "actual")};
    predictions.addLast(row);
    predictionKeys.addLast(name);
    while (predictions.size() > MAX_PREDICTIONS) {
      predictions.removeFirst();
      predictionKeys.removeFirst();
    }
    ArrayDeque<double[]> rows = series.get(name);
    if (rows == null) {
      rows = new ArrayDeque<>();
      series.put(name, rows);
      if (series.size() > MAX_SERIES) {
        java.util.Iterator<String> it = series.keySet().iterator();
        it.next();
        it.remove();
        seriesDropped++;
      }
    }
    rows.addLast(row);
    if (rows.size() > MAX_SERIES_PREDICTIONS) {
      rows.removeFirst();
    }
  }

  /** The series' name: {@code field=value} per series field (joined by commas), else the Kafka key. */
  private String entityOf(JsonNode n, String key) {
    if (entityFields.isEmpty()) {
      return key;
    }
    StringBuilder sb = new StringBuilder();
    JsonNode fields = n.path("fields");
    for (String f : entityFields) {
      JsonNode v = fields.get(f);
      if (v == null || !v.isTextual()) {
        namedByKey++;
        return key;
      }
      sb.append(sb.length() == 0 ? "" : ",").append(f).append('=').append(v.asText());
    }
    return sb.toString();
  }

  /**
   * Adds one snapshot record (package-private for tests). A snapshot of a {@code model.scope: global} pipeline goes
   * to the one model ({@link GlobalSnapshots}): its history and alarms are the model's, not each partition's.
   */
  synchronized void addSnapshot(JsonNode n) {
    snapshotsSeen++;
    if (GlobalSnapshots.isGlobal(n)) {
      if (global == null) {
        global = new GlobalSnapshots();
      }
      for (GlobalSnapshots.Point pt : global.take(n)) {
        if (!pt.late()) {
          addToHistory(pt.model(), true);
        }
      }
      return;
    }
    latest = n;
    addToHistory(n, false);
  }

  /**
   * Caught up with the topics: with {@code model.scope: global}, every held snapshot time but the newest joins the
   * model's history ({@link GlobalSnapshots#settle()}) without waiting for a partition that has not published it
   * (package-private for tests).
   */
  synchronized void settle() {
    if (global != null) {
      for (GlobalSnapshots.Point pt : global.settle()) {
        addToHistory(pt.model(), true);
      }
    }
  }

  /** One point of the coefficient paths and its alarms in the log; {@code model}: merged alarms of the one model. */
  private void addToHistory(JsonNode n, boolean model) {
    snapshots.addLast(slim(n));
    while (snapshots.size() > MAX_SNAPSHOTS) {
      snapshots.removeFirst();
    }
    for (JsonNode a : n.path("alarms")) {
      String key = a.path("kind").asText() + "|" + a.path("column").asText("") + "|" + a.path("fired_at").asText()
          + "|" + (model ? "global|" + a.path("direction").asText() : n.path("partition").asText());
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

  private static ObjectNode slim(JsonNode n) {
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
    return slim;
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
    return stateJson(List.of(), null, false);
  }

  /**
   * The document served at {@code /api/state?columns=a,b}: the coefficient paths of the named columns (the page's
   * picker; names not among the latest snapshot's columns are left out, at most {@link #MAX_PICKED} are kept) in
   * place of the default {@link #SHOWN_WEIGHTS}; with none named, the default ones.
   *
   * @param picked column names asked for; may be empty
   */
  public ObjectNode stateJson(List<String> picked) {
    return stateJson(picked, null, false);
  }

  /**
   * The document served at {@code /api/state?columns=a,b&series=s} (or {@code &all_series=1}): {@code predictions}
   * holds the scored predictions of the series named (the page's series selector), or the last
   * {@link #MAX_PREDICTIONS} of all series; with neither, or a series no longer kept, of the default one: all series
   * once more than {@link #MAX_SERIES} were seen (series were dropped), else the one with the most predictions kept
   * (the first by name of those).
   *
   * @param picked column names asked for; may be empty
   * @param seriesName the series asked for, or null for the default
   * @param allSeries true to ask for the predictions of all series
   */
  public synchronized ObjectNode stateJson(List<String> picked, String seriesName, boolean allSeries) {
    ObjectNode root = F.objectNode();
    root.put("format", 3);
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
    writeSeries(root, seriesName, allSeries);
    // model.scope: global: the one model (its newest point, complete or not) in place of the latest partition's view
    GlobalSnapshots.Point now = global == null ? null : global.current();
    JsonNode latest = now != null ? now.model() : this.latest;
    List<JsonNode> history = new ArrayList<>(snapshots);
    if (now != null && (history.isEmpty()
        || GlobalSnapshots.timeOf(now.model()) > GlobalSnapshots.timeOf(history.get(history.size() - 1)))) {
      history.add(slim(now.model()));
    }
    List<String> shown = shownColumns(latest);
    ArrayNode sh = root.putArray("shown_columns");
    shown.forEach(sh::add);
    List<String> drawn = pickedColumns(latest, picked);
    ArrayNode pk = root.putArray("picked_columns");
    drawn.forEach(pk::add);
    ArrayNode paths = root.putArray("coefficient_paths");
    for (String name : drawn.isEmpty() ? shown : drawn) {
      ObjectNode path = paths.addObject();
      path.put("column", name);
      ArrayNode pts = path.putArray("points");
      for (JsonNode s : history) {
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
    for (JsonNode s : history) {
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
        if (c.has("other_partitions")) {
          o.put("other_partitions", true);
        }
      }
    } else {
      root.putNull("latest");
    }
    if (now != null) {
      root.set("global_model", GlobalSnapshots.json(now, global.partitions()));
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

  /** The {@code series} object and the {@code predictions} of the series chosen (docs/formats.md). */
  private void writeSeries(ObjectNode root, String asked, boolean allSeries) {
    java.util.TreeMap<String, ArrayDeque<double[]>> byName = new java.util.TreeMap<>(series);
    String chosen = asked != null && byName.containsKey(asked) ? asked : null;
    if (chosen == null && !allSeries && seriesDropped == 0) {
      for (Map.Entry<String, ArrayDeque<double[]>> e : byName.entrySet()) {
        if (chosen == null || e.getValue().size() > byName.get(chosen).size()) {
          chosen = e.getKey();
        }
      }
    }
    boolean all = chosen == null;
    ObjectNode so = root.putObject("series");
    ArrayNode by = so.putArray("by");
    entityFields.forEach(by::add);
    so.put("time", targetTimes ? "target_time" : "event_time");
    so.put("all", all);
    if (all) {
      so.putNull("chosen");
    } else {
      so.put("chosen", chosen);
    }
    so.put("max_series", MAX_SERIES);
    so.put("max_per_series", MAX_SERIES_PREDICTIONS);
    so.put("max_all", MAX_PREDICTIONS);
    so.put("dropped", seriesDropped);
    so.put("named_by_key", namedByKey);
    ArrayNode names = so.putArray("names");
    for (Map.Entry<String, ArrayDeque<double[]>> e : byName.entrySet()) {
      ArrayNode a = names.addArray();
      a.add(e.getKey());
      a.add(e.getValue().size());
    }
    // rows in time order (late actuals arrive after later hours); a stable sort keeps arrival order within a time
    List<double[]> rows = new ArrayList<>(all ? predictions : byName.get(chosen));
    List<String> keys = all ? new ArrayList<>(predictionKeys) : null;
    Integer[] order = new Integer[rows.size()];
    for (int i = 0; i < order.length; i++) {
      order[i] = i;
    }
    java.util.Arrays.sort(order, Comparator.comparingDouble(i -> rows.get(i)[0]));
    ArrayNode preds = root.putArray("predictions");
    for (int i : order) {
      double[] p = rows.get(i);
      ArrayNode a = preds.addArray();
      a.add(all ? keys.get(i) : chosen);
      a.add(Instant.ofEpochMilli((long) p[0]).toString());
      for (int j = 1; j < p.length; j++) {
        if (Double.isNaN(p[j])) {
          a.addNull();
        } else {
          a.add(p[j]);
        }
      }
    }
  }

  /**
   * The weights drawn: those with a raised alarm first, then the largest |drift_score|, then the
   * largest |weight/se|, up to {@link #SHOWN_WEIGHTS}; the constant is left out (its scale dwarfs the rest).
   */
  private static List<String> shownColumns(JsonNode latest) {
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
  private static List<String> pickedColumns(JsonNode latest, List<String> picked) {
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
