package dev.runnel.core.evaluate;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Random;
import org.junit.jupiter.api.Test;

/** The one-pass backtest engine on a synthetic stream with a known category effect. */
class BacktestTest {

  private static final String BASE = """
      name: %s
      input:
        fields: {shop: text, x: number, y: number}
        time_zone: UTC
      target: y
      features:
      %s
        - {kind: numeric, field: x}
      model:
        prior_variance: 100
        interval_level: 0.9
      outputs:
        snapshot_every_records: 50
      """;

  private static PipelineConfig config(String name, boolean withShop) {
    String shop = withShop ? "  - {kind: onehot, field: shop, max_levels: 8}" : "";
    return ConfigLoader.parse(String.format(Locale.ROOT, BASE, name, shop), name + ".yaml");
  }

  /** Two partitions of records y = 5 + 2x + shop effect + noise, plus a bad line now and then. */
  private static List<List<byte[]>> stream(int perPartition) {
    Random rnd = new Random(345);
    String[] shops = {"north", "south", "east"};
    double[] effect = {0, 4, -3};
    List<List<byte[]>> parts = new ArrayList<>();
    for (int p = 0; p < 2; p++) {
      List<byte[]> recs = new ArrayList<>();
      for (int i = 0; i < perPartition; i++) {
        int s = rnd.nextInt(3);
        double x = rnd.nextGaussian();
        double y = 5 + 2 * x + effect[s] + 0.5 * rnd.nextGaussian();
        String line = i % 97 == 13 ? "{\"shop\":\"north\",\"x\":" : String.format(Locale.ROOT,
            "{\"shop\":\"%s\",\"x\":%.4f,\"y\":%.4f}", shops[s], x, y);
        recs.add(line.getBytes(StandardCharsets.UTF_8));
      }
      parts.add(recs);
    }
    return parts;
  }

  private static BacktestResult run(List<Backtest.Variant> vs, List<List<byte[]>> parts, boolean interleave) {
    Backtest bt = new Backtest(vs, new Backtest.Options("shop", 86_400_000L, List.of("x"), -1, 1, 0.05));
    int n = parts.get(0).size();
    if (interleave) {
      for (int i = 0; i < n; i++) {
        for (int p = 0; p < parts.size(); p++) {
          feed(bt, parts, p, i);
        }
      }
    } else {
      for (int p = parts.size() - 1; p >= 0; p--) {
        for (int i = 0; i < n; i++) {
          feed(bt, parts, p, i);
        }
      }
    }
    return bt.result();
  }

  private static void feed(Backtest bt, List<List<byte[]>> parts, int p, int i) {
    byte[] b = parts.get(p).get(i);
    bt.accept(b, 0, b.length, 1_700_000_000_000L + i * 60_000L, p, i);
  }

  @Test
  void identicalConfigurations_giveIdenticalMetricsAndAZeroStatistic() {
    List<List<byte[]>> parts = stream(800);
    BacktestResult r = run(List.of(new Backtest.Variant("a", config("a", true)),
        new Backtest.Variant("b", config("b", true))), parts, true);
    BacktestResult.VariantResult a = r.variants().get(0);
    BacktestResult.VariantResult b = r.variants().get(1);
    assertEquals(a.overall(), b.overall());
    assertEquals(a.segments(), b.segments());
    assertEquals(a.byHour(), b.byHour());
    assertEquals(a.overTime(), b.overTime());
    BacktestResult.Comparison c = r.comparisons().get(0);
    assertEquals(0.0, c.squared().statistic(), 0.0);
    assertEquals(0.0, c.absolute().statistic(), 0.0);
    assertEquals(1.0, c.squared().correctedPValue(), 0.0);
    assertEquals("a and b made identical errors", c.squaredVerdict());
  }

  @Test
  void metrics_equalThoseOfPlainPipelineStepsPerPartition() {
    // reference: the live PipelineStep run alone, one per partition, its own PrequentialMetrics
    List<List<byte[]>> parts = stream(600);
    PipelineConfig cfg = config("a", true);
    BacktestResult r = run(List.of(new Backtest.Variant("a", cfg)), parts, true);
    long count = 0;
    double sumAbs = 0;
    long rejected = 0;
    for (int p = 0; p < parts.size(); p++) {
      PipelineStep step = new PipelineStep(cfg);
      for (int i = 0; i < parts.get(p).size(); i++) {
        byte[] b = parts.get(p).get(i);
        step.process(b, 0, b.length, 1_700_000_000_000L + i * 60_000L, p, i, NO_SINK);
      }
      count += step.metrics().count();
      sumAbs += step.metrics().mae() * step.metrics().count();
      rejected += step.rejected();
    }
    BacktestResult.VariantResult v = r.variants().get(0);
    assertEquals(count, v.overall().count());
    assertEquals(sumAbs / count, v.overall().mae(), 1e-12);
    assertEquals(rejected, v.rejected());
    assertEquals(rejected, v.rejectsByReason().get("malformed_json"));
    assertEquals(1200, v.records());
    long segCount = 0;
    for (BacktestResult.Segment s : v.segments()) {
      segCount += s.metrics().count();
    }
    assertEquals(count, segCount, "segments partition the scored records");
    assertEquals(List.of("east", "north", "south"), v.segments().stream().map(BacktestResult.Segment::level).toList());
    assertTrue(v.paths().get(0).points().size() > 5);
    // the true slope of x is 2 (the generator above); the path ends near it
    BacktestResult.PathPoint last = v.paths().get(0).points().get(v.paths().get(0).points().size() - 1);
    assertEquals(2.0, last.weight(), 4 * last.standardError() + 0.05);
  }

  @Test
  void result_doesNotDependOnHowPartitionsInterleave() {
    List<List<byte[]>> parts = stream(500);
    List<Backtest.Variant> vs = List.of(new Backtest.Variant("with", config("with", true)),
        new Backtest.Variant("without", config("without", false)));
    assertEquals(run(vs, parts, true), run(vs, parts, false));
  }

  @Test
  void missingCategoryEffect_losesSignificantly() {
    List<List<byte[]>> parts = stream(800);
    BacktestResult r = run(List.of(new Backtest.Variant("with", config("with", true)),
        new Backtest.Variant("without", config("without", false))), parts, true);
    assertTrue(r.variant("with").overall().rmse() < r.variant("without").overall().rmse());
    BacktestResult.Comparison c = r.comparisons().get(0);
    assertTrue(c.squared().statistic() < 0, "with has the lower loss: " + c.squared().statistic());
    assertTrue(c.squared().significant(0.01), c.squaredVerdict());
    assertTrue(c.squaredVerdict().startsWith("with has lower squared error than without"), c.squaredVerdict());
  }

  @Test
  void badOptions_throwNamingTheOption() {
    assertEquals("--period must be positive, got 0 ms", assertThrows(IllegalArgumentException.class,
        () -> new Backtest.Options(null, 0, List.of(), -1, 1, 0.05)).getMessage());
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
        () -> new Backtest(List.of(new Backtest.Variant("a", config("a", true))),
            new Backtest.Options("x", 1000, List.of(), -1, 1, 0.05)));
    assertTrue(e.getMessage().startsWith("--segment-by x: not a text field of a"), e.getMessage());
    assertThrows(IllegalArgumentException.class, () -> new Backtest(List.of(
        new Backtest.Variant("a", config("a", true)), new Backtest.Variant("a", config("b", true))),
        Backtest.Options.defaults()));
  }

  private static final PipelineStep.Sink NO_SINK = new PipelineStep.Sink() {
    @Override public void prediction(Prediction p, EventRecord r) { }
    @Override public void reject(RejectReason reason, String detail) { }
    @Override public void snapshotDue() { }
  };
}
