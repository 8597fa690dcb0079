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
import java.util.Iterator;
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
 * days) runs through the exactly-once runner; the view follows the output topics; the JSON
 * endpoint and the {@code drift} table are checked; then the page is loaded in a real headless
 * chromium, which must draw one coefficient path per shown weight and points in the
 * predicted-vs-actual chart; the values drawn are read back through each chart's stated domain and checked
 * against {@code /api/state}: the active and past alarms, the default weight charts (fitted y-axis, round
 * ticks, labelled axes), the hour-of-day and day-of-week effect curves, and, loaded again with
 * {@code #columns=...&range=2d}, a picked column and the last two days. A screenshot is saved as
 * {@code target/live-view.png}, the state as {@code target/live-state.json}.
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
    List<String> lines = new ArrayList<>();
    Map<String, Object> pc = KafkaTestSupport.producerConfig(bs);
    try (KafkaProducer<byte[], byte[]> producer = new KafkaProducer<>(pc, new ByteArraySerializer(), new ByteArraySerializer())) {
      Iterator<GeneratedRecord> it = gen.recordIterator();
      while (it.hasNext()) {
        GeneratedRecord g = it.next();
        lines.add(g.line());
        // keyed by hub, as the demo feed is: the page draws one series per key
        producer.send(new ProducerRecord<>(topic, g.hubId().getBytes(StandardCharsets.UTF_8),
            g.line().getBytes(StandardCharsets.UTF_8)));
      }
      producer.flush();
    }
    PipelineConfig cfg = config(name, topic);
    RunnerSettings rs = RunnerSettings.of(name, topic, bs).withCommitInterval(300, 2000);
    ExactlyOnceRunner runner = new ExactlyOnceRunner(rs, PipelineProcessor.factory(cfg));
    Thread work = new Thread(runner, "liveview-runner");
    work.setDaemon(true);
    work.start();
    try (LiveState state = new LiveState(name, bs, Map.of(), runner::counters).start();
         WebView web = WebView.start("127.0.0.1", 0, false, state)) {
      long expectedSnapshots = 12 * 4 - 1; // a snapshot every 6 h of event time over 12 days (the first period opens the clock)
      KafkaTestSupport.await("the view read the run's snapshots", Duration.ofSeconds(180), () -> {
        if (runner.failure() != null) {
          throw new AssertionError(runner.failure());
        }
        return runner.counters().recordsIn() >= lines.size()
            && state.stateJson().path("throughput").path("snapshots_read").asLong() >= expectedSnapshots - 1;
      });

      // the view has read everything: two reads a second apart count the same predictions and snapshots (the page,
      // loaded later, must see the same state as the document checked here)
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

      // the JSON endpoint over HTTP
      HttpClient http = HttpClient.newHttpClient();
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
      assertEquals(2, s.path("format").asInt());
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
      Path chromium = chromium();
      Assumptions.assumeTrue(chromium != null, "no chromium found at /usr/bin/chromium: install it (apt-get install"
          + " chromium; .ci/run does this) to run the browser check; the JSON endpoint was checked above");
      Path profile = Files.createTempDirectory("runnel-chromium");
      List<String> common = List.of(chromium.toString(), "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
          "--no-first-run", "--disable-background-networking", "--disable-component-update", "--disable-sync",
          "--disable-dev-shm-usage", "--user-data-dir=" + profile, "--virtual-time-budget=15000", "--window-size=1280,1400");
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
      // forecasts ahead: one entry per hub (the Kafka key); the feed ends with the actuals of its last hours, so
      // nothing is ahead at its end, and the first hub's latest actuals are drawn
      JsonNode ahead = s.path("forecasts_ahead").path("entities");
      assertEquals(13, ahead.size(), "one entry per hub");
      assertEquals("QM-01", ahead.get(0).path("entity").asText());
      assertEquals(LiveState.MAX_AHEAD_ACTUALS, ahead.get(0).path("actuals").size());
      assertEquals(LiveState.MAX_AHEAD_ACTUALS, count(dom, "<circle[^>]*data-point=\"ahead-actual\""), "the first hub's actuals drawn");
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

      Path shot = Path.of("target", "live-view.png").toAbsolutePath();
      Files.deleteIfExists(shot);
      List<String> pic = new ArrayList<>(common);
      pic.add("--screenshot=" + shot);
      pic.add(web.url());
      run(pic);
      assertTrue(Files.size(shot) > 10_000, "screenshot written: " + shot);
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
  private static String text(String dom, String marker) {
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
