package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.core.config.ConfigException;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import java.nio.ByteBuffer;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * The settled forecasts' errors by horizon in the pipeline (docs/forecasting.md, "Errors by
 * horizon"): the snapshot's table equals a plain computation from the settled records the step
 * published, its JSON carries the same numbers and the forecast counts, a configuration without
 * {@code input.forecast} has neither, a version 5 checkpoint restores with empty tables, and a bad
 * {@code horizon_buckets} list is refused naming the key.
 */
class PipelineHorizonMetricsTest {

  static final long H = PipelineForecastTest.H;
  static final ObjectMapper JSON = new ObjectMapper();

  static PipelineConfig config(String buckets, int maxEntities) {
    String yaml = PipelineForecastTest.CONFIG.replace("MAX", "70")
        .replace("max_actual_delay: P2D", "max_actual_delay: P2D\n    horizon_buckets: " + buckets
            + "\n    max_metric_entities: " + maxEntities);
    return ConfigLoader.parse(yaml, "horizons.yaml");
  }

  static int bucket(long[] bounds, long h) {
    int b = 0;
    while (b < bounds.length && h > bounds[b]) {
      b++;
    }
    return b;
  }

  /** Count, MAE, RMSE, bias, coverage of the settled records of one bucket (and hub, or every hub), by a plain loop. */
  static double[] reference(List<PipelineForecastTest.Settled> settled, long[] bounds, int b, String hub) {
    long n = 0;
    double abs = 0;
    double sq = 0;
    double sum = 0;
    long cov = 0;
    for (PipelineForecastTest.Settled s : settled) {
      if (bucket(bounds, s.horizon()) != b || (hub != null && !s.hub().equals(hub))) {
        continue;
      }
      double e = s.actual() - s.forecast();
      n++;
      abs += Math.abs(e);
      sq += e * e;
      sum += e;
      cov += s.actual() >= s.low() && s.actual() <= s.high() ? 1 : 0;
    }
    return new double[] {n, abs / n, Math.sqrt(sq / n), sum / n, (double) cov / n};
  }

  static double[] of(Snapshot.Metrics m) {
    return new double[] {m.count(), m.mae(), m.rmse(), m.bias(), m.coverage()};
  }

  static double[] ofJson(JsonNode b) {
    JsonNode o = b.path("overall");
    return new double[] {b.path("count").asLong(), num(o.path("mae")), num(o.path("rmse")), num(o.path("bias")),
        num(o.path("coverage"))};
  }

  static double num(JsonNode n) {
    return n.isNumber() ? n.asDouble() : Double.NaN;
  }

  @Test
  void theSnapshotTableEqualsAPlainComputationFromTheSettledRecords() throws Exception {
    long[] bounds = {3 * H, 12 * H, 24 * H};
    PipelineConfig cfg = config("[PT3H, PT12H, P1D]", 3);
    PipelineStep step = new PipelineStep(cfg);
    PipelineForecastTest.Collector c = new PipelineForecastTest.Collector(step);
    for (byte[] b : PipelineForecastTest.mixedFeed(21, 150)) {
      c.feed(b);
    }
    List<PipelineForecastTest.Settled> settled = c.settled;
    assertTrue(settled.size() > 200, "settled " + settled.size());
    Snapshot snap = step.snapshot();
    Snapshot.Forecasting f = snap.forecasting();
    assertEquals(Arrays.asList(3 * H, 12 * H, 24 * H, Long.MAX_VALUE), f.bucketBoundsMillis());
    assertEquals(settled.size(), f.settled());
    assertEquals(step.pendingForecasts(), f.pending());
    assertEquals(step.rememberedForecasts(), f.remembered());
    assertEquals(step.droppedForecastsFull(), f.droppedFull());
    assertEquals(step.droppedForecastsExpired(), f.droppedExpired());
    for (int b = 0; b < 4; b++) {
      double[] want = reference(settled, bounds, b, null);
      assertTrue(want[0] > 10, "bucket " + b + " has settled forecasts: " + want[0]);
      assertArrayEquals(want, of(f.overall().get(b)), 1e-9, "overall, bucket " + b);
    }
    // four hubs, a cap of three: the first three to settle are kept, the fourth is counted
    List<String> order = new ArrayList<>();
    for (PipelineForecastTest.Settled s : settled) {
      if (!order.contains(s.hub())) {
        order.add(s.hub());
      }
    }
    assertEquals(4, order.size());
    assertEquals(3, f.entities().size());
    for (int e = 0; e < 3; e++) {
      Snapshot.EntityHorizons eh = f.entities().get(e);
      assertEquals(List.of(order.get(e)), eh.entity());
      for (int b = 0; b < 4; b++) {
        double[] want = reference(settled, bounds, b, order.get(e));
        if (want[0] == 0) {
          assertEquals(0, eh.buckets().get(b).count());
        } else {
          assertArrayEquals(want, of(eh.buckets().get(b)), 1e-9, order.get(e) + ", bucket " + b);
        }
      }
    }
    assertEquals(settled.stream().filter(s -> s.hub().equals(order.get(3))).count(), f.settledNotKept());

    // the JSON carries the same numbers
    JsonNode j = JSON.readTree(c.json.snapshot(snap, 0));
    assertEquals(settled.size(), j.path("forecast_counts").path("settled").asLong());
    assertEquals(step.droppedForecastsExpired(), j.path("forecast_counts").path("dropped_expired").asLong());
    JsonNode hm = j.path("horizon_metrics");
    assertEquals(List.of("PT3H", "PT12H", "P1D"), List.of(hm.path("buckets").get(0).path("up_to").asText(),
        hm.path("buckets").get(1).path("up_to").asText(), hm.path("buckets").get(2).path("up_to").asText()));
    assertTrue(hm.path("buckets").get(3).path("up_to").isNull());
    assertEquals("P1D", hm.path("buckets").get(3).path("over").asText());
    for (int b = 0; b < 4; b++) {
      assertArrayEquals(reference(settled, bounds, b, null), ofJson(hm.path("buckets").get(b)), 1e-9);
    }
    assertEquals(order.get(1), hm.path("entities").get(1).path("entity").path("hub").asText());
    assertArrayEquals(reference(settled, bounds, 2, order.get(1)), ofJson(hm.path("entities").get(1).path("buckets").get(2)), 1e-9);
    assertEquals(f.settledNotKept(), hm.path("settled_not_kept").asLong());
    assertEquals(3, hm.path("max_entities").asInt());
  }

  @Test
  void withoutInputForecastTheSnapshotHasNoForecastFields() throws Exception {
    PipelineConfig plain = ConfigLoader.parse(PipelineForecastTest.CONFIG.replaceAll("(?s)  forecast:.*?P2D\n", ""), "plain.yaml");
    PipelineStep step = new PipelineStep(plain);
    PipelineForecastTest.Collector c = new PipelineForecastTest.Collector(step);
    for (byte[] b : PipelineForecastTest.mixedFeed(5, 20)) {
      c.feed(b);
    }
    assertNull(step.snapshot().forecasting());
    JsonNode j = JSON.readTree(c.json.snapshot(step.snapshot(), 0));
    assertFalse(j.has("forecast_counts") || j.has("horizon_metrics"), j.toString());
  }

  @Test
  void aVersion5CheckpointRestoresWithEmptyHorizonTablesAndItsPendingForecasts() throws Exception {
    PipelineConfig cfg = config("[PT6H, P1D]", 10);
    List<byte[]> feed = PipelineForecastTest.mixedFeed(9, 60);
    PipelineStep a = new PipelineStep(cfg);
    PipelineForecastTest.run(a, feed, 0, feed.size());
    assertTrue(a.settledForecasts() > 0 && a.pendingForecasts() > 0);
    byte[] v6 = a.checkpoint();
    assertEquals(6, ByteBuffer.wrap(v6, 4, 4).getInt());
    // a version 5 checkpoint is a version 6 one without the horizon tables at its end
    int tail = HorizonMetricsTest.bytes(a.horizonMetrics()).length;
    byte[] v5 = Arrays.copyOf(v6, v6.length - tail);
    ByteBuffer.wrap(v5).putInt(4, 5);
    PipelineStep b = new PipelineStep(cfg);
    b.restore(v5);
    assertEquals(a.pendingForecasts(), b.pendingForecasts());
    assertEquals(a.settledForecasts(), b.settledForecasts());
    assertEquals(0, b.snapshot().forecasting().overall().get(0).count());
    assertEquals(0, b.snapshot().forecasting().entities().size());
    assertArrayEquals(HorizonMetricsTest.bytes(new PipelineStep(cfg).horizonMetrics()), HorizonMetricsTest.bytes(b.horizonMetrics()));
    // and the same checkpoint as version 6 keeps them
    PipelineStep c = new PipelineStep(cfg);
    c.restore(v6);
    assertEquals(a.snapshot().forecasting(), c.snapshot().forecasting());
  }

  @Test
  void aBadBucketListIsRefusedNamingTheKeyAndTheEntry() {
    ConfigException e = assertThrows(ConfigException.class, () -> config("[PT6H, PT1H]", 10));
    assertTrue(e.getMessage().startsWith("input.forecast.horizon_buckets[1]: ") && e.getMessage().contains("not larger"), e.getMessage());
    e = assertThrows(ConfigException.class, () -> config("[PT1H, PT1H]", 10));
    assertTrue(e.getMessage().startsWith("input.forecast.horizon_buckets[1]: ") && e.getMessage().contains("repeats"), e.getMessage());
    e = assertThrows(ConfigException.class, () -> config("[PT0S, PT1H]", 10));
    assertTrue(e.getMessage().startsWith("input.forecast.horizon_buckets[0]: "), e.getMessage());
    e = assertThrows(ConfigException.class, () -> config("[PT1H, -PT2H]", 10));
    assertTrue(e.getMessage().startsWith("input.forecast.horizon_buckets[1]: "), e.getMessage());
    e = assertThrows(ConfigException.class, () -> config("[PT1H, soon]", 10));
    assertTrue(e.getMessage().startsWith("input.forecast.horizon_buckets[1]: "), e.getMessage());
    e = assertThrows(ConfigException.class, () -> config("[]", 10));
    assertTrue(e.getMessage().startsWith("input.forecast.horizon_buckets: "), e.getMessage());
    e = assertThrows(ConfigException.class, () -> config("PT1H", 10));
    assertTrue(e.getMessage().startsWith("input.forecast.horizon_buckets: ") && e.getMessage().contains("[PT1H, PT6H, P1D, P7D]"),
        e.getMessage());
    e = assertThrows(ConfigException.class, () -> config("[PT1H]", -1));
    assertTrue(e.getMessage().startsWith("input.forecast.max_metric_entities: "), e.getMessage());
    // the defaults
    PipelineConfig d = PipelineForecastTest.config(10);
    assertEquals(List.of(H, 6 * H, 24 * H, 168 * H), d.input().forecast().horizonBucketsMillis());
    assertEquals(100, d.input().forecast().maxMetricEntities());
    assertEquals(List.of(90 * 60_000L), config("[PT1H30M]", 0).input().forecast().horizonBucketsMillis());
  }
}
