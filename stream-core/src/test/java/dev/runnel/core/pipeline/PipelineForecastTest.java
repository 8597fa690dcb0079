package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigException;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.io.ByteArrayOutputStream;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Forecasts issued ahead and settled by their actual ({@code input.forecast}, docs/forecasting.md):
 * several forecasts for one (entity, target time) at different horizons are all settled by the one
 * actual, with the values published when they were issued; a request whose target time is already
 * past is marked, and settled only while its actual may still come; both bounds drop and count;
 * the pending forecasts survive a checkpoint bit for bit; and the calendar features read the
 * target time.
 */
class PipelineForecastTest {

  static final String CONFIG = """
      name: horizon-test
      input:
        fields:
          hub: text
          temperature_c: number
          sessions: number
          issued_at: time
          hour_start: time
        event_time: {field: issued_at, format: iso8601}
        time_zone: UTC
        forecast:
          entity_fields: [hub]
          target_time_field: hour_start
          max_pending: MAX
          max_actual_delay: P2D
      target: sessions
      features:
        - {kind: onehot, field: hub}
        - {kind: cyclic, cycle: hour_of_day}
        - {kind: numeric, field: temperature_c}
      model:
        prior_variance: 10
        interval_level: 0.9
      outputs:
        snapshot_every_records: 100
      drift:
        break_block_records: 0   # the weight-break scan off: these tests check the checkpoint layouts 3 to 6
      """;

  static final long H = 3_600_000L;
  static final long T0 = Instant.parse("2026-06-01T00:00:00Z").toEpochMilli();

  static PipelineConfig config(int maxPending) {
    return ConfigLoader.parse(CONFIG.replace("MAX", Integer.toString(maxPending)), "horizon-test.yaml");
  }

  static byte[] line(String hub, long issued, long hour, double temp, Double sessions) {
    String s = String.format(Locale.ROOT, "{\"hub\":\"%s\",\"issued_at\":\"%s\",\"hour_start\":\"%s\",\"temperature_c\":%s%s}",
        hub, Instant.ofEpochMilli(issued), Instant.ofEpochMilli(hour), temp,
        sessions == null ? "" : ",\"sessions\":" + sessions);
    return s.getBytes(StandardCharsets.UTF_8);
  }

  /** A settled forecast as the test keeps it. */
  record Settled(String hub, long issue, long target, long horizon, double forecast, double low, double high,
                 double actual, double error, long requestOffset, long actualOffset) { }

  /** Collects predictions' (value, low, high, target_passed) by offset, settled forecasts, rejects and the JSON of everything. */
  static final class Collector implements PipelineStep.Sink {
    final OutputJson json;
    final PipelineStep step;
    final ByteArrayOutputStream all = new ByteArrayOutputStream();
    final List<Settled> settled = new ArrayList<>();
    final List<String> rejects = new ArrayList<>();
    final List<double[]> predictions = new ArrayList<>();
    final List<String> predictionJson = new ArrayList<>();
    long offset;

    Collector(PipelineStep step) {
      this.step = step;
      this.json = new OutputJson(step.config().name(), step.config().model().intervalLevel());
    }

    @Override public void prediction(Prediction p, EventRecord r) {
      byte[] b = json.prediction(p, r);
      all.writeBytes(b);
      predictionJson.add(new String(b, StandardCharsets.UTF_8));
      predictions.add(new double[] {offset, p.predicted(), p.low(), p.high(), p.targetPassed() ? 1 : 0, p.horizonMillis()});
    }

    @Override public void reject(RejectReason reason, String detail) {
      rejects.add(reason.id() + ": " + detail);
      all.writeBytes(("reject " + reason.id() + "\n").getBytes(StandardCharsets.UTF_8));
    }

    @Override public void snapshotDue() { all.writeBytes(json.snapshot(step.snapshot(), 0)); }

    @Override public void settled(SettledForecast s, EventRecord r) {
      all.writeBytes(json.settled(s, r));
      settled.add(new Settled(r.text(r.schema().slot("hub")), s.issueTimeMillis(), s.targetTimeMillis(), s.horizonMillis(),
          s.forecast(), s.low(), s.high(), s.actual(), s.error(), s.requestOffset(), s.actualOffset()));
    }

    void feed(byte[] b) {
      step.process(b, 0, b.length, 0L, 0, offset, this);
      offset++;
    }

    double[] predictionAt(long off) {
      for (double[] p : predictions) {
        if (p[0] == off) {
          return p;
        }
      }
      throw new AssertionError("no prediction for offset " + off);
    }
  }

  static double sessions(Random rnd, String hub, long hour, double temp) {
    int h = (int) Math.floorMod(hour / H, 24);
    return 20 + 4 * hub.charAt(0) % 3 + 6 * Math.sin(2 * Math.PI * h / 24) - 0.3 * temp + rnd.nextGaussian();
  }

  /** Actuals for hubs A, B, C for {@code hours} hours from T0, each arriving one hour after its hour starts... ends. */
  static void warm(Collector c, Random rnd, int hours) {
    for (int k = 0; k < hours; k++) {
      long hour = T0 + k * H;
      for (String hub : new String[] {"A", "B", "C"}) {
        double temp = 10 + 5 * rnd.nextGaussian();
        c.feed(line(hub, hour + H, hour, temp, sessions(rnd, hub, hour, temp)));
      }
    }
  }

  @Test
  void severalForecastsForOneKeyAtDifferentHorizonsAreAllSettledByItsActual() {
    PipelineStep step = new PipelineStep(config(1000));
    Collector c = new Collector(step);
    Random rnd = new Random(7);
    warm(c, rnd, 48); // the clock is at T0 + 48 h
    long target = T0 + 60 * H;
    long[] issues = {target - 24 * H, target - 6 * H, target - H};
    long[] offsets = new long[3];
    for (int i = 0; i < 3; i++) {
      offsets[i] = c.offset;
      c.feed(line("A", issues[i], target, 12 + i, null));
    }
    c.feed(line("B", issues[0], target, 12, null)); // another entity, same hour
    c.feed(line("A", issues[0], target + H, 12, null)); // same entity, another hour
    assertEquals(5, step.pendingForecasts());
    assertTrue(c.settled.isEmpty());
    // the actual for (A, target) arrives an hour after the target hour began and settles all three
    long actualOffset = c.offset;
    c.feed(line("A", target + H, target, 12, 31.5));
    assertEquals(3, c.settled.size(), "one settled forecast per pending forecast for (A, target)");
    for (int i = 0; i < 3; i++) {
      Settled s = c.settled.get(i);
      double[] published = c.predictionAt(offsets[i]);
      assertEquals("A", s.hub());
      assertEquals(issues[i], s.issue(), "settled in the order issued");
      assertEquals(target, s.target());
      assertEquals(target - issues[i], s.horizon());
      assertEquals(target - issues[i], (long) published[5], "the prediction carried the same horizon");
      assertEquals(published[1], s.forecast(), "the forecast as published when issued");
      assertEquals(published[2], s.low());
      assertEquals(published[3], s.high());
      assertEquals(31.5, s.actual());
      assertEquals(31.5 - published[1], s.error());
      assertEquals(offsets[i], s.requestOffset());
      assertEquals(actualOffset, s.actualOffset());
    }
    assertTrue(c.settled.get(0).forecast() != c.settled.get(1).forecast(), "the three forecasts differ (temperatures differ)");
    assertEquals(2, step.pendingForecasts(), "B at the target and A an hour later still wait");
    assertEquals(3, step.settledForecasts());
    // a second actual for (A, target) with another value is a correction: rejected by default, settles nothing
    c.feed(line("A", target + 2 * H, target, 12, 30.0));
    assertEquals(3, c.settled.size());
    assertEquals(1, c.rejects.size());
    assertTrue(c.rejects.get(0).startsWith("corrected_actual: "), c.rejects.get(0));
    // the actual for B settles B's one forecast
    c.feed(line("B", target + H, target, 12, 25.0));
    assertEquals(4, c.settled.size());
    assertEquals("B", c.settled.get(3).hub());
    // the outputs: a stamped prediction and a settled line
    String req = c.predictionJson.get(c.predictionJson.size() - 1);
    assertTrue(req.contains("\"issue_time\":\"2026-06-03T13:00:00Z\",\"target_time\":\"2026-06-03T12:00:00Z\",\"horizon_ms\":-3600000,"),
        "an actual's prediction carries its times: " + req);
    assertTrue(c.predictionJson.stream().anyMatch(j -> j.contains("\"horizon_ms\":86400000,\"target_passed\":false")),
        "a request's prediction carries its horizon and its mark");
    String settledJson = new String(c.all.toByteArray(), StandardCharsets.UTF_8);
    assertTrue(settledJson.contains("\"entity\":{\"hub\":\"A\"},\"issue_time\":\"2026-06-02T12:00:00Z\",\"target_time\":\"2026-06-03T12:00:00Z\",\"horizon_ms\":86400000"),
        "the settled layout of docs/formats.md");
  }

  @Test
  void aRequestForATargetTimeAlreadyPastIsMarkedAndSettledOnlyWhileItsActualMayStillCome() {
    PipelineStep step = new PipelineStep(config(1000));
    Collector c = new Collector(step);
    Random rnd = new Random(8);
    warm(c, rnd, 96); // clock at T0 + 96 h; max_actual_delay P2D
    long now = step.clock().nowMillis();
    assertEquals(T0 + 96 * H, now);
    long recent = now - 5 * H; // past, within two days: its actual may still come (late); hub D, whose hours warm() left out
    long old = now - 50 * H; // more than two days behind the clock: its actual would be too late
    long recentOffset = c.offset;
    c.feed(line("D", now, recent, 9, null));
    long oldOffset = c.offset;
    c.feed(line("D", now, old, 9, null));
    assertEquals(1.0, c.predictionAt(recentOffset)[4], "marked target_passed");
    assertEquals(1.0, c.predictionAt(oldOffset)[4], "marked target_passed");
    assertTrue(c.predictionAt(oldOffset)[1] == c.predictionAt(oldOffset)[1], "still scored (a value)");
    assertEquals(1, step.pendingForecasts(), "only the recent one is remembered");
    assertEquals(1, step.droppedForecastsExpired(), "the old one is dropped and counted");
    c.feed(line("D", now + H, old, 9, 20.0)); // a very late actual: past max_actual_lag (= max_actual_delay), rejected
    assertEquals(0, c.settled.size());
    assertEquals(1, c.rejects.size());
    assertTrue(c.rejects.get(0).startsWith("actual_too_late: "), c.rejects.get(0));
    c.feed(line("D", now + H, recent, 9, 21.0)); // a late actual for the recent one
    assertEquals(1, c.settled.size());
    assertEquals(recent - now, c.settled.get(0).horizon(), "a negative horizon: issued after its target time");
    assertEquals(1, c.rejects.size(), c.rejects.toString());
  }

  @Test
  void bothBoundsDropTheRightForecastsAndCountThem() {
    PipelineStep step = new PipelineStep(config(3));
    Collector c = new Collector(step);
    Random rnd = new Random(9);
    warm(c, rnd, 24);
    long now = step.clock().nowMillis();
    for (int i = 0; i < 5; i++) {
      c.feed(line("H" + i, now, now + 10 * H, 10, null));
    }
    assertEquals(3, step.pendingForecasts());
    assertEquals(2, step.droppedForecastsFull(), "the two issued first are dropped");
    for (int i = 0; i < 5; i++) {
      c.feed(line("H" + i, now + 11 * H, now + 10 * H, 10, 20.0 + i));
    }
    assertEquals(List.of("H2", "H3", "H4"), c.settled.stream().map(Settled::hub).toList());
    // the age bound: an actual more than two days after its target time settles nothing
    c.feed(line("A", now, now + 12 * H, 10, null));
    for (long at : new long[] {30, 50, 60}) {
      c.feed(line("Z", now + at * H, now + (at - 1) * H, 10, 20.0)); // the clock moves within input.clock.max_ahead
    }
    assertEquals(1, step.pendingForecasts(), "at now + 60 h the target (now + 12 h) is exactly two days behind: it still waits");
    c.feed(line("Z", now + 61 * H, now + 60 * H, 10, 20.0));
    assertEquals(0, step.pendingForecasts(), "expired at the front of the queue");
    assertEquals(1, step.droppedForecastsExpired());
    assertEquals(6, step.rememberedForecasts(), "five for H0 to H4, one for A");
  }

  @Test
  void aRecordWithoutAnEntityFieldIsRejectedAndChangesNothing() {
    PipelineStep step = new PipelineStep(config(10));
    Collector c = new Collector(step);
    warm(c, new Random(1), 4);
    byte[] b = "{\"issued_at\":\"2026-06-01T05:00:00Z\",\"temperature_c\":3,\"sessions\":4}".getBytes(StandardCharsets.UTF_8);
    step.process(b, 0, b.length, 0L, 0, 99, c);
    assertEquals(1, c.rejects.size());
    assertTrue(c.rejects.get(0).startsWith("missing_field: field hub"), c.rejects.get(0));
    assertEquals(1, step.rejected());
    assertEquals(0, step.pendingForecasts());
  }

  @Test
  void calendarFeaturesReadTheTargetTime() {
    // the same request issued at two different times for the same target hour gets the same value
    PipelineStep step = new PipelineStep(config(10));
    Collector c = new Collector(step);
    warm(c, new Random(2), 30);
    long target = T0 + 40 * H;
    c.feed(line("A", target - 13 * H, target, 10, null));
    c.feed(line("A", target - 2 * H, target, 10, null));
    assertEquals(c.predictions.get(c.predictions.size() - 2)[1], c.predictions.get(c.predictions.size() - 1)[1]);
    // and a different target hour gives a different one
    c.feed(line("A", target - 2 * H, target + 6 * H, 10, null));
    assertTrue(c.predictions.get(c.predictions.size() - 1)[1] != c.predictions.get(c.predictions.size() - 2)[1]);
  }

  /** A seeded feed of actuals and requests at horizons from 1 to 30 hours, some late, some for past hours. */
  static List<byte[]> mixedFeed(long seed, int hours) {
    Random rnd = new Random(seed);
    List<byte[]> out = new ArrayList<>();
    String[] hubs = {"A", "B", "C", "D"};
    for (int k = 0; k < hours; k++) {
      long hour = T0 + k * H;
      for (String hub : hubs) {
        if (rnd.nextInt(20) != 0) { // now and then an actual never comes
          double temp = 10 + 5 * rnd.nextGaussian();
          long arrives = hour + H + (rnd.nextInt(10) == 0 ? rnd.nextInt(5) * H : 0);
          out.add(line(hub, arrives, hour, temp, sessions(rnd, hub, hour, temp)));
        }
        int requests = rnd.nextInt(3);
        for (int r = 0; r < requests; r++) {
          long ahead = (rnd.nextInt(32) - 2) * H; // -2 h (already past) to 29 h ahead
          out.add(line(hub, hour + H, hour + H + ahead, 10 + 5 * rnd.nextGaussian(), null));
        }
      }
    }
    return out;
  }

  static byte[] run(PipelineStep step, List<byte[]> feed, int from, int to) {
    Collector c = new Collector(step);
    c.offset = from;
    for (int i = from; i < to; i++) {
      c.feed(feed.get(i));
    }
    return c.all.toByteArray();
  }

  @Test
  void pendingForecastsSurviveACheckpointBitForBit() {
    PipelineConfig cfg = config(70);
    List<byte[]> feed = mixedFeed(21, 120);
    PipelineStep whole = new PipelineStep(cfg);
    byte[] expected = run(whole, feed, 0, feed.size());
    assertTrue(whole.settledForecasts() > 100 && whole.droppedForecastsFull() > 0 && whole.droppedForecastsExpired() > 0,
        "the feed settles and drops: settled " + whole.settledForecasts() + ", full " + whole.droppedForecastsFull()
            + ", expired " + whole.droppedForecastsExpired());
    Random rnd = new Random(4);
    for (int trial = 0; trial < 4; trial++) {
      int split = 1 + rnd.nextInt(feed.size() - 2);
      PipelineStep first = new PipelineStep(cfg);
      ByteArrayOutputStream got = new ByteArrayOutputStream();
      got.writeBytes(run(first, feed, 0, split));
      byte[] checkpoint = first.checkpoint();
      assertEquals(6, java.nio.ByteBuffer.wrap(checkpoint, 4, 4).getInt(), "version 6 with input.forecast (7 only with the change attribution's state)");
      assertTrue(first.pendingForecasts() > 0, "forecasts pending at the split");
      PipelineStep second = new PipelineStep(cfg);
      second.restore(checkpoint);
      assertArrayEquals(checkpoint, second.checkpoint(), "a restored step writes the checkpoint it read");
      got.writeBytes(run(second, feed, split, feed.size()));
      assertArrayEquals(expected, got.toByteArray(), "split at " + split);
      assertArrayEquals(whole.checkpoint(), second.checkpoint(), "final checkpoint, split at " + split);
    }
  }

  @Test
  void withoutForecastConfigTheCheckpointIsVersion3AndRestoresIntoAForecastingStep() {
    PipelineConfig plain = ConfigLoader.parse(CONFIG.replaceAll("(?s)  forecast:.*?P2D\n", ""), "plain.yaml");
    assertFalse(plain.input().forecast().enabled());
    List<byte[]> feed = mixedFeed(3, 30);
    PipelineStep a = new PipelineStep(plain);
    byte[] out = run(a, feed, 0, feed.size());
    assertFalse(new String(out, StandardCharsets.UTF_8).contains("target_time"), "no stamped fields without input.forecast");
    byte[] v3 = a.checkpoint();
    assertEquals(3, java.nio.ByteBuffer.wrap(v3, 4, 4).getInt());
    // the same features and model with input.forecast: the older checkpoint restores, nothing pending
    PipelineStep b = new PipelineStep(config(100));
    b.restore(v3);
    assertEquals(0, b.pendingForecasts());
    assertEquals(a.trained(), b.trained());
    // and a version 4 checkpoint cannot be restored without input.forecast
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> new PipelineStep(plain).restore(b.checkpoint()));
    assertTrue(e.getMessage().contains("input.forecast"), e.getMessage());
  }

  @Test
  void configurationMistakesNameTheKey() {
    ConfigException e = assertThrows(ConfigException.class,
        () -> ConfigLoader.parse(CONFIG.replace("MAX", "10").replace("entity_fields: [hub]", "entity_fields: [temperature_c]"), "x.yaml"));
    assertTrue(e.getMessage().startsWith("input.forecast.entity_fields[0]: "), e.getMessage());
    e = assertThrows(ConfigException.class,
        () -> ConfigLoader.parse(CONFIG.replace("MAX", "10").replace("target_time_field: hour_start", "target_time_field: issued_at"), "x.yaml"));
    assertTrue(e.getMessage().startsWith("input.forecast.target_time_field: ") && e.getMessage().contains("hour_start"), e.getMessage());
    e = assertThrows(ConfigException.class, () -> ConfigLoader.parse(CONFIG.replace("MAX", "0"), "x.yaml"));
    assertTrue(e.getMessage().startsWith("input.forecast.max_pending: "), e.getMessage());
  }
}
