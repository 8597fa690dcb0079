package dev.runnel.connect.drift;

import com.fasterxml.jackson.databind.JsonNode;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;

/**
 * The settled forecasts' errors by horizon bucket from one coefficient snapshot (its
 * {@code horizon_metrics} and {@code forecast_counts}, docs/formats.md) as text lines: one line per
 * bucket with its count, MAE, RMSE, bias (actual − forecast), interval coverage and recent MAE,
 * overall and optionally per entity. A bucket with fewer than {@link #FEW} settled forecasts is
 * marked {@code few}: its numbers are not to be trusted yet (docs/forecasting.md). Used by
 * {@code drift} and the demo summary; the text is not escaped here (the callers pass it through
 * {@code TerminalText}).
 */
public final class HorizonTable {

  /** Below this many settled forecasts a bucket's numbers are marked {@code few}. */
  public static final int FEW = 30;

  private HorizonTable() { }

  /** Whether the snapshot carries the table (its pipeline has {@code input.forecast}). */
  public static boolean present(JsonNode snapshot) {
    return snapshot != null && snapshot.path("horizon_metrics").isObject();
  }

  /**
   * The table's lines, each starting with {@code indent}; empty when the snapshot has no table.
   *
   * @param snapshot a coefficient snapshot. Not modified.
   * @param entities most entities to list (0: the overall table only); empty buckets of an entity are left out
   */
  public static List<String> lines(JsonNode snapshot, String indent, int entities) {
    List<String> out = new ArrayList<>();
    if (!present(snapshot)) {
      return out;
    }
    JsonNode c = snapshot.path("forecast_counts");
    JsonNode h = snapshot.path("horizon_metrics");
    out.add(indent + String.format(Locale.ROOT,
        "errors of settled forecasts by horizon: %d settled, %d pending, dropped %d (max_pending) + %d (max_actual_delay)",
        c.path("settled").asLong(), c.path("pending").asLong(), c.path("dropped_full").asLong(),
        c.path("dropped_expired").asLong()));
    if (c.has("learned_actuals")) {
      out.add(indent + actualsLine(c));
    }
    out.add(indent + header());
    for (JsonNode b : h.path("buckets")) {
      out.add(indent + row("", b));
    }
    int shown = 0;
    for (JsonNode e : h.path("entities")) {
      if (shown++ >= entities) {
        break;
      }
      StringBuilder name = new StringBuilder();
      e.path("entity").fields().forEachRemaining(f -> name.append(name.length() == 0 ? "" : ",")
          .append(f.getKey()).append('=').append(f.getValue().asText()));
      for (JsonNode b : e.path("buckets")) {
        if (b.path("count").asLong() > 0) {
          out.add(indent + row(name.toString(), b));
        }
      }
    }
    int listed = h.path("entities").size();
    long notKept = h.path("settled_not_kept").asLong();
    if (entities > 0 && (listed > entities || notKept > 0)) {
      out.add(indent + String.format(Locale.ROOT, "(%d of %d kept entities listed; %d settled forecasts of entities beyond"
          + " max_metric_entities %d count in the overall rows only)", Math.min(entities, listed), listed, notKept,
          h.path("max_entities").asInt()));
    }
    return out;
  }

  /**
   * The memory of learned actuals and the actuals turned away, from {@code forecast_counts} (snapshots
   * written before these counts existed lack them, and the line is left out).
   */
  static String actualsLine(JsonNode c) {
    return String.format(Locale.ROOT,
        "actuals: %d keys remembered as learned (%d forgotten early by max_learned_actuals), %d replaced, %d forecasts"
        + " settled again; rejected %d too late, %d repeated, %d corrected",
        c.path("learned_actuals").asLong(), c.path("learned_forgotten_early").asLong(), c.path("replaced_actuals").asLong(),
        c.path("resettled").asLong(), c.path("rejected_too_late").asLong(), c.path("rejected_repeated").asLong(),
        c.path("rejected_corrected").asLong());
  }

  private static String header() {
    return String.format(Locale.ROOT, "%-16s %-14s %7s %9s %9s %9s %8s %10s", "entity", "horizon", "count", "MAE", "RMSE",
        "bias", "coverage", "recent_MAE");
  }

  private static String row(String entity, JsonNode b) {
    String bucket = b.path("up_to").isTextual() ? "up to " + b.path("up_to").asText()
        : "over " + b.path("over").asText("0");
    long n = b.path("count").asLong();
    JsonNode o = b.path("overall");
    String cov = o.path("coverage").isNumber() ? String.format(Locale.ROOT, "%.1f%%", 100 * o.path("coverage").asDouble()) : "-";
    return String.format(Locale.ROOT, "%-16s %-14s %7d %9s %9s %9s %8s %10s%s", entity.isEmpty() ? "(all)" : entity, bucket, n,
        num(o.path("mae")), num(o.path("rmse")), signed(o.path("bias")), cov, num(b.path("recent").path("mae")),
        n > 0 && n < FEW ? "  few" : "");
  }

  private static String num(JsonNode v) {
    return v.isNumber() ? String.format(Locale.ROOT, "%.3f", v.asDouble()) : "-";
  }

  private static String signed(JsonNode v) {
    return v.isNumber() ? String.format(Locale.ROOT, "%+.3f", v.asDouble()) : "-";
  }
}
