package dev.runnel.connect.web;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.connect.testing.TestBroker;
import dev.runnel.connect.demo.DemoRun;
import dev.runnel.connect.drift.DriftTable;
import dev.runnel.connect.kafka.ExactlyOnceRunner;
import dev.runnel.connect.kafka.RunnerSettings;
import dev.runnel.connect.pipeline.PipelineProcessor;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.demo.GeneratedRecord;
import dev.runnel.demo.QuillmarshGenerator;
import dev.runnel.demo.Settings;
import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.concurrent.TimeUnit;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.common.serialization.ByteArraySerializer;
import org.junit.jupiter.api.Assumptions;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;

/**
 * The live view against a real pipeline on the embedded broker: the invented Quillmarsh feed (12
 * days, without Kafka keys) runs through the exactly-once runner in two parts; the view follows the
 * output topics. After the first part (up to the feed's last day-ahead requests) {@code /api/state} must
 * name one series per hub from the echoed hub field, and the page must draw the chosen hub's actuals and,
 * after its last actual, each forecast ahead with its band in their own marks (the screenshot
 * {@code target/live-view.png} is taken then). After the rest, the hours that were ahead are drawn as
 * ordinary actuals and nothing is ahead. Then the JSON endpoint and the {@code drift} table are checked;
 * the page is loaded in a real headless chromium, which must draw one coefficient path per shown weight and points in the
 * predicted-vs-actual chart; the values drawn are read back through each chart's stated domain and checked
 * against {@code /api/state}: the active and past alarms, the default weight charts (fitted y-axis, round
 * ticks, labelled axes), the hour-of-day and day-of-week effect curves, and, loaded again with
 * {@code #columns=...&range=2d}, a picked column and the last two days. The state is saved as
 * {@code target/live-state.json}. docs/drift.md's screenshot is {@code target/live-view.png}, copied to docs/img.
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class LiveViewBrowserTest {

  private static final ObjectMapper JSON = new ObjectMapper();

  static PipelineConfig config(String name, String topic) {
    return DemoRun.demoConfig().withNameAndTopic(name, topic);
  }

  static Path chromium() {
    for (String p : List.of("/usr/bin/chromium", "/usr/bin/chromium-browser", "/usr/lib/chromium/chromium")) {
      if (Files.isExecutable(Path.of(p))) {
        return Path.of(p);
      }
    }
    return null;
  }

  @Test
  void pageDrawsCoefficientPathsAndPredictionsFromARunningPipeline(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    String name = "liveview";
    String topic = name + ".sessions";
    KafkaTestSupport.createTopic(bs, topic, 1);
    QuillmarshGenerator gen = new QuillmarshGenerator(Settings.defaults().withDays(12).withSeed(20260105L));
    List<GeneratedRecord> records = new ArrayList<>();
    gen.recordIterator().forEachRemaining(records::add);
    List<String> lines = new ArrayList<>();
    records.forEach(g -> lines.add(g.line()));
    // first the feed up to its last day-ahead requests (so forecasts are ahead of every hub's last actual), then the rest
    int lastDayAhead = records.stream().filter(g -> g.kind() == GeneratedRecord.Kind.DAY_AHEAD_REQUEST)
        .mapToInt(GeneratedRecord::issueHour).max().orElseThrow();
    int firstPart = 0;
    while (firstPart < records.size() && records.get(firstPart).issueHour() <= lastDayAhead) {
      firstPart++;
    }
    assertTrue(firstPart > lines.size() / 2 && firstPart < lines.size(), firstPart + " of " + lines.size());
    Map<String, Object> pc = KafkaTestSupport.producerConfig(bs);
    PipelineConfig cfg = config(name, topic);
    RunnerSettings rs = RunnerSettings.of(name, topic, bs).withCommitInterval(300, 2000);
    ExactlyOnceRunner runner = new ExactlyOnceRunner(rs, PipelineProcessor.factory(cfg));
    Thread work = new Thread(runner, "liveview-runner");
    work.setDaemon(true);
    // no Kafka keys: the page names one series per hub from the echoed entity field (outputs.echo_fields: [hub])
    List<String> seriesFields = LiveState.seriesFields(cfg);
    assertEquals(List.of("hub"), seriesFields);
    try (KafkaProducer<byte[], byte[]> producer = new KafkaProducer<>(pc, new ByteArraySerializer(), new ByteArraySerializer());
         LiveState state = new LiveState(name, bs, Map.of(), runner::counters, seriesFields).start();
         WebView web = WebView.start("127.0.0.1", 0, false, state)) {
      send(producer, topic, lines.subList(0, firstPart));
      work.start();
      awaitRead(runner, state, firstPart, 4L * lastDayAhead / 24 - 3);
      HttpClient http = HttpClient.newHttpClient();
      JsonNode early = JSON.readTree(http.send(HttpRequest.newBuilder(URI.create(web.url() + "api/state")).build(),
          HttpResponse.BodyHandlers.ofString()).body());
      String chosen = checkSeries(early, records.subList(0, firstPart));
      JsonNode earlyAhead = aheadOf(early, chosen);
      assertTrue(earlyAhead.path("forecasts").size() >= 24, "a day ahead of " + chosen + ": " + earlyAhead.path("forecasts").size());
      Path chromium = chromium();
      Path profile = chromium == null ? Path.of("no-chromium") : Files.createTempDirectory("runnel-chromium");
      List<String> common = List.of(chromium == null ? "chromium" : chromium.toString(), "--headless", "--no-sandbox",
          "--disable-gpu", "--disable-quic", "--no-first-run", "--disable-background-networking", "--disable-component-update",
          "--disable-sync", "--disable-dev-shm-usage", "--user-data-dir=" + profile, "--virtual-time-budget=15000",
          "--window-size=1280,1400");
      if (chromium != null) {
        List<String> dump = new ArrayList<>(common);
        dump.add("--dump-dom");
        dump.add(web.url());
        checkSeriesAndAheadDrawn(run(dump), early, chosen);
        // the screenshot in docs/drift.md: the page while forecasts are ahead
        Path shot = Path.of("target", "live-view.png").toAbsolutePath();
        Files.deleteIfExists(shot);
        List<String> pic = new ArrayList<>(common);
        pic.add("--screenshot=" + shot);
        pic.add(web.url());
        run(pic);
        assertTrue(Files.size(shot) > 10_000, "screenshot written: " + shot);
      }

      // the rest of the feed: its actuals settle the hours that were ahead
      send(producer, topic, lines.subList(firstPart, lines.size()));
      long expectedSnapshots = 12 * 4 - 1; // a snapshot every 6 h of event time over 12 days (the first period opens the clock)
      awaitRead(runner, state, lines.size(), expectedSnapshots - 1);

      // the JSON endpoint over HTTP
      HttpResponse<String> r = http.send(HttpRequest.newBuilder(URI.create(web.url() + "api/state")).build(),
          HttpResponse.BodyHandlers.ofString());
      assertEquals(200, r.statusCode());
      JsonNode s = JSON.readTree(r.body());
      Files.writeString(Path.of("target", "live-state.json"), r.body()); // kept beside the screenshot, to look at
      assertEquals(name, s.path("pipeline").asText());
      assertTrue(s.path("predictions").size() > 100, "predictions kept: " + s.path("predictions").size());
      int shown = s.path("shown_columns").size();
      assertEquals(LiveState.SHOWN_WEIGHTS, shown);
      assertEquals(shown, s.path("coefficient_paths").size());
      assertTrue(s.path("coefficient_paths").get(0).path("points").size() > 10);
      assertTrue(s.path("latest").path("vocabularies").size() == 2, "hub and weather vocabularies");
      assertTrue(s.path("latest").path("drift").path("error_test").asText().equals("page_hinkley"));
      assertTrue(s.path("throughput").path("records_in").asLong() >= lines.size());
      // format 2 names (docs/formats.md): the page reads these
      assertEquals(3, s.path("format").asInt());
      assertTrue(s.path("throughput").has("records_behind"), s.path("throughput").toString());
      assertTrue(s.path("latest").path("standardization").size() > 0, "running means and spreads");
      assertTrue(s.path("latest").path("vocabularies").get(0).has("below_min_count"));
      HttpResponse<String> page = http.send(HttpRequest.newBuilder(URI.create(web.url())).build(),
          HttpResponse.BodyHandlers.ofString());
      assertTrue(page.body().contains("<svg") || page.body().contains("createElementNS"), "the page draws SVG");

      // the drift verb's table on the same topic: one line per snapshot plus the header
      ByteArrayOutputStream buf = new ByteArrayOutputStream();
      int rc = dev.runnel.connect.cli.DriftCommandAccess.print(bs, name + ".coefficients",
          new DriftTable("first", 3, null, null), new PrintStream(buf, true, StandardCharsets.UTF_8));
      assertEquals(0, rc);
      // (the demo has input.forecast, so each snapshot's line is followed by its errors by horizon)
      String[] table = buf.toString(StandardCharsets.UTF_8).split("\n");
      long snaps = s.path("throughput").path("snapshots_read").asLong();
      List<String> snapshotLines = java.util.Arrays.stream(table).filter(l -> l.matches("^\\d+\\s+2026-.*")).toList();
      assertEquals(snaps, snapshotLines.size(), "one line per snapshot");
      assertTrue(!table[0].matches("^\\d+\\s+2026-.*"), "a header first: " + table[0]);
      String last = snapshotLines.get(snapshotLines.size() - 1);
      assertTrue(last.matches("^" + (snaps - 1) + "\\s+2026-.*\\(.*[+-]\\d+\\.\\d\\).*"), last);

      // the page in a real browser
      Assumptions.assumeTrue(chromium != null, "no chromium found at /usr/bin/chromium: install it (apt-get install"
          + " chromium; .ci/run does this) to run the browser check; the JSON endpoint was checked above");
      List<String> dump = new ArrayList<>(common);
      dump.add("--dump-dom");
      dump.add(web.url());
      String dom = run(dump);
      Matcher m = Pattern.compile("data-shown-weights=\"(\\d+)\"").matcher(dom);
      assertTrue(m.find(), "the page finished a refresh: " + dom.substring(0, Math.min(400, dom.length())));
      int shownInPage = Integer.parseInt(m.group(1));
      assertEquals(LiveState.SHOWN_WEIGHTS, shownInPage);
      assertEquals(shownInPage, count(dom, "<path[^>]*data-weight=\""), "one coefficient path per shown weight");
      assertEquals(shownInPage, count(dom, "<path[^>]*data-band=\"(?!interval|cycle-)"), "one ±2 se band per shown weight");
      assertTrue(count(dom, "<circle[^>]*data-point=\"actual\"") > 10, "points in the predicted-vs-actual chart");
      assertEquals(1, count(dom, "<path[^>]*data-series=\"predicted\""));
      // forecasts ahead: one entry per hub (its echoed field); the feed ends with the actuals of its last hours, so
      // nothing is ahead at its end, and the chosen hub's latest actuals are drawn
      JsonNode ahead = s.path("forecasts_ahead").path("entities");
      assertEquals(13, ahead.size(), "one entry per hub");
      assertEquals("hub=QM-01", ahead.get(0).path("entity").asText());
      assertEquals(LiveState.MAX_AHEAD_ACTUALS, ahead.get(0).path("actuals").size());
      assertEquals(aheadOf(s, s.path("series").path("chosen").asText()).path("actuals").size(),
          count(dom, "<circle[^>]*data-point=\"ahead-actual\""), "the chosen hub's actuals drawn");
      // the hub that had forecasts ahead, chosen in the address: its hours that were ahead are ordinary points now
      JsonNode settled = JSON.readTree(http.send(HttpRequest.newBuilder(URI.create(web.url() + "api/state?series=" + enc(chosen)))
          .build(), HttpResponse.BodyHandlers.ofString()).body());
      List<String> again = new ArrayList<>(common);
      again.add("--dump-dom");
      again.add(web.url() + "#series=" + enc(chosen));
      checkAheadSettled(run(again), settled, early, chosen);
      checkAlarms(dom, s);
      checkDefaultWeightCharts(dom, s);
      checkCycleEffects(dom, s);

      // a picked column (not among the default six) and the last two days, from the address
      String pick = null;
      for (JsonNode c : s.path("latest").path("columns")) {
        String n = c.path("name").asText();
        if (pick == null && !n.equals("constant") && !c.path("raw_weight").isNull() && !contains(s.path("shown_columns"), n)) {
          pick = n;
        }
      }
      JsonNode picked = JSON.readTree(http.send(HttpRequest.newBuilder(URI.create(web.url() + "api/state?columns="
          + enc(pick) + ",no_such_column")).build(), HttpResponse.BodyHandlers.ofString()).body());
      assertEquals(List.of(pick), names(picked.path("picked_columns")), "an unknown column is left out");
      assertEquals(1, picked.path("coefficient_paths").size());
      assertEquals(pick, picked.path("coefficient_paths").get(0).path("column").asText());
      List<String> zoom = new ArrayList<>(common);
      zoom.add("--dump-dom");
      zoom.add(web.url() + "#columns=" + enc(pick) + "&range=2d");
      String zdom = run(zoom);
      checkPickedColumn(zdom, s, pick);
      checkTwoDayRange(zdom, s);

      EmbeddedKafkaExtension.deleteTree(profile);
    } finally {
      runner.close();
      work.join(30_000);
    }
    assertNull(runner.failure());
  }

  /** The header counts the alarms of the latest snapshot; the table lists them as active and the rest of the log as past. */
  private static void checkAlarms(String dom, JsonNode s) {
    int active = s.path("latest").path("alarms").size();
    int logged = s.path("alarm_log").size();
    assertTrue(active > 0 && logged > active, "the demo has active and past alarms: " + active + " of " + logged);
    assertEquals(String.valueOf(active), text(dom, "id=\"alarm-count\""), "the header counts the active alarms");
    assertEquals(String.valueOf(active), text(dom, "id=\"alarms-active-n\""));
    assertEquals(String.valueOf(logged - active), text(dom, "id=\"alarms-past-n\""));
    assertEquals(active, count(dom, "<tr class=\"alarm-(up|down) active\">"), "one active row per raised alarm");
    assertEquals(Math.min(30, logged - active), count(dom, "<tr class=\"alarm-(up|down) past\">"));
    for (JsonNode a : s.path("latest").path("alarms")) {
      Matcher row = Pattern.compile("<tr class=\"alarm-" + a.path("direction").asText() + " active\"><td>" + a.path("kind").asText()
          + "</td><td>" + Pattern.quote(a.path("column").asText("")) + "</td>").matcher(dom);
      assertTrue(row.find(), "active row for " + a);
    }
    assertTrue(dom.contains("id=\"alarm-legend\"") && dom.contains("past, no longer raised"), "a legend for the colours");
  }

  /**
   * Each default weight chart: its line ends at the latest raw weight (read back through the chart's domain), its
   * y ticks are round (a step of 1, 2 or 5 times a power of ten, each tick a multiple of it: common practice), both
   * axes are labelled, and its y-axis holds the band of the points whose se is within 3 times the latest one's.
   */
  private static void checkDefaultWeightCharts(String dom, JsonNode s) {
    int narrower = 0;
    for (JsonNode path : s.path("coefficient_paths")) {
      String col = path.path("column").asText();
      Chart c = Chart.find(dom, "weight", col);
      JsonNode pts = path.path("points");
      JsonNode last = pts.get(pts.size() - 1);
      List<double[]> drawn = c.path("data-weight=\"" + col + "\"");
      assertEquals(pts.size(), drawn.size(), col);
      c.checkY(last.get(1).asDouble(), drawn.get(drawn.size() - 1)[1], col + ": latest weight");
      c.checkY(pts.get(pts.size() / 2).get(1).asDouble(), drawn.get(pts.size() / 2)[1], col + ": a middle weight");
      double seNow = last.get(2).asDouble();
      double lo = Double.POSITIVE_INFINITY, hi = Double.NEGATIVE_INFINITY, allLo = lo, allHi = hi;
      for (JsonNode p : pts) {
        double w = p.get(1).asDouble(), se = p.get(2).asDouble();
        allLo = Math.min(allLo, w - 2 * se);
        allHi = Math.max(allHi, w + 2 * se);
        if (se <= 3 * seNow) {
          lo = Math.min(lo, w - 2 * se);
          hi = Math.max(hi, w + 2 * se);
        }
      }
      assertTrue(c.y0 <= lo && c.y1 >= hi, col + ": the y-axis holds the recent band " + lo + ".." + hi + ": " + c.y0 + ".." + c.y1);
      // the axis widens the band by 4 % a side and rounds out to a tick step (at most 2.5 times a quarter of the
      // widened span, each end): never to more than 2.5 times the band
      assertTrue(c.y1 - c.y0 <= 2.5 * (hi - lo) + 1e-9, col + ": fitted, not padded: " + c.y0 + ".." + c.y1 + " for " + lo + ".." + hi);
      if (allHi - allLo > 1.5 * (c.y1 - c.y0)) {
        narrower++;
      }
      c.checkRoundTicks(col);
      assertTrue(c.body.contains("data-axis=\"x\"") && c.body.contains("data-axis=\"y\">weight per raw unit<"), col + ": labelled axes");
    }
    assertTrue(narrower > 0, "the demo's early bands are wide: at least one chart is fitted to the recent band, narrower than all of it");
  }

  /**
   * The hour-of-day and day-of-week effects: the sum of each cycle's harmonics, Σ a_k sin(2πkφ) + b_k cos(2πkφ)
   * over the raw weights of its sin/cos columns (as CyclicFeature encodes them), checked at each hour and weekday
   * drawn, with the ±2 se band from the per-column standard errors.
   */
  private static void checkCycleEffects(String dom, JsonNode s) {
    Map<String, double[]> w = new java.util.HashMap<>();
    for (JsonNode c : s.path("latest").path("columns")) {
      w.put(c.path("name").asText(), new double[] {c.path("raw_weight").asDouble(), c.path("raw_std_error").asDouble()});
    }
    for (String cycle : List.of("hour_of_day", "day_of_week")) {
      Chart c = Chart.find(dom, "cycle", cycle);
      List<double[]> drawn = c.path("data-effect=\"" + cycle + "\"");
      boolean hours = cycle.equals("hour_of_day");
      assertEquals(hours ? 97 : 7, drawn.size(), cycle);
      List<double[]> band = c.path("data-band=\"cycle-" + cycle + "\"");
      for (int i = 0; i < drawn.size(); i++) {
        double phase = hours ? i / 4.0 / 24 : i / 7.0;
        double effect = 0, var = 0;
        for (int k = 1; k <= 3; k++) {
          double sin = Math.sin(2 * Math.PI * k * phase), cos = Math.cos(2 * Math.PI * k * phase);
          double[] a = w.get(cycle + ".sin" + k), b = w.get(cycle + ".cos" + k);
          effect += a[0] * sin + b[0] * cos;
          var += a[1] * a[1] * sin * sin + b[1] * b[1] * cos * cos;
        }
        c.checkX(hours ? i / 4.0 : i, drawn.get(i)[0], cycle + " x " + i);
        c.checkY(effect, drawn.get(i)[1], cycle + " effect at " + i);
        c.checkY(effect - 2 * Math.sqrt(var), band.get(i)[1], cycle + " band low at " + i);
      }
      c.checkRoundTicks(cycle);
      assertTrue(c.body.contains("data-axis=\"y\">effect (target units)<"), cycle);
    }
  }

  private static void send(KafkaProducer<byte[], byte[]> producer, String topic, List<String> lines) {
    for (String l : lines) {
      producer.send(new ProducerRecord<>(topic, null, l.getBytes(StandardCharsets.UTF_8))); // no key
    }
    producer.flush();
  }

  /**
   * Waits until the runner took {@code records} records and the view read {@code snapshots} snapshots, then until
   * two reads a second apart count the same predictions and snapshots (the page, loaded later, must see the same
   * state as the document checked).
   */
  private static void awaitRead(ExactlyOnceRunner runner, LiveState state, long records, long snapshots) throws Exception {
    KafkaTestSupport.await("the view read the run's snapshots", Duration.ofSeconds(180), () -> {
      if (runner.failure() != null) {
        throw new AssertionError(runner.failure());
      }
      return runner.counters().recordsIn() >= records
          && state.stateJson().path("throughput").path("snapshots_read").asLong() >= snapshots;
    });
    KafkaTestSupport.await("the view stopped reading new records", Duration.ofSeconds(60), () -> {
      JsonNode before = state.stateJson().path("throughput");
      try {
        Thread.sleep(1000);
      } catch (InterruptedException e) {
        Thread.currentThread().interrupt();
        return false;
      }
      JsonNode after = state.stateJson().path("throughput");
      return before.path("predictions_read").equals(after.path("predictions_read"))
          && before.path("snapshots_read").equals(after.path("snapshots_read"));
    });
  }

  /**
   * The series of a feed without Kafka keys: one per hub that sent actuals, named by the echoed hub field; the
   * default is the one with the most predictions kept, served alone, in target-time order. Returns its name.
   */
  private static String checkSeries(JsonNode s, List<GeneratedRecord> fed) {
    JsonNode se = s.path("series");
    assertEquals("[\"hub\"]", se.path("by").toString());
    assertEquals("target_time", se.path("time").asText());
    assertEquals(0, se.path("named_by_key").asLong());
    assertEquals(0, se.path("dropped").asLong());
    assertTrue(!se.path("all").asBoolean());
    java.util.Set<String> hubs = new java.util.TreeSet<>();
    for (GeneratedRecord g : fed) {
      if (g.kind() == GeneratedRecord.Kind.ACTUAL) {
        hubs.add("hub=" + g.hubId());
      }
    }
    java.util.Set<String> names = new java.util.TreeSet<>();
    String chosen = se.path("chosen").asText();
    int most = 0;
    for (JsonNode n : se.path("names")) {
      names.add(n.get(0).asText());
      most = Math.max(most, n.get(1).asInt());
      if (n.get(0).asText().equals(chosen)) {
        assertEquals(n.get(1).asInt(), s.path("predictions").size(), "the chosen series' predictions");
      }
    }
    assertEquals(hubs, names, "one series per hub");
    assertTrue(hubs.size() >= 12, hubs.toString());
    long prev = Long.MIN_VALUE;
    for (JsonNode p : s.path("predictions")) {
      assertEquals(chosen, p.get(0).asText());
      long tm = java.time.Instant.parse(p.get(1).asText()).toEpochMilli();
      assertTrue(tm >= prev, "in time order");
      prev = tm;
    }
    assertEquals(most, s.path("predictions").size(), "the default: the series with the most predictions");
    return chosen;
  }

  private static JsonNode aheadOf(JsonNode s, String entity) {
    for (JsonNode e : s.path("forecasts_ahead").path("entities")) {
      if (e.path("entity").asText().equals(entity)) {
        return e;
      }
    }
    throw new AssertionError("no forecasts ahead for " + entity);
  }

  /**
   * The series selector offers every hub (and all series); the predicted-vs-actual chart draws the chosen hub's
   * actuals and, after its last actual, each forecast ahead (an open circle at its target time and value) with its
   * band, in their own marks (not the settled line, band or dots).
   */
  private static void checkSeriesAndAheadDrawn(String dom, JsonNode s, String chosen) {
    Matcher sel = Pattern.compile("<select id=\"series\">(.*?)</select>", Pattern.DOTALL).matcher(dom);
    assertTrue(sel.find(), "the series selector");
    int series = s.path("series").path("names").size();
    assertEquals(series, count(sel.group(1), "<option value=\"hub=QM-\\d+\">hub=QM-\\d+</option>"), "one choice per hub");
    assertEquals(series + 1, count(sel.group(1), "<option "), "and all series");
    assertTrue(dom.contains("one per hub;"), "the page says how it names the series");
    Chart c = Chart.find(dom, "predictions", null);
    JsonNode e = aheadOf(s, chosen);
    JsonNode fc = e.path("forecasts");
    assertEquals(String.valueOf(fc.size()), attr(c.tag, "<svg[^>]*", "data-ahead"));
    List<double[]> pts = c.circles("forecast-ahead");
    assertEquals(fc.size(), pts.size(), "one open circle per forecast ahead");
    List<double[]> band = c.path("data-band=\"interval-forecast-ahead\"");
    assertEquals(2 * fc.size(), band.size(), "the band ahead: the lows forward, then the highs back");
    for (int i = 0; i < fc.size(); i++) {
      JsonNode f = fc.get(i);
      long tm = java.time.Instant.parse(f.get(0).asText()).toEpochMilli();
      c.checkX(tm, pts.get(i)[0], "forecast " + i + " time");
      c.checkY(f.get(1).asDouble(), pts.get(i)[1], "forecast " + i);
      c.checkY(f.get(2).asDouble(), band.get(i)[1], "low " + i);
      c.checkY(f.get(3).asDouble(), band.get(2 * fc.size() - 1 - i)[1], "high " + i);
    }
    List<double[]> line = c.path("data-series=\"forecast-ahead\"");
    assertEquals(fc.size(), line.size());
    int actuals = 0;
    for (JsonNode p : s.path("predictions")) {
      if (!p.get(2).isNull() && !p.get(5).isNull()) {
        actuals++;
      }
    }
    List<double[]> dots = c.circles("actual");
    assertEquals(actuals, dots.size(), "the chosen hub's actuals");
    double lastActualX = dots.stream().mapToDouble(d -> d[0]).max().orElseThrow();
    assertTrue(pts.stream().allMatch(p -> p[0] > lastActualX), "the forecasts lie after the last actual");
    long lastActual = java.time.Instant.parse(e.path("last_actual").asText()).toEpochMilli();
    Matcher marker = Pattern.compile("<line x1=\"(-?[\\d.]+)\"[^>]*data-marker=\"last-actual\"").matcher(c.body);
    assertTrue(marker.find(), "a marker at the last actual");
    c.checkX(lastActual, Double.parseDouble(marker.group(1)), "the marker at the last actual");
    assertEquals(1, count(c.body, "<path[^>]*data-series=\"predicted\""));
  }

  /**
   * Once the rest of the feed came, the hub has no forecast ahead, and each hour that was ahead and got its actual
   * is drawn as an ordinary actual point.
   */
  private static void checkAheadSettled(String dom, JsonNode s, JsonNode early, String chosen) {
    assertEquals(chosen, s.path("series").path("chosen").asText());
    assertEquals(0, aheadOf(s, chosen).path("forecasts").size(), "the feed's end: nothing ahead");
    Chart c = Chart.find(dom, "predictions", null);
    assertEquals("0", attr(c.tag, "<svg[^>]*", "data-ahead"));
    assertEquals(0, c.circles("forecast-ahead").size());
    JsonNode was = aheadOf(early, chosen).path("forecasts");
    long from = java.time.Instant.parse(was.get(0).get(0).asText()).toEpochMilli();
    long to = java.time.Instant.parse(was.get(was.size() - 1).get(0).asText()).toEpochMilli();
    int settled = 0;
    for (JsonNode p : s.path("predictions")) {
      long tm = java.time.Instant.parse(p.get(1).asText()).toEpochMilli();
      if (tm >= from && tm <= to && !p.get(2).isNull() && !p.get(5).isNull()) {
        settled++;
      }
    }
    assertTrue(settled >= 20, "most of the hours that were ahead got their actual: " + settled + " of " + was.size());
    int drawn = 0;
    for (double[] d : c.circles("actual")) {
      double tm = c.xValue(d[0]);
      if (tm >= from - 60_000 && tm <= to + 60_000) {
        drawn++;
      }
    }
    assertEquals(settled, drawn, "the hours that were ahead, drawn as actuals");
  }

  /** A column picked in the address is drawn (alone) with its path from the state. */
  private static void checkPickedColumn(String dom, JsonNode s, String pick) {
    assertEquals(1, count(dom, "<path[^>]*data-weight=\""), "only the picked column");
    Chart c = Chart.find(dom, "weight", pick);
    JsonNode latest = null;
    for (JsonNode col : s.path("latest").path("columns")) {
      if (col.path("name").asText().equals(pick)) {
        latest = col;
      }
    }
    List<double[]> drawn = c.path("data-weight=\"" + pick + "\"");
    c.checkY(latest.path("raw_weight").asDouble(), drawn.get(drawn.size() - 1)[1], pick + ": latest weight");
    assertTrue(dom.contains("picked: " + pick.replace("&", "&amp;")), "the page says what it shows");
  }

  /** With the last two days chosen, the predictions chart spans them and draws the series' actuals in them. */
  private static void checkTwoDayRange(String dom, JsonNode s) {
    long end = java.time.Instant.parse(s.path("latest").path("event_time").asText()).toEpochMilli();
    Map<String, Integer> counts = new java.util.TreeMap<>();
    for (JsonNode p : s.path("predictions")) {
      counts.merge(p.get(0).asText(), 1, Integer::sum);
      end = Math.max(end, java.time.Instant.parse(p.get(1).asText()).toEpochMilli());
    }
    String series = null;
    for (Map.Entry<String, Integer> e : counts.entrySet()) {
      if (series == null || e.getValue() > counts.get(series)) {
        series = e.getKey();
      }
    }
    long from = end - 2 * 86_400_000L;
    assertEquals(from + " " + end, attr(dom, "<body[^>]*", "data-range"));
    int actuals = 0;
    long first = Long.MAX_VALUE;
    for (JsonNode p : s.path("predictions")) {
      long tm = java.time.Instant.parse(p.get(1).asText()).toEpochMilli();
      if (p.get(0).asText().equals(series) && !p.get(2).isNull() && tm >= from && tm <= end) {
        first = Math.min(first, tm);
        if (!p.get(5).isNull()) {
          actuals++;
        }
      }
    }
    assertTrue(actuals > 20 && actuals < 60, "hourly actuals of two days: " + actuals);
    assertEquals(actuals, count(dom, "<circle[^>]*data-point=\"actual\""), "the actuals of the last two days of " + series);
    Chart c = Chart.find(dom, "predictions", null);
    assertEquals(first, c.x0, 0.5, "the chart starts at the first prediction in the range");
  }

  private static boolean contains(JsonNode arr, String v) {
    for (JsonNode n : arr) {
      if (n.asText().equals(v)) {
        return true;
      }
    }
    return false;
  }

  private static List<String> names(JsonNode arr) {
    List<String> out = new ArrayList<>();
    arr.forEach(n -> out.add(n.asText()));
    return out;
  }

  private static String enc(String v) {
    return java.net.URLEncoder.encode(v, StandardCharsets.UTF_8).replace("+", "%20");
  }

  /** The text of the element whose start tag holds {@code marker}. */
  static String text(String dom, String marker) {
    Matcher m = Pattern.compile(Pattern.quote(marker) + "[^>]*>([^<]*)<").matcher(dom);
    assertTrue(m.find(), marker);
    return m.group(1);
  }

  private static String attr(String dom, String tagRegex, String name) {
    Matcher m = Pattern.compile(tagRegex + " " + name + "=\"([^\"]*)\"").matcher(dom);
    assertTrue(m.find(), name);
    return m.group(1);
  }

  /** One drawn chart: its svg tag's size and stated domain, turning drawn pixels back into values. */
  private static final class Chart {
    final String tag;
    final String body;
    final double w, h, x0, x1, y0, y1, l, r, t, b;

    Chart(String tag, String body) {
      this.tag = tag;
      this.body = body;
      w = num(tag, "width");
      h = num(tag, "height");
      String[] d = attr(tag, "<svg[^>]*", "data-domain").split(" ");
      x0 = Double.parseDouble(d[0]);
      x1 = Double.parseDouble(d[1]);
      y0 = Double.parseDouble(d[2]);
      y1 = Double.parseDouble(d[3]);
      l = Double.parseDouble(d[4]);
      r = Double.parseDouble(d[5]);
      t = Double.parseDouble(d[6]);
      b = Double.parseDouble(d[7]);
    }

    static Chart find(String dom, String kind, String key) {
      Matcher m = Pattern.compile("(<svg[^>]*>)(.*?)</svg>", Pattern.DOTALL).matcher(dom);
      while (m.find()) {
        String tag = m.group(1);
        if (tag.contains("data-chart=\"" + kind + "\"") && (key == null || tag.contains("data-key=\"" + key + "\""))) {
          return new Chart(tag, m.group(2));
        }
      }
      throw new AssertionError("no " + kind + " chart " + key);
    }

    static double num(String tag, String name) {
      Matcher m = Pattern.compile(" " + name + "=\"([\\d.]+)\"").matcher(tag);
      assertTrue(m.find(), tag);
      return Double.parseDouble(m.group(1));
    }

    /** The points of the path whose tag holds {@code marker}, in pixels (a band: its lower edge, then its upper). */
    List<double[]> path(String marker) {
      Matcher m = Pattern.compile("<path d=\"([^\"]*)\"[^>]*" + Pattern.quote(marker)).matcher(body);
      assertTrue(m.find(), "no path " + marker);
      List<double[]> out = new ArrayList<>();
      Matcher p = Pattern.compile("[ML](-?[\\d.]+),(-?[\\d.]+)").matcher(m.group(1));
      while (p.find()) {
        out.add(new double[] {Double.parseDouble(p.group(1)), Double.parseDouble(p.group(2))});
      }
      return out;
    }

    /** The value drawn at pixel row {@code py} is {@code value}, to the 0.1 px the page rounds to. */
    void checkY(double value, double py, String what) {
      double perPx = (y1 - y0) / (h - t - b);
      assertEquals(value, y0 + (h - b - py) * perPx, 0.06 * perPx, what);
    }

    /** The circles of {@code data-point="kind"}, in pixels. */
    List<double[]> circles(String kind) {
      List<double[]> out = new ArrayList<>();
      Matcher m = Pattern.compile("<circle cx=\"(-?[\\d.]+)\" cy=\"(-?[\\d.]+)\"[^>]*data-point=\"" + kind + "\"").matcher(body);
      while (m.find()) {
        out.add(new double[] {Double.parseDouble(m.group(1)), Double.parseDouble(m.group(2))});
      }
      return out;
    }

    double xValue(double px) {
      return x0 + (px - l) * (x1 - x0) / (w - l - r);
    }

    void checkX(double value, double px, String what) {
      double perPx = (x1 - x0) / (w - l - r);
      assertEquals(value, x0 + (px - l) * perPx, 0.06 * perPx, what);
    }

    /** The y ticks: at least two, evenly stepped by 1, 2 or 5 times a power of ten, each a multiple of the step. */
    void checkRoundTicks(String what) {
      Matcher m = Pattern.compile("data-tick=\"y\">([^<]*)<").matcher(body);
      List<Double> ticks = new ArrayList<>();
      while (m.find()) {
        ticks.add(Double.parseDouble(m.group(1)));
      }
      assertTrue(ticks.size() >= 2, what + ": ticks " + ticks);
      double step = ticks.get(1) - ticks.get(0);
      double mant = step / Math.pow(10, Math.floor(Math.log10(step) + 1e-9));
      assertTrue(Math.abs(mant - 1) < 1e-6 || Math.abs(mant - 2) < 1e-6 || Math.abs(mant - 5) < 1e-6, what + ": step " + step);
      for (int i = 0; i < ticks.size(); i++) {
        assertEquals(ticks.get(0) + i * step, ticks.get(i), step * 1e-6, what + ": even ticks " + ticks);
        assertEquals(Math.rint(ticks.get(i) / step), ticks.get(i) / step, 1e-6, what + ": round ticks " + ticks);
      }
      assertEquals(ticks.get(0), y0, step * 1e-6, what + ": the axis starts at a tick");
      assertEquals(ticks.get(ticks.size() - 1), y1, step * 1e-6, what + ": and ends at one");
    }
  }

  static int count(String text, String regex) {
    Matcher m = Pattern.compile(regex).matcher(text);
    int n = 0;
    while (m.find()) {
      n++;
    }
    return n;
  }

  static String run(List<String> cmd) throws Exception {
    Path log = Files.createTempFile("runnel-chromium", ".log");
    Process p = new ProcessBuilder(cmd).redirectError(log.toFile()).start();
    byte[] out = p.getInputStream().readAllBytes();
    if (!p.waitFor(120, TimeUnit.SECONDS)) {
      p.destroyForcibly();
      throw new AssertionError("chromium did not finish within 120 s");
    }
    String err = Files.readString(log);
    Files.deleteIfExists(log);
    assertEquals(0, p.exitValue(), "chromium failed: " + err);
    return new String(out, StandardCharsets.UTF_8);
  }
}
