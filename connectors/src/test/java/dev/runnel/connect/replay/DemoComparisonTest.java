package dev.runnel.connect.replay;

import dev.runnel.connect.report.TextReport;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.evaluate.Backtest;
import dev.runnel.core.evaluate.BacktestResult;
import dev.runnel.demo.QuillmarshGenerator;
import dev.runnel.demo.Settings;
import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.util.List;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/**
 * Two demo configurations that differ only in the weather one-hot, on 60 days of the invented
 * Quillmarsh feed. Ground truth (demo-data/samples/quillmarsh-truth.md, {@code GroundTruth}):
 * weather effects clear 0, cloudy −0.8, rain −2.5, snow −5.0 sessions, so the configuration
 * without weather must lose, significantly, and most of all on snow.
 */
class DemoComparisonTest {

  private static List<byte[]> lines;
  private static String yaml;

  @BeforeAll
  static void generate() throws IOException {
    QuillmarshGenerator gen = new QuillmarshGenerator(Settings.defaults().withDays(60).withForecasts(false));
    lines = gen.lines().map(l -> l.getBytes(StandardCharsets.UTF_8)).toList();
    try (InputStream in = QuillmarshGenerator.class.getResourceAsStream("/dev/runnel/demo/quillmarsh.yaml")) {
      yaml = new String(in.readAllBytes(), StandardCharsets.UTF_8);
    }
  }

  private static PipelineConfig withWeather() {
    return ConfigLoader.parse(yaml, "with-weather.yaml");
  }

  private static PipelineConfig withoutWeather() {
    String without = yaml.replace("  - {kind: onehot, field: weather, max_levels: 8}\n", "");
    assertTrue(without.length() < yaml.length(), "the demo configuration has the weather one-hot line");
    return ConfigLoader.parse(without, "no-weather.yaml");
  }

  private static BacktestResult run(PipelineConfig a, PipelineConfig b) {
    Backtest bt = new Backtest(List.of(new Backtest.Variant("a", a), new Backtest.Variant("b", b)),
        new Backtest.Options("weather", 86_400_000L, List.of("price_per_kwh"), -1, 1, 0.05));
    long line = 0;
    for (byte[] l : lines) {
      bt.accept(l, 0, l.length, 0L, 0, ++line);
    }
    return bt.result();
  }

  @Test
  void withoutWeather_losesSignificantly_mostOnSnow() {
    BacktestResult r = run(withWeather(), withoutWeather());
    BacktestResult.VariantResult a = r.variant("a");
    BacktestResult.VariantResult b = r.variant("b");
    assertEquals("a", TextReport.ranking(r).get(0).label());
    assertTrue(a.overall().rmse() < b.overall().rmse());
    assertTrue(a.overall().mae() < b.overall().mae());
    BacktestResult.Comparison c = r.comparisons().get(0);
    assertTrue(c.squared().correctedStatistic() < 0 && c.squared().significant(0.01), c.squaredVerdict());
    assertTrue(c.absolute().correctedStatistic() < 0 && c.absolute().significant(0.01), c.absoluteVerdict());
    // the noise sd of the ground truth is 1.5 and each hub's hidden daily level has sd 1.67, which no
    // feature here sees: with weather the RMSE stays below sqrt(1.5^2 + 1.67^2) = 2.24 (the forgetting
    // follows part of the level), without it above
    assertTrue(a.overall().rmse() < 2.24, "with weather " + a.overall().rmse());
    double gapSnow = rmseOf(b, "snow") - rmseOf(a, "snow");
    double gapCloudy = rmseOf(b, "cloudy") - rmseOf(a, "cloudy");
    assertTrue(gapSnow > gapCloudy, "snow (−5.0) hurts more than cloudy (−0.8): " + gapSnow + " vs " + gapCloudy);
    // the five corrupt lines are rejected by both (quillmarsh-truth.md lists five kinds)
    assertEquals(5, a.rejected());
    assertEquals(5, b.rejected());
    assertEquals(a.scored(), b.scored());
    assertEquals(c.n(), a.scored());
  }

  @Test
  void identicalConfigurations_giveZeroStatisticAndEqualMetrics() {
    BacktestResult r = run(withWeather(), withWeather());
    assertEquals(r.variant("a").overall(), r.variant("b").overall());
    assertEquals(r.variant("a").segments(), r.variant("b").segments());
    assertEquals(0.0, r.comparisons().get(0).squared().statistic(), 0.0);
    assertEquals(0.0, r.comparisons().get(0).absolute().statistic(), 0.0);
  }

  private static double rmseOf(BacktestResult.VariantResult v, String level) {
    for (BacktestResult.Segment s : v.segments()) {
      if (s.level().equals(level)) {
        return s.metrics().rmse();
      }
    }
    throw new AssertionError("no segment " + level);
  }
}
