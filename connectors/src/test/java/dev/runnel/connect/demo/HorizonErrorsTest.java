package dev.runnel.connect.demo;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/** The demo summary's grouping of settled forecasts by horizon, on hand-worked records (no broker). */
class HorizonErrorsTest {

  private static JsonNode settled(String issued, long horizonHours, double error, boolean covered) throws Exception {
    return new ObjectMapper().readTree("{\"issue_time\":\"" + issued + "\",\"horizon_ms\":" + horizonHours * 3_600_000L
        + ",\"error\":" + error + ",\"covered\":" + covered + "}");
  }

  @Test void bucketsByHorizon_skipRecordsIssuedBeforeTheStart_andComputeTheMetrics() throws Exception {
    List<JsonNode> s = new ArrayList<>();
    s.add(settled("2026-01-12T10:00:00Z", 1, 1.0, true));
    s.add(settled("2026-01-12T11:00:00Z", 1, -3.0, false));
    s.add(settled("2026-01-12T17:00:00Z", 14, 2.0, true));
    s.add(settled("2026-01-12T17:00:00Z", 30, -2.0, true));
    s.add(settled("2026-01-12T17:00:00Z", 3, 4.0, true));    // 3 h: the hour-ahead bucket's upper end
    s.add(settled("2026-01-05T17:00:00Z", 14, 100.0, true)); // issued before the start: left out
    Instant from = Instant.parse("2026-01-12T00:00:00Z");
    HorizonErrors hour = HorizonErrors.of("hour", s, 0, DemoSummary.HOUR_AHEAD_MAX_MS, from);
    HorizonErrors day = HorizonErrors.of("day", s, DemoSummary.HOUR_AHEAD_MAX_MS, DemoSummary.DAY_AHEAD_MAX_MS, from);
    // hand-worked: hour errors 1, -3, 4 -> MAE 8/3, RMSE sqrt(26/3), bias 2/3, coverage 2/3
    assertEquals(3, hour.count());
    assertEquals(8.0 / 3, hour.mae(), 1e-12);
    assertEquals(Math.sqrt(26.0 / 3), hour.rmse(), 1e-12);
    assertEquals(2.0 / 3, hour.bias(), 1e-12);
    assertEquals(2.0 / 3, hour.coverage(), 1e-12);
    // day errors 2, -2 -> MAE 2, RMSE 2, bias 0, coverage 1
    assertEquals(2, day.count());
    assertEquals(2.0, day.mae(), 1e-12);
    assertEquals(2.0, day.rmse(), 1e-12);
    assertEquals(0.0, day.bias(), 1e-12);
    assertEquals(1.0, day.coverage(), 1e-12);
    HorizonErrors none = HorizonErrors.of("week", s, DemoSummary.DAY_AHEAD_MAX_MS, Long.MAX_VALUE, from);
    assertEquals(0, none.count());
    assertTrue(Double.isNaN(none.rmse()));
  }
}
