package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import org.junit.jupiter.api.Test;

/**
 * A forecast request that is answered "warming up" applies the pending forecasts' age bound
 * ({@code input.forecast.max_actual_delay}) like every other record (docs/forecasting.md).
 *
 * <p>A request can only warm up after a forecast was remembered if the model stopped being ready,
 * and the bound can only have moved since the last record if the clock moved without a settle.
 * Both happen here: without a prior ({@code model.prior_variance: no_prior}) a restart after 64
 * half-lives of silence leaves the model not ready until two different rows came; then a
 * correction ({@code corrections: replace}) of the one actual learned since the restart is refused,
 * because removing it would leave no information (docs/model.md, "Prior and diffuse mode"), after
 * the clock took its later event time.
 */
class WarmingRequestExpiryTest {

  static final String CONFIG = """
      name: warming-expiry
      input:
        fields: {hub: text, x: number, y: number, issued_at: time, hour_start: time}
        event_time: {field: issued_at, format: iso8601}
        time_zone: UTC
        clock: {max_ahead: P30D}
        forecast:
          entity_fields: [hub]
          target_time_field: hour_start
          max_actual_delay: PT1H
          max_actual_lag: P30D
          corrections: replace
      target: y
      features:
        - {kind: numeric, field: x}
      model:
        prior_variance: no_prior
        forgetting: {half_life: PT1H}
      drift:
        break_block_records: 0
      """;

  static final long MIN = 60_000L;
  static final long H = 60 * MIN;
  static final long T0 = Instant.parse("2026-03-01T00:00:00Z").toEpochMilli();

  static byte[] line(String hub, long issued, long target, double x, Double y) {
    return String.format(Locale.ROOT, "{\"hub\":\"%s\",\"issued_at\":\"%s\",\"hour_start\":\"%s\",\"x\":%s%s}",
        hub, Instant.ofEpochMilli(issued), Instant.ofEpochMilli(target), x, y == null ? "" : ",\"y\":" + y)
        .getBytes(StandardCharsets.UTF_8);
  }

  static final class Sink implements PipelineStep.Sink {
    final List<Prediction.Status> statuses = new ArrayList<>();
    final List<RejectReason> rejects = new ArrayList<>();

    @Override public void prediction(Prediction p, EventRecord r) { statuses.add(p.status()); }
    @Override public void reject(RejectReason reason, String detail) { rejects.add(reason); }
    @Override public void snapshotDue() { }

    Prediction.Status last() { return statuses.get(statuses.size() - 1); }
  }

  static void feed(PipelineStep step, Sink sink, byte[] b) {
    step.process(b, 0, b.length, 0L, 0, 0, sink);
  }

  @Test
  void aWarmingUpRequestDropsAForecastOlderThanTheBoundAfterTheClockMovedWithoutASettle() {
    PipelineStep step = new PipelineStep(ConfigLoader.parse(CONFIG, "warming-expiry.yaml"));
    Sink sink = new Sink();
    // 20 actuals a minute apart: ready after two different rows, forecasting once the noise has a value
    for (int i = 0; i < 20; i++) {
      long t = T0 + i * MIN;
      double x = i % 5;
      feed(step, sink, line("a", t, t, x, 2.0 + 0.5 * x + 0.01 * ((i * 7) % 3 - 1)));
    }
    assertEquals(Prediction.Status.SCORED, sink.last());
    long now = T0 + 19 * MIN;
    // two requests remembered, for T0 + 100 h and T0 + 200 h
    feed(step, sink, line("b", now, T0 + 100 * H, 1.0, null));
    assertEquals(Prediction.Status.FORECAST, sink.last());
    feed(step, sink, line("c", now, T0 + 200 * H, 1.0, null));
    assertEquals(Prediction.Status.FORECAST, sink.last());
    assertEquals(2, step.pendingForecasts());

    // an actual 70 hours later: more than 64 half-lives, so the model restarts without a prior
    long r = T0 + 70 * H;
    feed(step, sink, line("a", r, r, 3.0, 3.5));
    assertEquals(1, step.modelRestarts());
    assertFalse(step.model().ready(), "one row after a restart without a prior");
    assertEquals(2, step.pendingForecasts(), "both targets are still ahead of the clock at T0 + 70 h");

    // its correction, issued at T0 + 102 h: the clock moves there, and the removal is refused
    long c = T0 + 102 * H;
    feed(step, sink, line("a", c, r, 3.0, 4.0));
    assertEquals(List.of(RejectReason.CORRECTED_ACTUAL), sink.rejects);
    assertEquals(c, step.clock().nowMillis(), "the clock took the correction's time");
    assertEquals(0, step.droppedForecastsExpired(), "nothing has applied the bound at T0 + 102 h yet");

    // a request while the model is not ready: warming up, and the forecast for T0 + 100 h, now 2 h
    // behind the clock with a bound of 1 h, is dropped and counted; the one for T0 + 200 h stays
    feed(step, sink, line("d", c, T0 + 300 * H, 3.0, null));
    assertEquals(Prediction.Status.WARMING_UP, sink.last());
    assertEquals(1, step.droppedForecastsExpired());
    assertEquals(1, step.pendingForecasts());
    assertTrue(step.rememberedForecasts() >= 2);
  }
}
