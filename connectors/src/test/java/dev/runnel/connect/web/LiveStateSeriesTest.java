package dev.runnel.connect.web;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.OutputJson;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.pipeline.SettledForecast;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.TreeMap;
import org.junit.jupiter.api.Test;

/**
 * The series of the predicted-vs-actual chart in {@code /api/state} (what the page reads), no broker: a real
 * pipeline step with {@code input.forecast} and {@code outputs.echo_fields: [hub]} publishes the predictions of
 * three hubs, all read with an empty Kafka key (a feed without keys); {@link LiveState} must name one series per
 * hub, serve each hub's own scored predictions in time order (late actuals included), keep the forecasts ahead of
 * the same names, and once an hour's actual comes, serve that hour as an ordinary prediction and no longer ahead.
 * The caps: at most {@link LiveState#MAX_SERIES} series (the one updated longest ago dropped and counted, the
 * default then all series) and {@link LiveState#MAX_SERIES_PREDICTIONS} predictions per series.
 */
class LiveStateSeriesTest {

  private static final ObjectMapper JSON = new ObjectMapper();
  private static final long H = 3_600_000L;
  private static final long T0 = Instant.parse("2026-06-01T00:00:00Z").toEpochMilli();

  static final String CONFIG = """
      name: series
      input:
        fields: {hub: text, rainy: flag, temperature_c: number, sessions: number, issued_at: time, hour_start: time}
        event_time: {field: issued_at, format: iso8601}
        forecast:
          entity_fields: [hub]
          target_time_field: hour_start
      target: sessions
      features:
        - {kind: onehot, field: hub}
        - {kind: numeric, field: temperature_c}
      model: {prior_variance: 10}
      outputs: {snapshot_every_records: 1000000, echo_fields: [hub]}
      """;

  /** The step's scored predictions per hub: target time → {predicted, low, high, actual}, the last published for that hour. */
  private final Map<String, TreeMap<Long, double[]>> scored = new TreeMap<>();

  @Test
  void oneSeriesPerEntityWithoutKafkaKeysAndForecastsAheadSettleIntoIt() throws Exception {
    PipelineConfig cfg = ConfigLoader.parse(CONFIG, "series.yaml");
    assertEquals(List.of("hub"), LiveState.seriesFields(cfg), "with input.forecast: its entity fields");
    PipelineStep step = new PipelineStep(cfg);
    OutputJson out = OutputJson.of(cfg);
    try (LiveState state = new LiveState("series", "127.0.0.1:9", Map.of(), null, LiveState.seriesFields(cfg))) {
      PipelineStep.Sink sink = sink(state, out);
      long[] off = {0};
      java.util.function.Consumer<byte[]> feed = b -> step.process(b, 0, b.length, 0L, 0, off[0]++, sink);
      String[] hubs = {"A", "B", "C"};
      int[] hours = {40, 30, 20}; // unequal: the default series is the one with the most predictions
      for (int k = 0; k < 40; k++) {
        for (int i = 0; i < hubs.length; i++) {
          if (k < hours[i] && !(hubs[i].equals("B") && k == 5)) {
            feed.accept(line(hubs[i], T0 + (k + 1) * H, T0 + k * H, 10 + k % 7, 20.0 - k % 5));
          }
        }
      }
      feed.accept(line("B", T0 + 31 * H, T0 + 5 * H, 12, 17.0)); // B's hour 5 comes late, after its hour 29
      // forecasts ahead of A's last actual (hour 39): hours 40..45, issued at its arrival
      for (int k = 40; k < 46; k++) {
        feed.accept(line("A", T0 + 40 * H, T0 + k * H, 11, null));
      }

      JsonNode s = state.stateJson();
      JsonNode se = s.path("series");
      assertEquals("[\"hub\"]", se.path("by").toString());
      assertEquals("target_time", se.path("time").asText());
      String names = "[[\"hub=A\"," + scored.get("A").size() + "],[\"hub=B\"," + scored.get("B").size() + "],[\"hub=C\","
          + scored.get("C").size() + "]]";
      assertEquals(names, se.path("names").toString(), "one series per hub, no key needed");
      assertTrue(scored.get("A").size() > scored.get("B").size() + 5 && scored.get("C").size() > 10, names);
      assertEquals(0, se.path("named_by_key").asLong());
      assertFalse(se.path("all").asBoolean());
      assertEquals("hub=A", se.path("chosen").asText(), "the default: the most predictions kept");
      checkRows(s.path("predictions"), "hub=A", scored.get("A"));

      JsonNode b = state.stateJson(List.of(), "hub=B", false);
      assertEquals("hub=B", b.path("series").path("chosen").asText());
      assertTrue(scored.get("B").containsKey(T0 + 5 * H), "B's late hour 5 was scored");
      checkRows(b.path("predictions"), "hub=B", scored.get("B")); // hour 5 in its place, though read last

      JsonNode all = state.stateJson(List.of(), null, true);
      assertTrue(all.path("series").path("all").asBoolean());
      assertEquals(scored.get("A").size() + scored.get("B").size() + scored.get("C").size(), all.path("predictions").size(), "all series");
      JsonNode unknown = state.stateJson(List.of(), "hub=Z", false);
      assertEquals("hub=A", unknown.path("series").path("chosen").asText(), "a series not kept: the default");

      // the forecasts ahead are kept under the same name as the series
      JsonNode a = entity(s, "hub=A");
      assertEquals(6, a.path("forecasts").size());
      assertEquals(Instant.ofEpochMilli(T0 + 40 * H).toString(), a.path("forecasts").get(0).get(0).asText());
      // hour 40's actual comes: it leaves the forecasts ahead and is drawn as an ordinary prediction of hub=A
      feed.accept(line("A", T0 + 41 * H, T0 + 40 * H, 11, 19.0));
      JsonNode s2 = state.stateJson(List.of(), "hub=A", false);
      JsonNode a2 = entity(s2, "hub=A");
      assertEquals(5, a2.path("forecasts").size());
      assertEquals(Instant.ofEpochMilli(T0 + 41 * H).toString(), a2.path("forecasts").get(0).get(0).asText());
      JsonNode rows = s2.path("predictions");
      JsonNode lastRow = rows.get(rows.size() - 1);
      assertEquals(Instant.ofEpochMilli(T0 + 40 * H).toString(), lastRow.get(1).asText());
      assertEquals(19.0, lastRow.get(5).asDouble(), 0.0);
      checkRows(rows, "hub=A", scored.get("A"));
    }
  }

  @Test
  void theCapsHoldAndAFeedWithoutEntityFieldsIsNamedByItsKey() throws Exception {
    try (LiveState state = new LiveState("caps", "127.0.0.1:9", Map.of(), null, List.of("hub"))) {
      int cap = LiveState.MAX_SERIES;
      for (int i = 0; i < cap; i++) {
        state.addPrediction(scoredRecord("E" + (1000 + i), T0 + i * H, 1.0 * i), "");
      }
      state.addPrediction(scoredRecord("E1000", T0 + 100 * H, 2.0), ""); // E1000 updated again: now the newest
      assertFalse(state.stateJson().path("series").path("all").asBoolean(), "no series dropped yet: one is chosen");
      for (int i = cap; i < cap + 3; i++) {
        state.addPrediction(scoredRecord("E" + (1000 + i), T0 + i * H, 1.0 * i), ""); // each drops the oldest update
      }
      JsonNode se = state.stateJson().path("series");
      assertEquals(cap, se.path("names").size());
      assertEquals(3, se.path("dropped").asLong());
      List<String> names = new ArrayList<>();
      se.path("names").forEach(n -> names.add(n.get(0).asText()));
      assertTrue(names.contains("hub=E1000") && !names.contains("hub=E1001") && !names.contains("hub=E1003")
          && names.contains("hub=E1004") && names.contains("hub=E" + (1000 + cap + 2)), names.toString());
      assertTrue(se.path("all").asBoolean(), "series were dropped: the default is all series");
      assertEquals(cap + 4, state.stateJson().path("predictions").size());

      int n = LiveState.MAX_SERIES_PREDICTIONS + 7;
      for (int k = 0; k < n; k++) {
        state.addPrediction(scoredRecord("E1000", T0 + (200 + k) * H, k), "");
      }
      JsonNode e = state.stateJson(List.of(), "hub=E1000", false).path("predictions");
      assertEquals(LiveState.MAX_SERIES_PREDICTIONS, e.size(), "the latest per series");
      assertEquals(Instant.ofEpochMilli(T0 + (200 + n - LiveState.MAX_SERIES_PREDICTIONS) * H).toString(), e.get(0).get(1).asText());
      assertEquals(n - 1.0, e.get(e.size() - 1).get(5).asDouble(), 0.0);
      assertEquals(cap + 4 + n, state.stateJson(List.of(), null, true).path("predictions").size(), "all series");
      for (int k = 0; k < LiveState.MAX_PREDICTIONS; k++) {
        state.addPrediction(scoredRecord("E1001", T0 + (5000 + k) * H, k), "");
      }
      JsonNode allRows = state.stateJson(List.of(), null, true).path("predictions");
      assertEquals(LiveState.MAX_PREDICTIONS, allRows.size(), "all series: the latest read");
      assertEquals("hub=E1001", allRows.get(0).get(0).asText());
    }
    // series fields configured but not echoed: the Kafka key names the series, and the view says how many
    try (LiveState state = new LiveState("keys", "127.0.0.1:9", Map.of(), null, List.of("hub"))) {
      JsonNode r = JSON.readTree("{\"status\":\"scored\",\"event_time\":\"2026-06-01T00:00:00Z\",\"predicted\":1,\"actual\":2}");
      state.addPrediction(r, "K1");
      state.addPrediction(r, "K2");
      state.addPrediction(r, "K2");
      JsonNode se = state.stateJson().path("series");
      assertEquals("[[\"K1\",1],[\"K2\",2]]", se.path("names").toString());
      assertEquals(3, se.path("named_by_key").asLong());
      assertEquals("K2", se.path("chosen").asText());
      assertEquals("event_time", se.path("time").asText());
    }
  }

  @Test
  void theSeriesFieldsComeFromTheConfiguration() throws Exception {
    String plain = CONFIG.replace("  forecast:\n    entity_fields: [hub]\n    target_time_field: hour_start\n", "");
    assertTrue(!plain.contains("forecast"), plain);
    PipelineConfig echoFlagFirst = ConfigLoader.parse(plain.replace("echo_fields: [hub]", "echo_fields: [rainy, hub]"), "s.yaml");
    assertEquals(List.of("hub"), LiveState.seriesFields(echoFlagFirst), "without forecasting: the first echoed text field");
    PipelineConfig noEcho = ConfigLoader.parse(plain.replace("echo_fields: [hub]", "echo_fields: []"), "s.yaml");
    assertEquals(List.of(), LiveState.seriesFields(noEcho), "nothing echoed: the Kafka key");
  }

  /** The page's query: the series name URL-decoded (an entity name holds '=' and ','), all series only with 1. */
  @Test
  void theQueryNamesTheSeries() {
    assertEquals("hub=QM-03,zone=n w", WebView.param("columns=a%2Cb&series=hub%3DQM-03%2Czone%3Dn%20w", "series"));
    assertEquals("", WebView.param("series=", "series"), "the empty Kafka key");
    assertEquals(null, WebView.param("columns=a", "series"));
    assertEquals(null, WebView.param(null, "series"));
    assertEquals("1", WebView.param("series=x&all_series=1", "all_series"));
    assertEquals(List.of("a,b"), WebView.pickedColumns("columns=a%2Cb&series=hub%3DQM-03"));
  }

  private PipelineStep.Sink sink(LiveState state, OutputJson out) {
    return new PipelineStep.Sink() {
      @Override public void prediction(Prediction p, EventRecord r) {
        String hub = r.text(r.schema().slot("hub"));
        if (p.status() == Prediction.Status.SCORED) {
          scored.computeIfAbsent(hub, h -> new TreeMap<>()).put(p.targetTimeMillis(),
              new double[] {p.predicted(), p.low(), p.high(), p.actual()});
        }
        try {
          state.addPrediction(JSON.readTree(out.prediction(p, r)), ""); // no Kafka key
        } catch (java.io.IOException e) {
          throw new AssertionError(e);
        }
      }
      @Override public void reject(RejectReason reason, String detail) { throw new AssertionError(detail); }
      @Override public void snapshotDue() { }
      @Override public void settled(SettledForecast s, EventRecord r) { }
    };
  }

  /** The rows are the series' own: one per scored hour, at its target time, in time order, with the step's numbers. */
  private static void checkRows(JsonNode rows, String name, TreeMap<Long, double[]> want) {
    assertEquals(want.size(), rows.size(), name);
    int i = 0;
    for (Map.Entry<Long, double[]> w : want.entrySet()) {
      JsonNode r = rows.get(i++);
      assertEquals(name, r.get(0).asText());
      assertEquals(Instant.ofEpochMilli(w.getKey()).toString(), r.get(1).asText(), name + " row " + i);
      for (int j = 0; j < 4; j++) {
        assertEquals(w.getValue()[j], r.get(2 + j).asDouble(), 0.0, name + " row " + i + " value " + j);
      }
    }
  }

  private static JsonNode entity(JsonNode s, String name) {
    for (JsonNode e : s.path("forecasts_ahead").path("entities")) {
      if (e.path("entity").asText().equals(name)) {
        return e;
      }
    }
    throw new AssertionError("no entity " + name + " in " + s.path("forecasts_ahead"));
  }

  private static JsonNode scoredRecord(String hub, long time, double actual) throws Exception {
    return JSON.readTree(String.format(Locale.ROOT, "{\"status\":\"scored\",\"event_time\":\"%s\",\"fields\":{\"hub\":\"%s\"},"
        + "\"predicted\":%s,\"low\":%s,\"high\":%s,\"actual\":%s}", Instant.ofEpochMilli(time), hub, actual, actual - 1,
        actual + 1, actual));
  }

  private static byte[] line(String hub, long issued, long hour, double temp, Double sessions) {
    return String.format(Locale.ROOT, "{\"hub\":\"%s\",\"issued_at\":\"%s\",\"hour_start\":\"%s\",\"temperature_c\":%s%s}",
        hub, Instant.ofEpochMilli(issued), Instant.ofEpochMilli(hour), temp,
        sessions == null ? "" : ",\"sessions\":" + sessions).getBytes(StandardCharsets.UTF_8);
  }
}
