package dev.runnel.connect.web;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.runnel.connect.drift.HorizonTableTest;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.OutputJson;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.pipeline.SettledForecast;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Random;
import java.util.TreeMap;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Assumptions;
import org.junit.jupiter.api.Test;

/**
 * The live page's forecasts ahead: a real pipeline step with {@code input.forecast} publishes the
 * predictions of three hubs (200 hours of actuals with hour-ahead requests, then a day of forecasts
 * ahead, some hours issued twice, one for an hour already settled); {@link LiveState} is fed those
 * prediction records (no broker). {@code /api/state} must hold, per hub, the latest 168 actuals and
 * the latest-issued forecast of each hour after the last actual, as a plain computation over the
 * step's own {@link Prediction}s gives them; and the page, loaded in a real headless chromium with
 * one hub chosen in its address, must draw exactly those points and bands (read back from the SVG's
 * coordinates through the chart's scales).
 */
class LiveAheadTest {

  private static final ObjectMapper JSON = new ObjectMapper();
  private static final long H = 3_600_000L;
  private static final long T0 = Instant.parse("2026-06-01T00:00:00Z").toEpochMilli();
  private static final String[] HUBS = {"N1", "N2", "N3"};
  private static final int HOURS = 200;

  /** What the step published, by hub: actuals (target → value) and forecasts (target, issue, predicted, low, high). */
  private static final class Fed {
    final Map<String, TreeMap<Long, Double>> actuals = new TreeMap<>();
    final Map<String, List<double[]>> forecasts = new TreeMap<>();
  }

  @Test
  void theStateKeepsEachEntitysForecastsAheadAndThePageDrawsThem() throws Exception {
    PipelineConfig cfg = ConfigLoader.parse(HorizonTableTest.CONFIG, "ahead.yaml");
    PipelineStep step = new PipelineStep(cfg);
    OutputJson out = new OutputJson(cfg.name(), cfg.model().intervalLevel());
    Fed fed = new Fed();
    try (LiveState state = new LiveState("ahead", "127.0.0.1:9", Map.of(), null, List.of("hub"))) {
      PipelineStep.Sink sink = new PipelineStep.Sink() {
        @Override public void prediction(Prediction p, EventRecord r) {
          String hub = r.text(r.schema().slot("hub"));
          if (!Double.isNaN(p.actual())) {
            fed.actuals.computeIfAbsent(hub, h -> new TreeMap<>()).put(p.targetTimeMillis(), p.actual());
          } else if (!Double.isNaN(p.predicted())) {
            fed.forecasts.computeIfAbsent(hub, h -> new ArrayList<>()).add(new double[] {p.targetTimeMillis(),
                p.issueTimeMillis(), p.predicted(), p.low(), p.high()});
          }
          try {
            state.addPrediction(JSON.readTree(out.prediction(p, r)), hub);
          } catch (java.io.IOException e) {
            throw new AssertionError(e);
          }
        }
        @Override public void reject(RejectReason reason, String detail) { throw new AssertionError(detail); }
        @Override public void snapshotDue() { }
        @Override public void settled(SettledForecast s, EventRecord r) { }
      };
      Random rnd = new Random(11);
      long[] off = {0};
      java.util.function.Consumer<byte[]> feed = b -> step.process(b, 0, b.length, 0L, 0, off[0]++, sink);
      for (int k = 0; k < HOURS; k++) {
        long hour = T0 + k * H;
        for (String hub : HUBS) {
          double temp = 10 + 4 * rnd.nextGaussian();
          feed.accept(line(hub, hour + H, hour, temp, 20 - 0.4 * temp + rnd.nextGaussian()));
          feed.accept(line(hub, hour + H, hour + 2 * H, temp, null));
        }
      }
      long end = T0 + HOURS * H; // the last actual is for hour HOURS - 1, issued at `end`
      for (String hub : HUBS) {
        // a day ahead issued at `end`, then the next three hours issued again half an hour later (they win),
        // and one request for an hour whose actual has come (not ahead)
        for (int k = 0; k < 24; k++) {
          feed.accept(line(hub, end, end + k * H, 10 + rnd.nextGaussian(), null));
        }
        for (int k = 0; k < 3; k++) {
          feed.accept(line(hub, end + H / 2, end + k * H, 12 + rnd.nextGaussian(), null));
        }
        feed.accept(line(hub, end + H / 2, end - 5 * H, 12, null));
      }

      JsonNode ahead = state.stateJson().path("forecasts_ahead");
      assertEquals(HUBS.length, ahead.path("entities").size(), ahead.toString().substring(0, 300));
      for (int i = 0; i < HUBS.length; i++) {
        JsonNode e = ahead.path("entities").get(i);
        String hub = HUBS[i];
        assertEquals("hub=" + hub, e.path("entity").asText());
        TreeMap<Long, Double> acts = fed.actuals.get(hub);
        List<Long> keep = new ArrayList<>(acts.keySet()).subList(acts.size() - LiveState.MAX_AHEAD_ACTUALS, acts.size());
        assertEquals(keep.size(), e.path("actuals").size(), hub);
        for (int j = 0; j < keep.size(); j++) {
          JsonNode a = e.path("actuals").get(j);
          assertEquals(Instant.ofEpochMilli(keep.get(j)).toString(), a.get(0).asText());
          assertEquals(acts.get(keep.get(j)), a.get(1).asDouble(), 0.0);
        }
        assertEquals(Instant.ofEpochMilli(acts.lastKey()).toString(), e.path("last_actual").asText());
        List<double[]> want = expectedAhead(fed.forecasts.get(hub), acts.lastKey());
        assertEquals(24, want.size(), "a day of hours ahead");
        assertEquals(want.size(), e.path("forecasts").size(), hub);
        for (int j = 0; j < want.size(); j++) {
          JsonNode f = e.path("forecasts").get(j);
          double[] w = want.get(j);
          assertEquals(Instant.ofEpochMilli((long) w[0]).toString(), f.get(0).asText());
          assertEquals(w[2], f.get(1).asDouble(), 0.0);
          assertEquals(w[3], f.get(2).asDouble(), 0.0);
          assertEquals(w[4], f.get(3).asDouble(), 0.0);
          assertEquals(Instant.ofEpochMilli((long) w[1]).toString(), f.get(4).asText());
          assertEquals((long) (w[0] - w[1]), f.get(5).asLong());
        }
      }

      Path chromium = LiveViewBrowserTest.chromium();
      Assumptions.assumeTrue(chromium != null, "no chromium found at /usr/bin/chromium: the browser check needs it");
      try (WebView web = WebView.start("127.0.0.1", 0, false, state)) {
        Path profile = Files.createTempDirectory("runnel-chromium");
        List<String> cmd = new ArrayList<>(List.of(chromium.toString(), "--headless", "--no-sandbox", "--disable-gpu",
            "--disable-quic", "--no-first-run", "--disable-background-networking", "--disable-component-update",
            "--disable-sync", "--disable-dev-shm-usage", "--user-data-dir=" + profile, "--virtual-time-budget=5000",
            "--dump-dom", web.url() + "#entity=hub%3DN2"));
        String dom = LiveViewBrowserTest.run(cmd);
        EmbeddedKafkaExtension.deleteTree(profile);
        Matcher section = Pattern.compile("<section id=\"ahead-section\"([^>]*)>(.*?)</section>", Pattern.DOTALL).matcher(dom);
        assertTrue(section.find(), dom.substring(0, Math.min(600, dom.length())));
        assertFalse(section.group(1).contains("hidden"), "the section is shown: " + section.group(1));
        String chart = section.group(2);
        assertEquals(HUBS.length, LiveViewBrowserTest.count(chart, "<option value=\"hub=N\\d\""), "one choice per entity");
        Matcher svg = Pattern.compile("<svg [^>]*data-chart=\"ahead\"[^>]*>").matcher(chart);
        assertTrue(svg.find(), chart);
        Scales sc = new Scales(svg.group());
        TreeMap<Long, Double> acts = fed.actuals.get("N2");
        List<Long> keep = new ArrayList<>(acts.keySet()).subList(acts.size() - LiveState.MAX_AHEAD_ACTUALS, acts.size());
        List<double[]> dots = points(chart, "ahead-actual");
        assertEquals(keep.size(), dots.size(), "one dot per kept actual of hub N2");
        for (int j = 0; j < keep.size(); j++) {
          sc.check(keep.get(j), acts.get(keep.get(j)), dots.get(j), "actual " + j);
        }
        List<double[]> want = expectedAhead(fed.forecasts.get("N2"), acts.lastKey());
        List<double[]> fpts = points(chart, "forecast");
        assertEquals(want.size(), fpts.size(), "one point per forecast ahead of hub N2");
        Matcher band = Pattern.compile("<path d=\"([^\"]*)\"[^>]*data-band=\"interval-ahead\"").matcher(chart);
        assertTrue(band.find(), chart);
        List<double[]> edge = new ArrayList<>();
        Matcher xy = Pattern.compile("[ML](-?[\\d.]+),(-?[\\d.]+)").matcher(band.group(1));
        while (xy.find()) {
          edge.add(new double[] {Double.parseDouble(xy.group(1)), Double.parseDouble(xy.group(2))});
        }
        assertEquals(2 * want.size(), edge.size(), "the band: the lows forward, then the highs back");
        for (int j = 0; j < want.size(); j++) {
          double[] w = want.get(j);
          sc.check((long) w[0], w[2], fpts.get(j), "forecast " + j);
          sc.check((long) w[0], w[3], edge.get(j), "low " + j);
          sc.check((long) w[0], w[4], edge.get(2 * want.size() - 1 - j), "high " + j);
        }
      }
    }

    // without input.forecast (no target_time on the predictions) the state has no forecasts ahead
    try (LiveState plain = new LiveState("plain", "127.0.0.1:9", Map.of(), null)) {
      ObjectNode p = (ObjectNode) JSON.readTree("{\"status\":\"no_target\",\"event_time\":\"2026-06-01T00:00:00Z\","
          + "\"predicted\":3.0,\"low\":1.0,\"high\":5.0}");
      plain.addPrediction(p, "k");
      assertFalse(plain.stateJson().has("forecasts_ahead"));
    }
  }

  /** The caps: entities beyond the cap drop the one updated longest ago; an actual removes the forecasts up to its hour. */
  @Test
  void theCapsHoldAndAnActualRemovesTheForecastsItPasses() throws Exception {
    try (LiveState state = new LiveState("caps", "127.0.0.1:9", Map.of(), null, List.of("hub"))) {
      int cap = LiveState.MAX_AHEAD_ENTITIES;
      for (int i = 0; i < cap; i++) {
        state.addPrediction(forecast("E" + (1000 + i), T0, T0 + 5 * H, 1.0 * i), "k");
      }
      state.addPrediction(forecast("E1000", T0, T0 + 6 * H, 2.0), "k"); // E1000 updated again: now the newest
      for (int i = cap; i < cap + 7; i++) {
        state.addPrediction(forecast("E" + (1000 + i), T0, T0 + 5 * H, 1.0 * i), "k"); // each drops the oldest update
      }
      JsonNode a = state.stateJson().path("forecasts_ahead");
      assertEquals(cap, a.path("entities").size());
      assertEquals(7, a.path("entities_dropped").asLong());
      List<String> names = new ArrayList<>();
      a.path("entities").forEach(e -> names.add(e.path("entity").asText()));
      assertTrue(names.contains("hub=E1000") && !names.contains("hub=E1001") && !names.contains("hub=E1007")
          && names.contains("hub=E1008") && names.contains("hub=E" + (1000 + cap + 6)), names.toString());
      // forecasts for hours 1..MAX+10 ahead of one entity: the nearest MAX are kept; an actual for hour 4 removes 1..4
      for (int k = 1; k <= LiveState.MAX_AHEAD_FORECASTS + 10; k++) {
        state.addPrediction(forecast("Z", T0, T0 + k * H, k), "k");
      }
      ObjectNode act = forecast("Z", T0 + 5 * H, T0 + 4 * H, 0);
      act.put("status", "scored");
      act.put("actual", 7.5);
      state.addPrediction(act, "k");
      JsonNode z = null;
      for (JsonNode e : state.stateJson().path("forecasts_ahead").path("entities")) {
        if (e.path("entity").asText().equals("hub=Z")) {
          z = e;
        }
      }
      assertEquals(LiveState.MAX_AHEAD_FORECASTS - 4, z.path("forecasts").size());
      assertEquals(Instant.ofEpochMilli(T0 + 5 * H).toString(), z.path("forecasts").get(0).get(0).asText());
      assertEquals(Instant.ofEpochMilli(T0 + LiveState.MAX_AHEAD_FORECASTS * H).toString(),
          z.path("forecasts").get(z.path("forecasts").size() - 1).get(0).asText());
      assertEquals(7.5, z.path("actuals").get(0).get(1).asDouble(), 0.0);
      assertEquals(10, state.stateJson().path("forecasts_ahead").path("forecasts_dropped").asLong());
    }
  }

  private static ObjectNode forecast(String hub, long issue, long target, double value) throws Exception {
    return (ObjectNode) JSON.readTree(String.format(Locale.ROOT, "{\"status\":\"no_target\",\"event_time\":\"%s\","
        + "\"issue_time\":\"%s\",\"target_time\":\"%s\",\"horizon_ms\":%d,\"fields\":{\"hub\":\"%s\"},\"predicted\":%s,"
        + "\"low\":%s,\"high\":%s}", Instant.ofEpochMilli(issue), Instant.ofEpochMilli(issue), Instant.ofEpochMilli(target),
        target - issue, hub, value, value - 1, value + 1));
  }

  /** The plain computation: per hour after the last actual, the forecast issued latest (the later one on a tie), by hour. */
  private static List<double[]> expectedAhead(List<double[]> all, long lastActual) {
    TreeMap<Long, double[]> by = new TreeMap<>();
    for (double[] f : all) {
      long target = (long) f[0];
      if (target <= lastActual) {
        continue;
      }
      double[] had = by.get(target);
      if (had == null || f[1] >= had[1]) {
        by.put(target, f);
      }
    }
    return new ArrayList<>(by.values());
  }

  private static byte[] line(String hub, long issued, long hour, double temp, Double sessions) {
    return String.format(Locale.ROOT, "{\"hub\":\"%s\",\"issued_at\":\"%s\",\"hour_start\":\"%s\",\"temperature_c\":%s%s}",
        hub, Instant.ofEpochMilli(issued), Instant.ofEpochMilli(hour), temp,
        sessions == null ? "" : ",\"sessions\":" + sessions).getBytes(StandardCharsets.UTF_8);
  }

  private static List<double[]> points(String chart, String kind) {
    List<double[]> out = new ArrayList<>();
    Matcher m = Pattern.compile("<circle cx=\"(-?[\\d.]+)\" cy=\"(-?[\\d.]+)\"[^>]*data-point=\"" + kind + "\"").matcher(chart);
    while (m.find()) {
      out.add(new double[] {Double.parseDouble(m.group(1)), Double.parseDouble(m.group(2))});
    }
    return out;
  }

  /** The chart's scales, from its size and the domain it states; turns a drawn point back into (time, value). */
  private static final class Scales {
    final double w;
    final double h;
    final double[] d;

    Scales(String svgTag) {
      w = attr(svgTag, "width");
      h = attr(svgTag, "height");
      Matcher m = Pattern.compile("data-domain=\"([^\"]*)\"").matcher(svgTag);
      assertTrue(m.find(), svgTag);
      String[] parts = m.group(1).split(" ");
      d = new double[parts.length];
      for (int i = 0; i < parts.length; i++) {
        d[i] = Double.parseDouble(parts[i]);
      }
    }

    static double attr(String tag, String name) {
      Matcher m = Pattern.compile(" " + name + "=\"([\\d.]+)\"").matcher(tag);
      assertTrue(m.find(), tag);
      return Double.parseDouble(m.group(1));
    }

    /** The point is drawn at (time, value), to the 0.1 px the page rounds to. */
    void check(long time, double value, double[] px, String what) {
      double x0 = d[0], x1 = d[1], y0 = d[2], y1 = d[3], l = d[4], r = d[5], t = d[6], b = d[7];
      double perPxX = (x1 - x0) / (w - l - r);
      double perPxY = (y1 - y0) / (h - t - b);
      double gotTime = x0 + (px[0] - l) * perPxX;
      double gotValue = y0 + (h - b - px[1]) * perPxY;
      assertEquals(time, gotTime, 0.06 * perPxX, what + ": time");
      assertEquals(value, gotValue, 0.06 * perPxY, what + ": value");
    }
  }
}
