package dev.runnel.connect.demo;

import com.fasterxml.jackson.databind.JsonNode;
import java.time.Instant;
import java.util.List;

/**
 * Errors of settled forecasts in one horizon bucket, computed from {@code <name>.settled} records
 * (docs/formats.md) as any consumer would. Kept small on purpose: when the snapshots carry metrics by
 * horizon, the demo summary reads those instead.
 *
 * @param label the bucket's name for the summary
 * @param count settled forecasts in the bucket
 * @param mae mean absolute error (actual − forecast), NaN when empty
 * @param rmse root mean square error, NaN when empty
 * @param bias mean error, NaN when empty
 * @param coverage share of actuals inside the forecast's interval, NaN when empty
 */
public record HorizonErrors(String label, long count, double mae, double rmse, double bias, double coverage) {

  /**
   * The settled forecasts with {@code minMs < horizon_ms <= maxMs}, issued at or after {@code from}.
   * @param settled records of {@code <name>.settled}. Not modified.
   */
  public static HorizonErrors of(String label, List<JsonNode> settled, long minMs, long maxMs, Instant from) {
    long n = 0;
    long covered = 0;
    double abs = 0;
    double sq = 0;
    double sum = 0;
    for (JsonNode s : settled) {
      long h = s.path("horizon_ms").asLong(Long.MIN_VALUE);
      // a forecast settled again against a corrected actual is counted once, at its first settling,
      // as the snapshots' errors by horizon count it
      if (h <= minMs || h > maxMs || !s.path("error").isNumber() || s.path("correction").asBoolean(false)) {
        continue;
      }
      if (Instant.parse(s.path("issue_time").asText()).isBefore(from)) {
        continue;
      }
      double e = s.path("error").asDouble();
      n++;
      abs += Math.abs(e);
      sq += e * e;
      sum += e;
      covered += s.path("covered").asBoolean() ? 1 : 0;
    }
    return n == 0 ? new HorizonErrors(label, 0, Double.NaN, Double.NaN, Double.NaN, Double.NaN)
        : new HorizonErrors(label, n, abs / n, Math.sqrt(sq / n), sum / n, (double) covered / n);
  }
}
