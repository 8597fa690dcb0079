package dev.runnel.core.evaluate;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import java.math.BigDecimal;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.time.LocalDate;
import java.time.ZoneId;
import java.time.ZonedDateTime;
import java.time.temporal.IsoFields;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.TreeMap;
import org.junit.jupiter.api.Test;

/**
 * The per-horizon breakdown of {@code backtest --horizons} (by entity, by hour of day and by
 * period of the target time): checked on a feed small enough to work out by hand, and on the
 * horizon tests' feed against a separate computation over the simulated forecasts
 * ({@link Backtest#settledSimulations}) with java.time for the local hour and the ISO 8601 week,
 * the source records for the entity, and java.math.BigDecimal for exact sums.
 */
class BacktestBreakdownTest {

  static final long H = 3_600_000L;

  /** A model of the constant term alone, without a prior: its forecast is the mean of the actuals learned. */
  private static final String MEAN_CONFIG = """
      name: %s
      input:
        fields: {hub: text, y: number, made: time, hour: time}
        event_time: {field: made, format: iso8601}
        time_zone: %s
        forecast:
          entity_fields: [hub]
          target_time_field: hour
          max_actual_delay: P1D
      target: y
      model:
        prior_variance: no_prior
        interval_level: 0.9
      """;

  static PipelineConfig meanConfig(String name, String zone) {
    return ConfigLoader.parse(String.format(Locale.ROOT, MEAN_CONFIG, name, zone), name + ".yaml");
  }

  /**
   * Hubs A (always 10), B (always 14) and C (always 12, only for 16:00, 19:00 and 20:00 UTC), for
   * the hours 16:00 to 21:00 UTC of Sunday 2026-05-31, each actual arriving an hour after its hour.
   */
  static List<byte[]> meanFeed() {
    List<byte[]> out = new ArrayList<>();
    long t0 = Instant.parse("2026-05-31T16:00:00Z").toEpochMilli();
    for (int t = 0; t < 6; t++) {
      long hour = t0 + t * H;
      for (String hub : List.of("A", "B", "C")) {
        if (hub.equals("C") && t != 0 && t != 3 && t != 4) {
          continue;
        }
        int y = hub.equals("A") ? 10 : hub.equals("B") ? 14 : 12;
        out.add(String.format(Locale.ROOT, "{\"hub\":\"%s\",\"y\":%d,\"made\":\"%s\",\"hour\":\"%s\"}", hub, y,
            Instant.ofEpochMilli(hour + H), Instant.ofEpochMilli(hour)).getBytes(StandardCharsets.UTF_8));
      }
    }
    return out;
  }

  static Backtest runFeed(List<Backtest.Variant> vs, List<byte[]> feed, Backtest.Options o) {
    Backtest bt = new Backtest(vs, o);
    for (int i = 0; i < feed.size(); i++) {
      bt.accept(feed.get(i), 0, feed.get(i).length, 0L, 0, i);
    }
    return bt;
  }

  static void assertGroup(BacktestResult.Group g, String label, long count, double mae, double rmse, double bias) {
    assertEquals(label, g.label());
    assertEquals(count, g.metrics().count(), label);
    if (count > 0) {
      assertEquals(mae, g.metrics().mae(), 1e-9, label);
      assertEquals(rmse, g.metrics().rmse(), 1e-9, label);
      assertEquals(bias, g.metrics().bias(), 1e-9, label);
      assertEquals(rmse * rmse * count, g.sumSquaredError(), 1e-9, label);
    }
  }

  /**
   * Worked out by hand: every forecast issued an hour ahead knows every hour two or more before its
   * target (A and B in pairs, C at 12), so it is the mean 12: A's errors are −2, B's +2, C's 0. The
   * forecasts of 16:00 and 17:00 know nothing yet (warming up). Settled: A and B at 18:00 to 21:00
   * UTC, C at 19:00 and 20:00. In Asia/Kolkata (UTC+05:30, no daylight saving) 18:00 UTC is 23:30 on
   * Sunday 31 May (ISO week 22, May) and 19:00 UTC is 00:30 on Monday 1 June (week 23, June): the
   * week and the month change between them (java.time / ISO 8601). In UTC all are week 22, May.
   */
  @Test
  void smallFeed_byHand_entitiesHoursWeeksAndMonths_inEachConfigurationsZone() {
    List<Backtest.Variant> vs = List.of(new Backtest.Variant("kolkata", meanConfig("kolkata", "Asia/Kolkata")),
        new Backtest.Variant("utc", meanConfig("utc", "UTC")));
    Backtest.Options o = Backtest.Options.defaults().withHorizons(List.of(H)).withBreakdown(2, BreakdownPeriod.WEEK);
    BacktestResult r = runFeed(vs, meanFeed(), o).result();
    double r83 = Math.sqrt(8.0 / 3);
    for (int v = 0; v < 2; v++) {
      BacktestResult.HorizonVariant hv = r.horizons().get(0).variants().get(v);
      assertEquals(10, hv.metrics().count(), hv.toString());
      BacktestResult.Breakdown b = hv.breakdown();
      assertEquals(List.of("hub"), b.entityFields());
      assertEquals(3, b.byEntity().size());
      BacktestResult.EntityGroup a = b.byEntity().get(0);
      BacktestResult.EntityGroup bb = b.byEntity().get(1);
      BacktestResult.EntityGroup other = b.byEntity().get(2);
      assertEquals(List.of("A"), a.values()); // A and B tie at 4 each: in the order of their values
      assertEquals(List.of("B"), bb.values());
      assertTrue(other.other());
      assertEquals(1, other.entities()); // C
      assertEquals(4, a.metrics().count());
      assertEquals(2, a.metrics().mae(), 1e-9);
      assertEquals(-2, a.metrics().bias(), 1e-9);
      assertEquals(16, a.sumSquaredError(), 1e-9);
      assertEquals(4, bb.metrics().count());
      assertEquals(2, bb.metrics().bias(), 1e-9);
      assertEquals(2, other.metrics().count());
      assertEquals(0, other.metrics().rmse(), 1e-9);
      assertGroup(b.total(), "total", 10, 1.6, Math.sqrt(32.0 / 10), 0); // A and B 16 each, C 0
      int[] counts = {2, 3, 3, 2};
      long sum = 0;
      for (int hr = 0; hr < 24; hr++) {
        sum += b.byHour().get(hr).metrics().count();
      }
      assertEquals(10, sum);
      for (int k = 0; k < 4; k++) {
        int hr = (18 + k + (v == 0 ? 5 : 0)) % 24; // UTC 18:00 to 21:00 is 23:30 to 02:30 in Kolkata
        double mae = counts[k] == 2 ? 2 : 4.0 / 3;
        assertGroup(b.byHour().get(hr), String.format(Locale.ROOT, "%02d", hr), counts[k], mae, counts[k] == 2 ? 2 : r83, 0);
      }
      // the period rows are the same for both configurations (the union): week 22 and week 23
      assertEquals(2, b.byPeriod().size());
      assertGroup(b.byPeriod().get(0), "2026-W22", v == 0 ? 2 : 10, v == 0 ? 2 : 1.6, v == 0 ? 2 : Math.sqrt(3.2), 0);
      assertGroup(b.byPeriod().get(1), "2026-W23", v == 0 ? 8 : 0, 1.5, Math.sqrt(24.0 / 8), 0);
    }
    assertEquals(List.of(23, 0, 1, 2), hoursWithForecasts(r, 0));
    assertEquals(List.of(18, 19, 20, 21), hoursWithForecasts(r, 1));
    BacktestResult m = runFeed(vs, meanFeed(), o.withBreakdown(1, BreakdownPeriod.MONTH)).result();
    BacktestResult.Breakdown kol = m.horizons().get(0).variants().get(0).breakdown();
    assertEquals(List.of("2026-05", "2026-06"), kol.byPeriod().stream().map(BacktestResult.Group::label).toList());
    assertEquals(List.of(2L, 8L), kol.byPeriod().stream().map(g -> g.metrics().count()).toList());
    // one entity shown: A (first of the tie), then B and C together
    assertEquals(2, kol.byEntity().size());
    assertEquals(List.of("A"), kol.byEntity().get(0).values());
    assertEquals(2, kol.byEntity().get(1).entities());
    assertEquals(6, kol.byEntity().get(1).metrics().count());
    assertEquals(16, kol.byEntity().get(1).sumSquaredError(), 1e-9);
  }

  static List<Integer> hoursWithForecasts(BacktestResult r, int v) {
    List<Integer> out = new ArrayList<>();
    List<BacktestResult.Group> hs = r.horizons().get(0).variants().get(v).breakdown().byHour();
    for (int hr = 0; hr < 24; hr++) {
      if (hs.get(hr).metrics().count() > 0) {
        out.add(hr);
      }
    }
    out.sort((x, y) -> Integer.compare((x + 12) % 24, (y + 12) % 24)); // 23 before 0 around midnight
    return out;
  }

  // ------------------------------------------------------------------ against a separate computation

  /** Exact sums of one group, by BigDecimal. */
  static final class Ref {
    long count;
    long covered;
    BigDecimal abs = BigDecimal.ZERO;
    BigDecimal sq = BigDecimal.ZERO;
    BigDecimal err = BigDecimal.ZERO;

    void add(double e, boolean cov) {
      count++;
      covered += cov ? 1 : 0;
      abs = abs.add(new BigDecimal(Math.abs(e)));
      sq = sq.add(new BigDecimal(e * e));
      err = err.add(new BigDecimal(e));
    }

    void add(Ref o) {
      count += o.count;
      covered += o.covered;
      abs = abs.add(o.abs);
      sq = sq.add(o.sq);
      err = err.add(o.err);
    }

    void check(Metrics m, double sumSq, String what) {
      assertEquals(count, m.count(), what);
      if (count == 0) {
        assertEquals(Metrics.EMPTY, m, what);
        return;
      }
      // bit for bit: each exact sum rounded once (BigDecimal.doubleValue rounds to nearest), then divided
      assertEquals(sq.doubleValue(), sumSq, 0.0, what);
      assertEquals(abs.doubleValue() / count, m.mae(), 0.0, what);
      assertEquals(Math.sqrt(sq.doubleValue() / count), m.rmse(), 0.0, what);
      assertEquals(err.doubleValue() / count, m.bias(), 0.0, what);
      assertEquals((double) covered / count, m.coverage(), 0.0, what);
    }
  }

  static String isoWeek(LocalDate d) {
    return String.format(Locale.ROOT, "%d-W%02d", d.get(IsoFields.WEEK_BASED_YEAR), d.get(IsoFields.WEEK_OF_WEEK_BASED_YEAR));
  }

  static PipelineConfig newYork(String template, String name, boolean withHub) {
    String hub = withHub ? "  - {kind: onehot, field: hub, max_levels: 8}" : "";
    String text = String.format(Locale.ROOT, template, name, hub).replace("time_zone: UTC", "time_zone: America/New_York");
    return ConfigLoader.parse(text, name + ".yaml");
  }

  /**
   * Nine days of three hubs from Monday 2 March 2026, in America/New_York (daylight saving starts on
   * Sunday 8 March, java.time), two configurations, two horizons, two entities shown: every row of
   * every table equals a separate computation over the settled simulated forecasts, and the rows
   * of each table add up exactly to the horizon (counts, and exact squared-error sums).
   */
  @Test
  void everyRow_equalsASeparateComputationOverTheSimulatedForecasts_andTheRowsAddUpExactly() {
    ZoneId zone = ZoneId.of("America/New_York");
    for (boolean plain : new boolean[] {false, true}) {
      List<BacktestHorizonsTest.Rec> recs = BacktestHorizonsTest.stream(9, plain, 21);
      String template = plain ? BacktestHorizonsTest.PLAIN_CONFIG : BacktestHorizonsTest.FORECAST_CONFIG;
      List<Backtest.Variant> vs = List.of(new Backtest.Variant("hub", newYork(template, "hub", true)),
          new Backtest.Variant("nohub", newYork(template, "nohub", false)));
      Backtest bt = new Backtest(vs, Backtest.Options.defaults().withHorizons(BacktestHorizonsTest.HORIZONS)
          .withBreakdown(2, BreakdownPeriod.WEEK));
      for (int i = 0; i < recs.size(); i++) {
        byte[] b = recs.get(i).bytes();
        bt.accept(b, 0, b.length, 0L, 0, i);
      }
      BacktestResult r = bt.result();
      for (int h = 0; h < BacktestHorizonsTest.HORIZONS.size(); h++) {
        // the entities by count over both configurations, ties by name
        Map<String, long[]> byHub = new TreeMap<>();
        for (int v = 0; v < 2; v++) {
          for (Backtest.SettledSimulation s : bt.settledSimulations(v, h)) {
            byHub.computeIfAbsent(recs.get((int) s.originOffset()).hub(), x -> new long[1])[0]++;
          }
        }
        List<String> ranked = new ArrayList<>(byHub.keySet());
        ranked.sort((x, y) -> byHub.get(x)[0] != byHub.get(y)[0] ? Long.compare(byHub.get(y)[0], byHub.get(x)[0]) : x.compareTo(y));
        List<String> shown = ranked.subList(0, 2);
        for (int v = 0; v < 2; v++) {
          Map<String, Ref> ent = new TreeMap<>();
          Ref other = new Ref();
          Ref[] hours = new Ref[24];
          for (int k = 0; k < 24; k++) {
            hours[k] = new Ref();
          }
          Map<String, Ref> weeks = new TreeMap<>();
          Ref total = new Ref();
          List<Backtest.SettledSimulation> sims = bt.settledSimulations(v, h);
          boolean acrossDst = false;
          for (Backtest.SettledSimulation s : sims) {
            double e = s.actual() - s.forecast();
            boolean cov = s.actual() >= s.low() && s.actual() <= s.high();
            String hub = recs.get((int) s.originOffset()).hub();
            (shown.contains(hub) ? ent.computeIfAbsent(hub, x -> new Ref()) : other).add(e, cov);
            ZonedDateTime local = ZonedDateTime.ofInstant(Instant.ofEpochMilli(s.targetTimeMillis()), zone);
            acrossDst |= local.getOffset().getTotalSeconds() == -4 * 3600;
            hours[local.getHour()].add(e, cov);
            weeks.computeIfAbsent(isoWeek(local.toLocalDate()), x -> new Ref()).add(e, cov);
            total.add(e, cov);
          }
          assertTrue(acrossDst, "the feed reaches daylight saving time");
          assertTrue(sims.size() > 400, "forecasts " + sims.size());
          BacktestResult.HorizonVariant hv = r.horizons().get(h).variants().get(v);
          BacktestResult.Breakdown b = hv.breakdown();
          String what = (plain ? "plain " : "forecast ") + "h" + h + " " + hv.label();
          total.check(b.total().metrics(), b.total().sumSquaredError(), what + " total");
          // the horizon's own metrics (summed in source order) count the same forecasts
          assertEquals(hv.metrics().count(), b.total().metrics().count());
          assertEquals(hv.metrics().rmse(), b.total().metrics().rmse(), 1e-12 * hv.metrics().rmse());
          if (plain) {
            assertTrue(b.byEntity().isEmpty(), "no entity without input.forecast");
            assertEquals(List.of(), b.entityFields());
          } else {
            assertEquals(3, b.byEntity().size(), what);
            Ref sum = new Ref();
            for (int i = 0; i < 2; i++) {
              BacktestResult.EntityGroup g = b.byEntity().get(i);
              assertEquals(List.of(shown.get(i)), g.values(), what);
              ent.get(shown.get(i)).check(g.metrics(), g.sumSquaredError(), what + " " + shown.get(i));
              sum.add(ent.get(shown.get(i)));
            }
            BacktestResult.EntityGroup og = b.byEntity().get(2);
            assertTrue(og.other());
            assertEquals(1, og.entities());
            other.check(og.metrics(), og.sumSquaredError(), what + " other");
            sum.add(other);
            // the rows add up exactly: counts, and the exact squared-error sums to the horizon's
            assertEquals(hv.metrics().count(), sum.count);
            assertEquals(0, sum.sq.compareTo(total.sq), what);
            assertTrue(other.count > 0 && ent.size() == 2);
          }
          Ref hourSum = new Ref();
          for (int k = 0; k < 24; k++) {
            hours[k].check(b.byHour().get(k).metrics(), b.byHour().get(k).sumSquaredError(), what + " hour " + k);
            hourSum.add(hours[k]);
          }
          assertEquals(hv.metrics().count(), hourSum.count);
          assertEquals(0, hourSum.sq.compareTo(total.sq));
          List<String> labels = new ArrayList<>();
          Ref weekSum = new Ref();
          for (BacktestResult.Group g : b.byPeriod()) {
            labels.add(g.label());
            Ref ref = weeks.getOrDefault(g.label(), new Ref());
            ref.check(g.metrics(), g.sumSquaredError(), what + " " + g.label());
            weekSum.add(ref);
          }
          // Monday 2 March 00:00 UTC is Sunday 1 March 19:00 in New York, ISO week 9 (java.time); a day
          // ahead, the first day's forecasts are not made (the model warms up) and week 9 has none
          assertEquals(h == 0 ? List.of("2026-W09", "2026-W10", "2026-W11") : List.of("2026-W10", "2026-W11"), labels, what);
          assertEquals(new ArrayList<>(weeks.keySet()), labels);
          assertEquals(0, weekSum.sq.compareTo(total.sq));
        }
      }
    }
  }

  @Test
  void options_refuseABadBreakdown_namingTheOption() {
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
        () -> Backtest.Options.defaults().withBreakdown(0, BreakdownPeriod.WEEK));
    assertTrue(e.getMessage().startsWith("--breakdown-entities 0: ") && e.getMessage().contains("1 to 100000"), e.getMessage());
    e = assertThrows(IllegalArgumentException.class, () -> BreakdownPeriod.of("fortnight"));
    assertTrue(e.getMessage().startsWith("--breakdown-period fortnight: ") && e.getMessage().contains("week"), e.getMessage());
    assertEquals(BreakdownPeriod.MONTH, BreakdownPeriod.of("month"));
  }
}
