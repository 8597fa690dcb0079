package dev.runnel.connect.drift;

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
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The per-horizon table that {@code drift} and the demo summary print, read from a snapshot that a
 * real pipeline step with {@code input.forecast} published (so the format the connectors read is the
 * one stream-core writes): its rows agree with a plain computation over the settled forecasts,
 * thin buckets are marked, entities beyond the cap are said, and a snapshot without the table
 * prints nothing more.
 */
public class HorizonTableTest {

  static final ObjectMapper JSON = new ObjectMapper();
  static final long H = 3_600_000L;
  static final long T0 = Instant.parse("2026-06-01T00:00:00Z").toEpochMilli();

  public static final String CONFIG = """
      name: horizon-table
      input:
        fields: {hub: text, temperature_c: number, sessions: number, issued_at: time, hour_start: time}
        event_time: {field: issued_at, format: iso8601}
        forecast:
          entity_fields: [hub]
          target_time_field: hour_start
          horizon_buckets: [PT2H, P1D]
          max_metric_entities: 2
      target: sessions
      features:
        - {kind: onehot, field: hub}
        - {kind: numeric, field: temperature_c}
      model: {prior_variance: 10}
      outputs: {snapshot_every_records: 1000000}
      """;

  /** A step's latest snapshot as published, and the settled forecasts as (hub, horizon ms, error). */
  public record Run(JsonNode snapshot, List<Object[]> settled, PipelineStep step) { }

  static byte[] line(String hub, long issued, long hour, double temp, Double sessions) {
    return String.format(Locale.ROOT, "{\"hub\":\"%s\",\"issued_at\":\"%s\",\"hour_start\":\"%s\",\"temperature_c\":%s%s}",
        hub, Instant.ofEpochMilli(issued), Instant.ofEpochMilli(hour), temp,
        sessions == null ? "" : ",\"sessions\":" + sessions).getBytes(StandardCharsets.UTF_8);
  }

  public static Run run(String config) throws Exception {
    PipelineConfig cfg = ConfigLoader.parse(config, "horizon-table.yaml");
    PipelineStep step = new PipelineStep(cfg);
    List<Object[]> settled = new ArrayList<>();
    PipelineStep.Sink sink = new PipelineStep.Sink() {
      @Override public void prediction(Prediction p, EventRecord r) { }
      @Override public void reject(RejectReason reason, String detail) { throw new AssertionError(detail); }
      @Override public void snapshotDue() { }
      @Override public void settled(SettledForecast s, EventRecord r) {
        settled.add(new Object[] {r.text(r.schema().slot("hub")), s.horizonMillis(), s.error()});
      }
    };
    Random rnd = new Random(5);
    String[] hubs = {"N1", "N2", "N3"};
    long off = 0;
    for (int k = 0; k < 120; k++) {
      long hour = T0 + k * H;
      for (String hub : hubs) {
        double temp = 10 + 4 * rnd.nextGaussian();
        byte[] actual = line(hub, hour + H, hour, temp, 20 - 0.4 * temp + rnd.nextGaussian());
        step.process(actual, 0, actual.length, 0L, 0, off++, sink);
        // one request an hour ahead and one a day ahead (on the P1D bound exactly)
        byte[] soon = line(hub, hour + H, hour + 2 * H, temp, null);
        byte[] day = line(hub, hour + H, hour + 25 * H, temp, null);
        step.process(soon, 0, soon.length, 0L, 0, off++, sink);
        step.process(day, 0, day.length, 0L, 0, off++, sink);
      }
    }
    OutputJson out = new OutputJson(cfg.name(), cfg.model().intervalLevel());
    return new Run(JSON.readTree(out.snapshot(step.snapshot(), 0)), settled, step);
  }

  @Test
  void theRowsAgreeWithAPlainComputationOverTheSettledForecasts() throws Exception {
    Run r = run(CONFIG);
    List<String> lines = HorizonTable.lines(r.snapshot(), "", 10);
    String text = String.join("\n", lines);
    // the plain computation: count and MAE of every settled forecast with horizon ≤ 2 h, and in (2 h, 1 d]
    long[] n = new long[3];
    double[] abs = new double[3];
    long n3 = 0;
    for (Object[] s : r.settled()) {
      long h = (Long) s[1];
      int b = h <= 2 * H ? 0 : h <= 24 * H ? 1 : 2;
      n[b]++;
      abs[b] += Math.abs((Double) s[2]);
      if (s[0].equals("N3")) {
        n3++;
      }
    }
    assertTrue(n[0] > 100 && n[1] > 100 && n[2] == 0, "the feed fills the first two buckets: " + text);
    assertTrue(text.contains(String.format(Locale.ROOT, "%-16s %-14s %7d %9.3f", "(all)", "up to PT2H", n[0], abs[0] / n[0])), text);
    assertTrue(text.contains(String.format(Locale.ROOT, "%-16s %-14s %7d %9.3f", "(all)", "up to P1D", n[1], abs[1] / n[1])), text);
    assertTrue(text.contains(String.format(Locale.ROOT, "%-16s %-14s %7d", "(all)", "over P1D", 0)), text);
    assertTrue(text.contains("hub=N1") && text.contains("hub=N2") && !text.contains("hub=N3"), "a cap of two: " + text);
    assertTrue(text.contains(n3 + " settled forecasts of entities beyond max_metric_entities 2"), text);
    assertTrue(lines.get(0).contains(r.settled().size() + " settled"), lines.get(0));
    assertFalse(text.contains(" few"), "every non-empty bucket has more than " + HorizonTable.FEW + ": " + text);
  }

  @Test
  void aThinBucketIsMarkedAndDriftPrintsTheOverallTableUnderItsLine() throws Exception {
    JsonNode s = run(CONFIG).snapshot();
    ((com.fasterxml.jackson.databind.node.ObjectNode) s.path("horizon_metrics").path("buckets").get(1)).put("count", 12);
    assertTrue(HorizonTable.lines(s, "", 0).stream().anyMatch(l -> l.contains("up to P1D") && l.endsWith("  few")));
    String printed = new DriftTable("pipeline", 3, null, null).take(s);
    String[] parts = printed.split("\n");
    assertEquals(3 + 3 + 1, parts.length, printed); // the snapshot's line, the counts, the actuals, the header, three buckets
    assertTrue(parts[3].trim().startsWith("entity") && parts[4].contains("up to PT2H") && !printed.contains("hub=N1"), printed);
    // the memory of learned actuals: every actual of the feed is a distinct key, none turned away
    JsonNode c = s.path("forecast_counts");
    assertTrue(c.path("learned_actuals").asLong() > 0, c.toString());
    assertEquals(String.format(Locale.ROOT, "actuals: %d keys remembered as learned (0 forgotten early by max_learned_actuals),"
        + " 0 replaced, 0 forecasts settled again; rejected 0 too late, 0 repeated, 0 corrected",
        c.path("learned_actuals").asLong()), parts[2].trim(), printed);
    // a snapshot written before these counts: the line is left out
    ((com.fasterxml.jackson.databind.node.ObjectNode) c).remove("learned_actuals");
    assertEquals(2 + 3 + 1, new DriftTable("pipeline", 3, null, null).take(s).split("\n").length);
    // a snapshot without input.forecast: one line, as before
    ((com.fasterxml.jackson.databind.node.ObjectNode) s).remove(List.of("horizon_metrics", "forecast_counts"));
    assertEquals(1, new DriftTable("pipeline", 3, null, null).take(s).split("\n").length);
    assertTrue(HorizonTable.lines(s, "", 5).isEmpty());
  }
}
