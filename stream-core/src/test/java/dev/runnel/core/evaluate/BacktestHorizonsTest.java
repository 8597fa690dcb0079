package dev.runnel.core.evaluate;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.JsonRecordDecoder;
import dev.runnel.core.record.RejectReason;
import dev.runnel.core.record.TimeFormat;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * {@code backtest} with horizons: simulated forecasts issued h before each actual's target time,
 * from the state after exactly the records known at the issue time. The reference for the
 * forecasts is a loop of fresh {@link PipelineStep}s, one per (actual, horizon), fed the records
 * up to the issue time and then the request as a live client would send it.
 */
class BacktestHorizonsTest {

  static final long H = 3_600_000L;
  static final long T0 = Instant.parse("2026-03-02T00:00:00Z").toEpochMilli();
  static final List<Long> HORIZONS = List.of(3 * H, 24 * H);

  /** Actuals for hour T arrive at T + 1 h (+ 5 min per hub); the target time is the field {@code hour}. */
  static final String FORECAST_CONFIG = """
      name: %s
      input:
        fields: {hub: text, x: number, y: number, made: time, hour: time}
        event_time: {field: made, format: iso8601}
        time_zone: UTC
        forecast:
          entity_fields: [hub]
          target_time_field: hour
          max_actual_delay: P2D
      target: y
      features:
      %s
        - {kind: cyclic, cycle: hour_of_day}
        - {kind: numeric, field: x}
      model:
        prior_variance: 100
        forgetting: {half_life: P3D}
        interval_level: 0.9
      """;

  /** Without input.forecast: one series, the target time is the event time. */
  static final String PLAIN_CONFIG = """
      name: %s
      input:
        fields: {hub: text, x: number, y: number, made: time}
        event_time: {field: made, format: iso8601}
        time_zone: UTC
      target: y
      features:
      %s
        - {kind: cyclic, cycle: hour_of_day}
        - {kind: numeric, field: x}
      model:
        prior_variance: 100
        interval_level: 0.9
      """;

  static PipelineConfig config(String template, String name, boolean withHub) {
    String hub = withHub ? "  - {kind: onehot, field: hub, max_levels: 8}" : "";
    return ConfigLoader.parse(String.format(Locale.ROOT, template, name, hub), name + ".yaml");
  }

  /** One source line and what the test knows about it. */
  record Rec(String hub, String x, double y, long made, long hour, boolean actual, boolean plain) {
    byte[] bytes() {
      if (made == Long.MIN_VALUE) {
        return "{\"hub\":\"A\",\"x\":".getBytes(StandardCharsets.UTF_8); // a corrupt line
      }
      String ys = actual ? String.format(Locale.ROOT, ",\"y\":%.4f", y) : "";
      String hs = plain ? "" : ",\"hour\":\"" + Instant.ofEpochMilli(hour) + "\"";
      return String.format(Locale.ROOT, "{\"hub\":\"%s\",\"x\":%s%s,\"made\":\"%s\"%s}", hub, x, ys,
          Instant.ofEpochMilli(made), hs).getBytes(StandardCharsets.UTF_8);
    }

    /** The request a client would send at {@code issue} for this actual's entity and hour (forecast configuration). */
    byte[] request(long issue) {
      return String.format(Locale.ROOT, "{\"hub\":\"%s\",\"x\":%s,\"made\":\"%s\",\"hour\":\"%s\"}", hub, x,
          Instant.ofEpochMilli(issue), Instant.ofEpochMilli(hour)).getBytes(StandardCharsets.UTF_8);
    }

    Rec withValues(String x2, double y2) {
      return new Rec(hub, x2, y2, made, hour, actual, plain);
    }
  }

  /**
   * Three hubs, hourly, {@code days} days: y = 10 + hub effect + 3 sin(2π hour/24) + 0.5 x + noise;
   * a corrupt line and a real forecast request now and then. In event-time order.
   */
  static List<Rec> stream(int days, boolean plain, long seed) {
    Random rnd = new Random(seed);
    String[] hubs = {"A", "B", "C"};
    double[] effect = {0, 4, -3};
    List<Rec> out = new ArrayList<>();
    for (int t = 0; t < days * 24; t++) {
      long hour = T0 + t * H;
      for (int k = 0; k < 3; k++) {
        double x = rnd.nextGaussian() * 2;
        String xs = String.format(Locale.ROOT, "%.4f", x);
        double y = 10 + effect[k] + 3 * Math.sin(2 * Math.PI * (t % 24) / 24.0) + 0.5 * Double.parseDouble(xs)
            + rnd.nextGaussian();
        y = Double.parseDouble(String.format(Locale.ROOT, "%.4f", y));
        long made = plain ? hour : hour + H + k * 5 * 60_000L; // plain: every hub at the same time
        out.add(new Rec(hubs[k], xs, y, made, plain ? made : hour, true, plain));
      }
      if (t % 29 == 7) {
        out.add(new Rec("A", "0", Double.NaN, Long.MIN_VALUE, 0, false, plain));
      }
      if (!plain && t % 24 == 18) {
        long made = hour + H + 20 * 60_000L;
        out.add(new Rec("B", "1.0000", Double.NaN, made, made + 14 * H, false, false));
      }
    }
    return out;
  }

  static Backtest run(List<Backtest.Variant> vs, List<Rec> recs, List<Long> horizons) {
    Backtest bt = new Backtest(vs, Backtest.Options.defaults().withHorizons(horizons));
    for (int i = 0; i < recs.size(); i++) {
      byte[] b = recs.get(i).bytes();
      bt.accept(b, 0, b.length, 0L, 0, i);
    }
    return bt;
  }

  /** One independent forecast: value, interval, the actual and which actual (source index) asked for it. */
  record Forecast(int origin, long target, double forecast, double low, double high, double actual) { }

  /**
   * The reference: for every actual and horizon h, a fresh step fed every record up to the issue
   * time T − h (the stream is in event-time order; corrupt lines change nothing wherever they go),
   * then one request for the actual's entity and hour, as a client would send it (forecast
   * configuration: a JSON line issued at T − h with the target-time field T; without
   * input.forecast: the actual's own decoded record, through {@link PipelineStep#processRequest}).
   */
  static List<Forecast> independent(PipelineConfig cfg, List<Rec> recs, long h) {
    List<Forecast> out = new ArrayList<>();
    boolean viaJson = cfg.input().forecast().enabled();
    for (int i = 0; i < recs.size(); i++) {
      Rec a = recs.get(i);
      if (!a.actual()) {
        continue;
      }
      long issue = a.hour() - h;
      PipelineStep step = new PipelineStep(cfg);
      for (int j = 0; j < recs.size(); j++) {
        Rec r = recs.get(j);
        if (r.made() != Long.MIN_VALUE && r.made() > issue) {
          break;
        }
        byte[] b = r.bytes();
        step.process(b, 0, b.length, 0L, 0, j, SINK);
      }
      Capture c = new Capture();
      if (viaJson) {
        byte[] q = a.request(issue);
        step.process(q, 0, q.length, 0L, 0, -1, c);
      } else {
        byte[] b = a.bytes();
        JsonRecordDecoder dec = new JsonRecordDecoder(cfg.input().schema(), cfg.input().limits(), "made", TimeFormat.ISO8601);
        assertEquals(null, dec.decode(b, 0, b.length, step.record()));
        step.processRequest(issue, a.hour(), 0, -1, c);
      }
      assertNotNull(c.status, "the request was rejected");
      if (c.status == Prediction.Status.FORECAST) {
        out.add(new Forecast(i, a.hour(), c.value, c.low, c.high, a.y()));
      }
    }
    return out;
  }

  static Metrics metrics(List<Forecast> fs) {
    Metrics.Accumulator acc = new Metrics.Accumulator();
    for (Forecast f : fs) {
      acc.add(f.actual() - f.forecast(), f.actual() >= f.low() && f.actual() <= f.high());
    }
    return acc.metrics();
  }

  @Test
  void horizonMetrics_equalAnIndependentLoopOfFreshSteps_withAndWithoutInputForecast() {
    for (boolean plain : new boolean[] {false, true}) {
      List<Rec> recs = stream(6, plain, 11);
      String template = plain ? PLAIN_CONFIG : FORECAST_CONFIG;
      PipelineConfig cfg = config(template, "hub", true);
      Backtest bt = run(List.of(new Backtest.Variant("hub", cfg)), recs, HORIZONS);
      BacktestResult r = bt.result();
      for (int h = 0; h < HORIZONS.size(); h++) {
        List<Forecast> ref = independent(cfg, recs, HORIZONS.get(h));
        BacktestResult.HorizonVariant v = r.horizons().get(h).variants().get(0);
        assertTrue(ref.size() > 300, "reference forecasts " + ref.size());
        // bit for bit: same forecasts, summed in the same (source) order
        assertEquals(metrics(ref), v.metrics(), (plain ? "plain" : "forecast") + " horizon " + HORIZONS.get(h));
        assertEquals(0, v.notSettled());
        assertEquals(0, v.beyondLookahead());
        List<Backtest.SettledSimulation> sims = bt.settledSimulations(0, h);
        assertEquals(ref.size(), sims.size());
        for (int k = 0; k < ref.size(); k++) {
          assertEquals(ref.get(k).origin(), sims.get(k).originOffset());
          assertEquals(ref.get(k).target() - HORIZONS.get(h), sims.get(k).issueTimeMillis());
          assertEquals(ref.get(k).forecast(), sims.get(k).forecast(), 0.0);
        }
      }
      // the longer horizon forecasts worse here (less data, forgetting aside): a sanity check of direction
      assertTrue(r.horizons().get(1).variants().get(0).metrics().count() <= r.horizons().get(0).variants().get(0).metrics().count());
    }
  }

  @Test
  void horizons_leaveThePrequentialReportUnchanged() {
    for (boolean plain : new boolean[] {false, true}) {
      List<Rec> recs = stream(4, plain, 12);
      String template = plain ? PLAIN_CONFIG : FORECAST_CONFIG;
      List<Backtest.Variant> vs = List.of(new Backtest.Variant("hub", config(template, "hub", true)),
          new Backtest.Variant("nohub", config(template, "nohub", false)));
      BacktestResult with = run(vs, recs, HORIZONS).result();
      BacktestResult without = run(vs, recs, List.of()).result();
      assertEquals(without.variants(), with.variants());
      assertEquals(without.comparisons(), with.comparisons());
      assertEquals(without.records(), with.records());
      assertTrue(without.horizons().isEmpty());
      assertEquals(2, with.horizons().size());
      // the simulated requests are not counted as records of the source
      assertEquals(recs.size(), with.variants().get(0).records());
    }
  }

  @Test
  void leakage_changingEveryRecordAfterTheIssueTimeChangesNoBitOfTheForecast() {
    PipelineConfig cfg = config(FORECAST_CONFIG, "hub", true);
    List<Backtest.Variant> vs = List.of(new Backtest.Variant("hub", cfg));
    List<Rec> recs = stream(6, false, 13);
    Backtest base = run(vs, recs, HORIZONS);
    for (int h = 0; h < HORIZONS.size(); h++) {
      List<Backtest.SettledSimulation> sims = base.settledSimulations(0, h);
      for (int pick = 40; pick < sims.size(); pick += 97) {
        Backtest.SettledSimulation s = sims.get(pick);
        long issue = s.issueTimeMillis();
        // change every record after the issue time: its inputs and its target; the actual that asked
        // for the forecast keeps its inputs (they are the request's) but gets another target
        Random rnd = new Random(pick);
        List<Rec> changed = new ArrayList<>();
        int altered = 0;
        for (int i = 0; i < recs.size(); i++) {
          Rec r = recs.get(i);
          if (r.made() != Long.MIN_VALUE && r.made() > issue) {
            altered++;
            if (i == s.originOffset()) {
              r = r.withValues(r.x(), r.y() + 100);
            } else {
              r = r.withValues(String.format(Locale.ROOT, "%.4f", rnd.nextGaussian() * 5), rnd.nextGaussian() * 50);
            }
          }
          changed.add(r);
        }
        assertTrue(altered > 20, "records after the issue time: " + altered);
        Backtest other = run(vs, changed, HORIZONS);
        Backtest.SettledSimulation t = null;
        int laterChanged = 0;
        for (Backtest.SettledSimulation u : other.settledSimulations(0, h)) {
          if (u.originOffset() == s.originOffset()) {
            t = u;
          }
        }
        for (int k = 0; k < sims.size(); k++) {
          Backtest.SettledSimulation u = other.settledSimulations(0, h).get(k);
          if (u.issueTimeMillis() > issue + H && Double.doubleToLongBits(u.forecast()) != Double.doubleToLongBits(sims.get(k).forecast())) {
            laterChanged++;
          }
        }
        assertNotNull(t, "the forecast for offset " + s.originOffset() + " was simulated again");
        assertEquals(Double.doubleToLongBits(s.forecast()), Double.doubleToLongBits(t.forecast()));
        assertEquals(Double.doubleToLongBits(s.low()), Double.doubleToLongBits(t.low()));
        assertEquals(Double.doubleToLongBits(s.high()), Double.doubleToLongBits(t.high()));
        assertEquals(s.actual() + 100, t.actual(), 1e-9); // the changed actual did settle it
        assertTrue(laterChanged > 0, "forecasts issued later did change: the change reached the model");
      }
    }
  }

  @Test
  void dieboldMarianoPerHorizon_usesTheHorizonInStepsOfTheSeries() {
    List<Rec> recs = stream(6, false, 14);
    PipelineConfig a = config(FORECAST_CONFIG, "hub", true);
    PipelineConfig b = config(FORECAST_CONFIG, "nohub", false);
    BacktestResult r = run(List.of(new Backtest.Variant("hub", a), new Backtest.Variant("nohub", b)), recs, HORIZONS).result();
    for (int h = 0; h < HORIZONS.size(); h++) {
      long horizon = HORIZONS.get(h);
      Map<Integer, Forecast> fb = new HashMap<>();
      for (Forecast f : independent(b, recs, horizon)) {
        fb.put(f.origin(), f);
      }
      List<Forecast> fa = independent(a, recs, horizon);
      double[] ea = new double[fa.size()];
      double[] eb = new double[fa.size()];
      int n = 0;
      long minT = Long.MAX_VALUE;
      long maxT = Long.MIN_VALUE;
      for (Forecast f : fa) {
        Forecast g = fb.get(f.origin());
        if (g != null) {
          ea[n] = f.actual() - f.forecast();
          eb[n] = g.actual() - g.forecast();
          minT = Math.min(minT, f.target());
          maxT = Math.max(maxT, f.target());
          n++;
        }
      }
      // three hubs an hour: the series' mean spacing is about 20 minutes, so a horizon of h hours
      // is about 3h steps of the compared series (the step is (latest − earliest target)/(n − 1))
      double step = (double) (maxT - minT) / (n - 1);
      assertEquals(20 * 60_000.0, step, 60_000.0);
      int k = (int) Math.ceil(horizon / step);
      assertEquals(horizon / H * 3, k, 1);
      int lag = DieboldMariano.defaultLag(n, k);
      assertTrue(lag >= k - 1);
      BacktestResult.HorizonComparison hc = r.horizons().get(h).comparisons().get(0);
      assertEquals(step, hc.stepMillis(), 0.0);
      assertEquals(n, hc.comparison().n());
      assertEquals(DieboldMariano.test(ea, eb, n, Loss.SQUARED, lag, k), hc.comparison().squared());
      assertEquals(DieboldMariano.test(ea, eb, n, Loss.ABSOLUTE, lag, k), hc.comparison().absolute());
      DieboldMariano.Result sq = hc.comparison().squared();
      assertEquals(k, sq.horizon());
      // Harvey, Leybourne & Newbold (1997): DM* = DM √((n + 1 − 2k + k(k−1)/n)/n), with k the steps ahead
      assertEquals(sq.statistic() * Math.sqrt((n + 1 - 2.0 * k + k * (k - 1.0) / n) / n), sq.correctedStatistic(), 1e-12);
      // the hub one-hot helps at every horizon here (hub effects 0, 4, -3 against noise sd 1)
      assertTrue(sq.meanDifference() < 0 && sq.significant(0.05), sq.toString());
    }
  }

  /** The stream with hub C's actuals of days 2 and 3 arriving 30 h after their hour, in event-time order. */
  static List<Rec> lateStream(long seed) {
    List<Rec> out = new ArrayList<>();
    long last = Long.MIN_VALUE;
    List<long[]> keys = new ArrayList<>();
    List<Rec> base = stream(6, false, seed);
    for (Rec r : base) {
      long day = r.made() == Long.MIN_VALUE ? -1 : (r.hour() - T0) / (24 * H);
      Rec x = r.actual() && r.hub().equals("C") && (day == 2 || day == 3)
          ? new Rec(r.hub(), r.x(), r.y(), r.hour() + 30 * H, r.hour(), true, false) : r;
      last = x.made() == Long.MIN_VALUE ? last : x.made();
      keys.add(new long[] {last, keys.size()});
      out.add(x);
    }
    List<Rec> sorted = new ArrayList<>();
    keys.sort((p, q) -> p[0] != q[0] ? Long.compare(p[0], q[0]) : Long.compare(p[1], q[1]));
    for (long[] k : keys) {
      sorted.add(out.get((int) k[1]));
    }
    return sorted;
  }

  static PipelineConfig forecastConfig(String name, String maxActualDelay, int maxPending) {
    return ConfigLoader.parse(String.format(Locale.ROOT, FORECAST_CONFIG, name, "  - {kind: onehot, field: hub, max_levels: 8}")
        .replace("max_actual_delay: P2D", "max_actual_delay: " + maxActualDelay + "\n    max_pending: " + maxPending),
        name + ".yaml");
  }

  @Test
  void lateActuals_withinMaxActualDelay_areSimulatedFromTheIssueTime_beyondItNotSettled() {
    List<Rec> recs = lateStream(15);
    long actuals = recs.stream().filter(Rec::actual).count();
    // P2D: the look-ahead is the largest horizon plus two days, so actuals 30 h late are simulated
    // as if issued at T − h, bit for bit as the fresh-step reference
    PipelineConfig wide = forecastConfig("wide", "P2D", 100_000);
    BacktestResult r = run(List.of(new Backtest.Variant("wide", wide)), recs, HORIZONS).result();
    for (int h = 0; h < HORIZONS.size(); h++) {
      BacktestResult.HorizonVariant v = r.horizons().get(h).variants().get(0);
      assertEquals(metrics(independent(wide, recs, HORIZONS.get(h))), v.metrics());
      assertEquals(0, v.beyondLookahead() + v.notSettled() + v.notIssued(), v.toString());
      assertEquals(actuals, v.metrics().count() + v.warmingUp(), v.toString());
    }
    // PT12H: an actual 30 h late settles nothing live, and nothing here either; every actual is
    // counted once: settled, warming up, not settled, beyond the look-ahead or not issued
    PipelineConfig narrow = forecastConfig("narrow", "PT12H", 100_000);
    BacktestResult n = run(List.of(new Backtest.Variant("narrow", narrow)), recs, HORIZONS).result();
    for (int h = 0; h < HORIZONS.size(); h++) {
      BacktestResult.HorizonVariant v = n.horizons().get(h).variants().get(0);
      BacktestResult.HorizonVariant w = r.horizons().get(h).variants().get(0);
      assertEquals(48, v.beyondLookahead() + v.notSettled(), v.toString()); // hub C, days 2 and 3
      assertEquals(w.metrics().count() - 48, v.metrics().count());
      assertEquals(actuals, v.metrics().count() + v.warmingUp() + v.notSettled() + v.beyondLookahead() + v.notIssued());
    }
    // max_pending 5: the store drops the oldest forecasts, counted as not settled
    PipelineConfig small = forecastConfig("small", "P2D", 5);
    BacktestResult s = run(List.of(new Backtest.Variant("small", small)), recs, HORIZONS).result();
    BacktestResult.HorizonVariant v = s.horizons().get(1).variants().get(0);
    assertTrue(v.notSettled() > 100, v.toString());
    assertEquals(actuals, v.metrics().count() + v.warmingUp() + v.notSettled() + v.beyondLookahead() + v.notIssued());
  }

  @Test
  void options_refuseANonPositiveOrRepeatedHorizon() {
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
        () -> Backtest.Options.defaults().withHorizons(List.of(0L)));
    assertTrue(e.getMessage().startsWith("--horizons: ") && e.getMessage().contains("PT1H"), e.getMessage());
    e = assertThrows(IllegalArgumentException.class, () -> Backtest.Options.defaults().withHorizons(List.of(H, H)));
    assertTrue(e.getMessage().contains("twice"), e.getMessage());
  }

  private static final class Capture implements PipelineStep.Sink {
    Prediction.Status status;
    double value;
    double low;
    double high;

    @Override
    public void prediction(Prediction p, EventRecord record) {
      status = p.status();
      value = p.predicted();
      low = p.low();
      high = p.high();
    }

    @Override
    public void reject(RejectReason reason, String detail) { }

    @Override
    public void snapshotDue() { }
  }

  private static final PipelineStep.Sink SINK = new Capture();
}
