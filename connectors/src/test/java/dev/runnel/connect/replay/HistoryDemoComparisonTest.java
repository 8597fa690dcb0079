package dev.runnel.connect.replay;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.evaluate.Backtest;
import dev.runnel.core.evaluate.BacktestResult;
import dev.runnel.demo.GroundTruth;
import dev.runnel.demo.QuillmarshGenerator;
import dev.runnel.demo.Settings;
import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.time.LocalDateTime;
import java.util.List;
import java.util.Locale;
import org.junit.jupiter.api.Test;

/**
 * The demo configuration with history features (quillmarsh-history.yaml: each hub's smoothed recent
 * sessions and the Dutch public holidays) forecasts a day ahead better than the plain demo
 * configuration (quillmarsh.yaml), both run through the same {@link Backtest} with simulated
 * day-ahead forecasts (docs/backtesting.md, "Horizons"). Ground truth (demo-data README, {@code
 * GroundTruth}): each hub has a hidden AR(1) daily level of stationary sd 1.67 that only its own
 * recent actuals reveal, and public holidays lower every hour by 6.0 sessions; no field of the plain
 * configuration sees either. The numbers and the longer run are in docs/features.md, "Does it help?".
 */
class HistoryDemoComparisonTest {

  private static final long DAY = 86_400_000L;
  private static final long HOUR = 3_600_000L;

  /** Day-ahead RMSE of two configurations on the same settled forecasts, after a warm-up. */
  record DayAhead(int n, double plainRmse, double historyRmse, BacktestResult result) { }

  static String resource(String name) throws IOException {
    try (InputStream in = QuillmarshGenerator.class.getResourceAsStream("/dev/runnel/demo/" + name)) {
      return new String(in.readAllBytes(), StandardCharsets.UTF_8);
    }
  }

  /**
   * Backtests the two configurations on the generated history with horizons PT1H and P1D and returns
   * the day-ahead RMSE of the forecasts whose target time lies at least {@code warmUpDays} after the
   * history's start (a model a few days old forecasts a day ahead with errors of tens of sessions,
   * which would decide the comparison on its own).
   */
  static DayAhead dayAhead(String plainYaml, String historyYaml, Settings settings, int warmUpDays) {
    return dayAhead(plainYaml, historyYaml, settings, warmUpDays, null);
  }

  /** As above, leaving out the forecasts of one hub ({@code skipHub}, e.g. "QM-13"; null for none). */
  static DayAhead dayAhead(String plainYaml, String historyYaml, Settings settings, int warmUpDays, String skipHub) {
    Backtest bt = new Backtest(List.of(
        new Backtest.Variant("plain", ConfigLoader.parse(plainYaml, "quillmarsh.yaml")),
        new Backtest.Variant("history", ConfigLoader.parse(historyYaml, "quillmarsh-history.yaml"))),
        Backtest.Options.defaults().withHorizons(List.of(HOUR, DAY)));
    long line = 0;
    List<String> lines = new QuillmarshGenerator(settings).lines().toList();
    for (String l : lines) {
      byte[] b = l.getBytes(StandardCharsets.UTF_8);
      bt.accept(b, 0, b.length, 0L, 0, ++line);
    }
    long from = settings.start().atZone(GroundTruth.ZONE).toInstant().toEpochMilli() + warmUpDays * DAY;
    List<Backtest.SettledSimulation> plain = bt.settledSimulations(0, 1);
    List<Backtest.SettledSimulation> history = bt.settledSimulations(1, 1);
    assertEquals(plain.size(), history.size(), "both configurations settle the same day-ahead forecasts");
    double sp = 0;
    double sh = 0;
    int n = 0;
    for (int i = 0; i < plain.size(); i++) {
      Backtest.SettledSimulation p = plain.get(i);
      Backtest.SettledSimulation h = history.get(i);
      assertEquals(p.originOffset(), h.originOffset());
      if (p.targetTimeMillis() < from
          || (skipHub != null && lines.get((int) p.originOffset() - 1).contains("\"hub\":\"" + skipHub + "\""))) {
        continue;
      }
      sp += (p.actual() - p.forecast()) * (p.actual() - p.forecast());
      sh += (h.actual() - h.forecast()) * (h.actual() - h.forecast());
      n++;
    }
    return new DayAhead(n, Math.sqrt(sp / n), Math.sqrt(sh / n), bt.result());
  }

  /** Five weeks from 16 March 2026: Easter Monday (6 April) inside, the model two weeks old by then. */
  static Settings shortHistory() {
    return Settings.defaults().withStart(LocalDateTime.of(2026, 3, 16, 0, 0)).withDays(35);
  }

  @Test
  void historyFeatures_lowerTheDayAheadRmse_byAMargin() throws IOException {
    DayAhead d = dayAhead(resource("quillmarsh.yaml"), resource("quillmarsh-history.yaml"), shortHistory(), 7);
    assertTrue(d.n() > 5_000, "day-ahead forecasts after the warm-up: " + d.n());
    // MARGIN: see docs/features.md, "Does it help?" (measured gap on this history, and why this margin)
    assertTrue(d.historyRmse() < d.plainRmse() - 0.3,
        String.format(Locale.ROOT, "day-ahead RMSE after a week: plain %.4f, history %.4f", d.plainRmse(), d.historyRmse()));
    // the history configuration cannot beat the noise of the truth (sd 1.5), which no model beats
    assertTrue(d.historyRmse() > GroundTruth.noiseFloorRmse(), "history " + d.historyRmse());
  }

  @Test
  void withTheHistoryLinesRemoved_theConfigurationsAreTheSame() throws IOException {
    // the margin above comes from the two feature lines: without them the two files give the same bits
    String history = resource("quillmarsh-history.yaml");
    String stripped = history.replace("  - {kind: smoothed, name: recent, half_life: P1D}\n", "")
        .replace("  - {kind: special_days, name: holiday, holiday_country: nl}\n", "");
    assertTrue(stripped.length() < history.length() - 80, "both feature lines were found");
    DayAhead d = dayAhead(resource("quillmarsh.yaml"), stripped, shortHistory().withDays(14), 7);
    assertEquals(d.plainRmse(), d.historyRmse(), 0.0);
  }

  /**
   * The measurement of docs/features.md ("Does it help?"), off by default: run with
   * {@code -Drunnel.historyDays=120} to print the day-ahead RMSE after a two-week warm-up.
   */
  @Test
  void measureForTheDocs() throws IOException {
    String days = System.getProperty("runnel.historyDays");
    if (days == null) {
      return;
    }
    Settings s = Settings.defaults().withDays(Integer.parseInt(days));
    DayAhead d = dayAhead(resource("quillmarsh.yaml"), resource("quillmarsh-history.yaml"), s, 14);
    System.out.printf(Locale.ROOT, "days %s seed %d: day-ahead forecasts with target after day 14: %d;"
        + " RMSE plain %.3f, history %.3f; perfect model (truth, actual's fields) %.3f%n",
        days, s.seed(), d.n(), d.plainRmse(), d.historyRmse(),
        Math.hypot(GroundTruth.NOISE_SD, GroundTruth.LEVEL_INNOVATION_SD));
    // the test's history, with another seed if asked (-Drunnel.historySeed=N): how much room the margin has
    Settings shortSettings = shortHistory().withSeed(Long.getLong("runnel.historySeed", Settings.DEFAULT_SEED));
    DayAhead t = dayAhead(resource("quillmarsh.yaml"), resource("quillmarsh-history.yaml"), shortSettings, 7);
    System.out.printf(Locale.ROOT, "the test's history (35 days from 2026-03-16, seed %d): %d forecasts after day 7;"
        + " RMSE plain %.3f, history %.3f%n", shortSettings.seed(), t.n(), t.plainRmse(), t.historyRmse());
    for (DayAhead x : List.of(d, t)) {
      // QM-13 opens at 35 % of any history: a new hub's one-hot weight starts at 0, its smoothed mean does not
      DayAhead y = x == d ? dayAhead(resource("quillmarsh.yaml"), resource("quillmarsh-history.yaml"), s, 14, "QM-13")
          : dayAhead(resource("quillmarsh.yaml"), resource("quillmarsh-history.yaml"), shortSettings, 7, "QM-13");
      System.out.printf(Locale.ROOT, "  without QM-13: %d forecasts; RMSE plain %.3f, history %.3f%n",
          y.n(), y.plainRmse(), y.historyRmse());
    }
  }
}
