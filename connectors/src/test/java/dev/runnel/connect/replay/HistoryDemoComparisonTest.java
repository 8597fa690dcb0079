package dev.runnel.connect.replay;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.evaluate.Backtest;
import dev.runnel.demo.GroundTruth;
import dev.runnel.demo.QuillmarshGenerator;
import dev.runnel.demo.Settings;
import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.time.LocalDateTime;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import org.junit.jupiter.api.Test;

/**
 * The demo configuration with history features (quillmarsh-history.yaml: each hub's smoothed recent
 * sessions and the Dutch public holidays) forecasts a day ahead better than the plain demo
 * configuration (quillmarsh.yaml), all run through the same {@link Backtest} with simulated
 * day-ahead forecasts (docs/backtesting.md, "Horizons"), and each of its two feature lines earns a
 * part of the gain. Ground truth (demo-data README, {@code GroundTruth}): each hub has a hidden AR(1)
 * daily level of stationary sd 1.67 that only its own recent actuals reveal, and public holidays
 * lower every hour by 6.0 sessions; no field of the plain configuration sees either. The margins,
 * the gaps measured on other seeds and the longer run: docs/features.md, "Does it help?".
 */
class HistoryDemoComparisonTest {

  private static final long DAY = 86_400_000L;
  private static final long HOUR = 3_600_000L;
  private static final String SMOOTHED_LINE = "  - {kind: smoothed, name: recent, half_life: P1D}\n";
  private static final String HOLIDAY_LINE = "  - {kind: special_days, name: holiday, holiday_country: nl}\n";

  static String resource(String name) throws IOException {
    try (InputStream in = QuillmarshGenerator.class.getResourceAsStream("/dev/runnel/demo/" + name)) {
      return new String(in.readAllBytes(), StandardCharsets.UTF_8);
    }
  }

  /** The history configuration without one of its lines (checked to be there). */
  static String without(String yaml, String line) {
    String out = yaml.replace(line, "");
    assertEquals(yaml.length() - line.length(), out.length(), "the line is in quillmarsh-history.yaml once: " + line);
    return out;
  }

  /**
   * Backtests the configurations on the generated history in one pass, with horizons PT1H and P1D,
   * and returns each one's day-ahead RMSE over the same settled forecasts: those whose target time
   * lies at least {@code warmUpDays} after the history's start (a model a few days old forecasts a
   * day ahead with errors of tens of sessions, which would decide the comparison on its own).
   *
   * @return one RMSE per configuration, in order, then the number of forecasts counted
   */
  static double[] dayAheadRmse(List<String> yamls, Settings settings, int warmUpDays) {
    List<Backtest.Variant> variants = new ArrayList<>();
    for (int i = 0; i < yamls.size(); i++) {
      variants.add(new Backtest.Variant("c" + i, ConfigLoader.parse(yamls.get(i), "c" + i + ".yaml")));
    }
    Backtest bt = new Backtest(variants, Backtest.Options.defaults().withHorizons(List.of(HOUR, DAY)));
    long line = 0;
    for (String l : (Iterable<String>) new QuillmarshGenerator(settings).lines()::iterator) {
      byte[] b = l.getBytes(StandardCharsets.UTF_8);
      bt.accept(b, 0, b.length, 0L, 0, ++line);
    }
    long from = settings.start().atZone(GroundTruth.ZONE).toInstant().toEpochMilli() + warmUpDays * DAY;
    List<Backtest.SettledSimulation> first = bt.settledSimulations(0, 1);
    double[] out = new double[yamls.size() + 1];
    for (int v = 0; v < yamls.size(); v++) {
      List<Backtest.SettledSimulation> sims = bt.settledSimulations(v, 1);
      assertEquals(first.size(), sims.size(), "every configuration settles the same day-ahead forecasts");
      double sum = 0;
      int n = 0;
      for (int i = 0; i < sims.size(); i++) {
        Backtest.SettledSimulation s = sims.get(i);
        assertEquals(first.get(i).originOffset(), s.originOffset());
        if (s.targetTimeMillis() >= from) {
          sum += (s.actual() - s.forecast()) * (s.actual() - s.forecast());
          n++;
        }
      }
      out[v] = Math.sqrt(sum / n);
      out[yamls.size()] = n;
    }
    return out;
  }

  /** Plain, history, history without the smoothed mean, history without the holidays. */
  static List<String> fourConfigurations() throws IOException {
    String history = resource("quillmarsh-history.yaml");
    return List.of(resource("quillmarsh.yaml"), history, without(history, SMOOTHED_LINE), without(history, HOLIDAY_LINE));
  }

  /** Five weeks from 16 March 2026: Easter Monday (6 April) inside, the model three weeks old by then. */
  static Settings shortHistory() {
    return Settings.defaults().withStart(LocalDateTime.of(2026, 3, 16, 0, 0)).withDays(35);
  }

  @Test
  void historyFeatures_lowerTheDayAheadRmse_byAMargin_andEachLineHelps() throws IOException {
    double[] r = dayAheadRmse(fourConfigurations(), shortHistory(), 7);
    String table = String.format(Locale.ROOT, "day-ahead RMSE after a week (%d forecasts): plain %.4f, history %.4f,"
        + " history without smoothed %.4f, history without holidays %.4f", (long) r[4], r[0], r[1], r[2], r[3]);
    assertTrue(r[4] > 5_000, table);
    // margins: about half the smallest gap measured over five seeds (docs/features.md, "Does it help?")
    assertTrue(r[1] < r[0] - 0.3, "history beats plain: " + table);
    assertTrue(r[1] < r[2] - 0.2, "the smoothed mean helps: " + table);
    assertTrue(r[1] < r[3] - 0.04, "the holidays help: " + table);
    // no configuration beats the noise of the truth (sd 1.5), which no model beats
    assertTrue(r[1] > GroundTruth.noiseFloorRmse(), table);
  }

  /**
   * The measurement of docs/features.md ("Does it help?"), off by default: with
   * {@code -Drunnel.historyDays=120} prints the day-ahead RMSE after a two-week warm-up on that many
   * days from the default start, and the test's own comparison with the seed
   * {@code -Drunnel.historySeed} (default: the generator's).
   */
  @Test
  void measureForTheDocs() throws IOException {
    String days = System.getProperty("runnel.historyDays");
    if (days == null) {
      return;
    }
    Settings s = Settings.defaults().withDays(Integer.parseInt(days));
    double[] d = dayAheadRmse(fourConfigurations(), s, 14);
    System.out.printf(Locale.ROOT, "%s days from %s, seed %d, after day 14 (%d forecasts): plain %.3f, history %.3f,"
        + " without smoothed %.3f, without holidays %.3f; perfect model (truth, the actual's fields) %.3f%n",
        days, s.start(), s.seed(), (long) d[4], d[0], d[1], d[2], d[3],
        Math.hypot(GroundTruth.NOISE_SD, GroundTruth.LEVEL_INNOVATION_SD));
    Settings t = shortHistory().withSeed(Long.getLong("runnel.historySeed", Settings.DEFAULT_SEED));
    double[] r = dayAheadRmse(fourConfigurations(), t, 7);
    System.out.printf(Locale.ROOT, "the test's history, seed %d, after day 7 (%d forecasts): plain %.3f, history %.3f,"
        + " without smoothed %.3f, without holidays %.3f%n", t.seed(), (long) r[4], r[0], r[1], r[2], r[3]);
  }
}
