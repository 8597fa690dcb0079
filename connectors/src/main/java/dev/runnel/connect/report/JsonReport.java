package dev.runnel.connect.report;

import com.fasterxml.jackson.core.JsonEncoding;
import com.fasterxml.jackson.core.JsonGenerator;
import dev.runnel.core.evaluate.BacktestResult;
import dev.runnel.core.evaluate.DieboldMariano;
import dev.runnel.core.evaluate.Metrics;
import java.io.IOException;
import java.nio.file.Path;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;

/**
 * The backtest report as one JSON document (layout in docs/backtesting.md). Non-finite numbers
 * are written as null.
 */
public final class JsonReport {

  /** Version of the document's layout. */
  public static final int FORMAT_VERSION = 2;

  private JsonReport() { }

  /** A global-scope configuration's {@code shares}: made and folded, in all and per partition. */
  private static void shares(JsonGenerator g, BacktestResult.Sharing s) throws IOException {
    g.writeObjectFieldStart("shares");
    g.writeNumberField("made", s.sharesMade());
    g.writeNumberField("folded", s.sharesFolded());
    g.writeArrayFieldStart("partitions");
    for (BacktestResult.PartitionShares p : s.partitions()) {
      g.writeStartObject();
      g.writeNumberField("partition", p.partition());
      g.writeNumberField("made", p.sharesMade());
      g.writeNumberField("folded", p.sharesFolded());
      g.writeEndObject();
    }
    g.writeEndArray();
    g.writeEndObject();
  }

  /** Writes the report to {@code file}. */
  public static void write(BacktestResult r, Map<String, Object> run, Path file) throws IOException {
    try (JsonGenerator g = new com.fasterxml.jackson.core.JsonFactory().createGenerator(file.toFile(), JsonEncoding.UTF8)) {
      g.useDefaultPrettyPrinter();
      g.writeStartObject();
      g.writeNumberField("format_version", FORMAT_VERSION);
      g.writeObjectFieldStart("run");
      for (Map.Entry<String, Object> e : run.entrySet()) {
        g.writeFieldName(e.getKey());
        Object v = e.getValue();
        if (v instanceof Number n) {
          g.writeNumber(n.toString());
        } else if (v instanceof List<?> l) {
          g.writeStartArray();
          for (Object o : l) {
            g.writeString(String.valueOf(o));
          }
          g.writeEndArray();
        } else {
          g.writeString(String.valueOf(v));
        }
      }
      g.writeEndObject();
      g.writeNumberField("records", r.records());
      g.writeNumberField("partitions", r.partitions());
      if (r.segmentField() != null) {
        g.writeStringField("segment_field", r.segmentField());
      }
      g.writeNumberField("period_ms", r.periodMillis());
      g.writeNumberField("alpha", r.alpha());
      g.writeArrayFieldStart("ranking_by_rmse");
      for (BacktestResult.VariantResult v : TextReport.ranking(r)) {
        g.writeString(v.label());
      }
      g.writeEndArray();
      g.writeArrayFieldStart("configurations");
      for (BacktestResult.VariantResult v : r.variants()) {
        g.writeStartObject();
        g.writeStringField("label", v.label());
        g.writeStringField("pipeline", v.pipelineName());
        g.writeNumberField("records", v.records());
        g.writeNumberField("scored", v.scored());
        g.writeNumberField("no_target_records", v.forecasts());
        g.writeNumberField("warming_up", v.warmingUp());
        g.writeNumberField("rejected", v.rejected());
        g.writeObjectFieldStart("rejects_by_reason");
        for (Map.Entry<String, Long> e : new TreeMap<>(v.rejectsByReason()).entrySet()) {
          g.writeNumberField(e.getKey(), e.getValue());
        }
        g.writeEndObject();
        g.writeStringField("scope", v.sharing().scope());
        if (v.sharing().global()) {
          shares(g, v.sharing());
        }
        g.writeFieldName("overall");
        metrics(g, v.overall());
        g.writeArrayFieldStart("segments");
        for (BacktestResult.Segment s : v.segments()) {
          g.writeStartObject();
          g.writeStringField("level", s.level());
          metricFields(g, s.metrics());
          g.writeEndObject();
        }
        g.writeEndArray();
        g.writeArrayFieldStart("by_hour");
        for (int h = 0; h < v.byHour().size(); h++) {
          g.writeStartObject();
          g.writeNumberField("hour", h);
          metricFields(g, v.byHour().get(h));
          g.writeEndObject();
        }
        g.writeEndArray();
        g.writeArrayFieldStart("over_time");
        for (BacktestResult.Bucket b : v.overTime()) {
          g.writeStartObject();
          g.writeStringField("start_local", b.start());
          metricFields(g, b.metrics());
          g.writeEndObject();
        }
        g.writeEndArray();
        g.writeArrayFieldStart("coefficient_paths");
        for (BacktestResult.WeightPath p : v.paths()) {
          g.writeStartObject();
          g.writeStringField("column", p.column());
          g.writeNumberField("partition", p.partition());
          g.writeArrayFieldStart("points");
          for (BacktestResult.PathPoint pt : p.points()) {
            g.writeStartArray();
            g.writeNumber(pt.eventTimeMillis());
            num(g, pt.weight());
            num(g, pt.standardError());
            g.writeEndArray();
          }
          g.writeEndArray();
          g.writeEndObject();
        }
        g.writeEndArray();
        g.writeEndObject();
      }
      g.writeEndArray();
      g.writeArrayFieldStart("comparisons");
      for (BacktestResult.Comparison c : r.comparisons()) {
        g.writeStartObject();
        g.writeStringField("a", c.a());
        g.writeStringField("b", c.b());
        g.writeNumberField("n", c.n());
        test(g, "squared", c.squared(), c.squaredVerdict());
        test(g, "absolute", c.absolute(), c.absoluteVerdict());
        g.writeEndObject();
      }
      g.writeEndArray();
      if (!r.horizons().isEmpty()) {
        horizons(g, r);
      }
      g.writeEndObject();
    }
  }

  /** The simulated forecasts by horizon (written only when --horizons was given). */
  private static void horizons(JsonGenerator g, BacktestResult r) throws IOException {
    BacktestResult.Breakdown first = r.horizons().get(0).variants().get(0).breakdown();
    g.writeNumberField("breakdown_entities", first.topEntities());
    g.writeStringField("breakdown_period", first.period().id());
    g.writeArrayFieldStart("horizons");
    for (BacktestResult.HorizonResult h : r.horizons()) {
      g.writeStartObject();
      g.writeStringField("horizon", java.time.Duration.ofMillis(h.horizonMillis()).toString());
      g.writeNumberField("horizon_ms", h.horizonMillis());
      g.writeArrayFieldStart("configurations");
      for (BacktestResult.HorizonVariant v : h.variants()) {
        g.writeStartObject();
        g.writeStringField("label", v.label());
        metricFields(g, v.metrics());
        g.writeNumberField("warming_up", v.warmingUp());
        g.writeNumberField("not_settled", v.notSettled());
        g.writeNumberField("beyond_lookahead", v.beyondLookahead());
        g.writeNumberField("not_issued", v.notIssued());
        g.writeNumberField("lookahead_ms", v.lookaheadMillis());
        g.writeNumberField("max_held_records", v.maxHeld());
        breakdown(g, v.breakdown());
        g.writeEndObject();
      }
      g.writeEndArray();
      g.writeArrayFieldStart("comparisons");
      for (BacktestResult.HorizonComparison hc : h.comparisons()) {
        BacktestResult.Comparison c = hc.comparison();
        g.writeStartObject();
        g.writeStringField("a", c.a());
        g.writeStringField("b", c.b());
        g.writeNumberField("n", c.n());
        g.writeFieldName("step_ms");
        num(g, hc.stepMillis());
        test(g, "squared", c.squared(), c.squaredVerdict());
        test(g, "absolute", c.absolute(), c.absoluteVerdict());
        g.writeEndObject();
      }
      g.writeEndArray();
      g.writeEndObject();
    }
    g.writeEndArray();
  }

  /**
   * One configuration's breakdown of one horizon: the exact sum of its squared errors, then its
   * settled forecasts by entity, by local hour of day and by period of the target time.
   */
  private static void breakdown(JsonGenerator g, BacktestResult.Breakdown b) throws IOException {
    g.writeFieldName("sum_squared_error");
    num(g, b.total().sumSquaredError());
    g.writeArrayFieldStart("entity_fields");
    for (String f : b.entityFields()) {
      g.writeString(f);
    }
    g.writeEndArray();
    g.writeArrayFieldStart("by_entity");
    for (BacktestResult.EntityGroup e : b.byEntity()) {
      g.writeStartObject();
      if (e.other()) {
        g.writeNullField("entity");
        g.writeNumberField("other_entities", e.entities());
      } else {
        g.writeObjectFieldStart("entity");
        for (int i = 0; i < e.values().size(); i++) {
          g.writeStringField(b.entityFields().get(i), e.values().get(i));
        }
        g.writeEndObject();
      }
      metricFields(g, e.metrics());
      g.writeFieldName("sum_squared_error");
      num(g, e.sumSquaredError());
      g.writeEndObject();
    }
    g.writeEndArray();
    g.writeArrayFieldStart("by_target_hour");
    for (int h = 0; h < b.byHour().size(); h++) {
      g.writeStartObject();
      g.writeNumberField("hour", h);
      metricFields(g, b.byHour().get(h).metrics());
      g.writeFieldName("sum_squared_error");
      num(g, b.byHour().get(h).sumSquaredError());
      g.writeEndObject();
    }
    g.writeEndArray();
    g.writeArrayFieldStart("by_target_period");
    for (BacktestResult.Group p : b.byPeriod()) {
      g.writeStartObject();
      g.writeStringField("period", p.label());
      metricFields(g, p.metrics());
      g.writeFieldName("sum_squared_error");
      num(g, p.sumSquaredError());
      g.writeEndObject();
    }
    g.writeEndArray();
  }

  private static void test(JsonGenerator g, String name, DieboldMariano.Result t, String verdict) throws IOException {
    g.writeObjectFieldStart(name);
    g.writeNumberField("lag", t.lag());
    g.writeNumberField("dm_steps", t.horizon());
    g.writeFieldName("mean_loss_a");
    num(g, t.meanLossA());
    g.writeFieldName("mean_loss_b");
    num(g, t.meanLossB());
    g.writeFieldName("mean_difference");
    num(g, t.meanDifference());
    g.writeFieldName("long_run_variance");
    num(g, t.longRunVariance());
    g.writeFieldName("statistic");
    num(g, t.statistic());
    g.writeFieldName("p_normal");
    num(g, t.pValue());
    g.writeFieldName("statistic_corrected");
    num(g, t.correctedStatistic());
    g.writeFieldName("p");
    num(g, t.correctedPValue());
    g.writeStringField("verdict", verdict);
    g.writeEndObject();
  }

  private static void metrics(JsonGenerator g, Metrics m) throws IOException {
    g.writeStartObject();
    metricFields(g, m);
    g.writeEndObject();
  }

  private static void metricFields(JsonGenerator g, Metrics m) throws IOException {
    g.writeNumberField("count", m.count());
    g.writeFieldName("mae");
    num(g, m.mae());
    g.writeFieldName("rmse");
    num(g, m.rmse());
    g.writeFieldName("bias");
    num(g, m.bias());
    g.writeFieldName("coverage");
    num(g, m.coverage());
  }

  private static void num(JsonGenerator g, double x) throws IOException {
    if (Double.isFinite(x)) {
      g.writeNumber(x);
    } else {
      g.writeNull();
    }
  }
}
