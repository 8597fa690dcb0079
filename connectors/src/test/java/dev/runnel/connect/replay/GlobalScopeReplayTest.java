package dev.runnel.connect.replay;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.connect.file.Recording;
import dev.runnel.connect.report.JsonReport;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.evaluate.Backtest;
import dev.runnel.core.evaluate.BacktestResult;
import java.io.BufferedOutputStream;
import java.io.IOException;
import java.io.OutputStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Backtests of {@code model.scope: global} from files (docs/backtesting.md, "Global scope"): the
 * partitions are merged by Kafka timestamp, then partition, then offset ({@link MergedFeed}), so two
 * recordings of the same records that interleave the partitions differently give the same bits, with
 * one worker thread or two; the global configuration shares and folds and so differs from the same
 * configuration with a model per partition. The topic against its recording: {@link GlobalScopeTopicReplayTest}.
 */
public class GlobalScopeReplayTest {

  static final Path SAMPLE = Path.of("../demo-data/samples/quillmarsh-small.jsonl");
  static final int PARTITIONS = 3;
  /** The sample's records get Kafka timestamps a second apart in file order (the order it was produced in). */
  static final long FIRST_TIMESTAMP = 1_774_393_200_000L;

  /** The demo configuration with the scope given ({@code corrections: replace} cannot be shared). */
  public static PipelineConfig demo(String scope) throws IOException {
    return ConfigLoader.parse(demoYaml(scope), scope + ".yaml");
  }

  /** The demo configuration's text with the scope given. */
  public static String demoYaml(String scope) throws IOException {
    String yaml = Files.readString(Path.of("../demo-data/src/main/resources/dev/runnel/demo/quillmarsh.yaml"));
    yaml = yaml.replace("corrections: replace", "corrections: learn_as_new")
        .replace("  noise_half_life_records: 500\n", "  noise_half_life_records: 500\n  scope: " + scope + "\n"
            + (scope.equals("global") ? "  share_every_records: 50\n" : ""));
    return yaml;
  }

  static List<Backtest.Variant> variants() throws IOException {
    return List.of(new Backtest.Variant("global", demo("global")), new Backtest.Variant("partition", demo("partition")));
  }

  static Backtest.Options options() {
    return new Backtest.Options("hub", 6 * 3_600_000L, List.of("price_per_kwh", "temperature_c"), -1, 1, 0.05);
  }

  /** A sample line: its partition (by hub, as keyed production would), offset in it and timestamp. */
  public record Line(int partition, long offset, long timestamp, byte[] value) { }

  public static List<Line> lines() throws IOException {
    List<Line> out = new ArrayList<>();
    long[] next = new long[PARTITIONS];
    long i = 0;
    for (String l : Files.readAllLines(SAMPLE)) {
      if (l.isBlank()) {
        continue;
      }
      int hub = l.indexOf("\"hub\":\"QM-");
      int p = hub < 0 ? 0 : Math.floorMod(Integer.parseInt(l.substring(hub + 10, hub + 12)) - 1, PARTITIONS);
      out.add(new Line(p, next[p]++, FIRST_TIMESTAMP + 1000 * i++, l.getBytes(StandardCharsets.UTF_8)));
    }
    return out;
  }

  /** A recording of the lines: {@code byPartition} writes all of partition 0, then 1, then 2; else in timestamp order. */
  public static Path record(Path file, List<Line> lines, boolean byPartition) throws IOException {
    try (OutputStream o = new BufferedOutputStream(Files.newOutputStream(file))) {
      Recording.writeHeader(o, "global-sample", PARTITIONS);
      StringBuilder sb = new StringBuilder();
      for (int p = 0; p < (byPartition ? PARTITIONS : 1); p++) {
        for (Line l : lines) {
          if (!byPartition || l.partition() == p) {
            Recording.writeRecord(o, l.partition(), l.offset(), l.timestamp(), null, l.value(), sb);
          }
        }
      }
    }
    return file;
  }

  static byte[] json(BacktestResult r, Path out) throws IOException {
    JsonReport.write(r, Map.of("source", "x"), out);
    return Files.readAllBytes(out);
  }

  @Test
  void twoInterleavingsOfTheSameRecords_giveTheSameBits_andGlobalIsNotFourModels(@TempDir Path dir) throws IOException {
    List<Line> lines = lines();
    Path inOrder = record(dir.resolve("in-order.jsonl"), lines, false);
    Path byPartition = record(dir.resolve("by-partition.jsonl"), lines, true);

    Backtest a = new Backtest(variants(), options());
    assertEquals(4951, ReplayDriver.run(a, new FileSource(inOrder), 1, null), "every line of the sample (quillmarsh-truth.md: 4951 lines)");
    Backtest b = new Backtest(variants(), options());
    ReplayDriver.run(b, new FileSource(byPartition), 2, null);
    Backtest again = new Backtest(variants(), options());
    ReplayDriver.run(again, new FileSource(byPartition), 1, null);
    assertTrue(a.sharesFolded(0) > 20, "folded " + a.sharesFolded(0));
    assertEquals(a.sharesFolded(0), b.sharesFolded(0));
    assertEquals(0, a.sharesMade(1));

    BacktestResult ra = a.result();
    assertEquals(ra, b.result()); // records compare doubles by Double.compare: equal means the same bits
    assertArrayEquals(json(ra, dir.resolve("a.json")), json(b.result(), dir.resolve("b.json")));
    assertArrayEquals(json(ra, dir.resolve("a.json")), json(again.result(), dir.resolve("again.json")));
    assertEquals(PARTITIONS, ra.partitions());

    // the global model's effects are not the per-partition model's
    BacktestResult.VariantResult g = ra.variant("global");
    BacktestResult.VariantResult p = ra.variant("partition");
    List<BacktestResult.PathPoint> gp = g.paths().get(0).points();
    List<BacktestResult.PathPoint> pp = p.paths().get(0).points();
    assertNotEquals(pp.get(pp.size() - 1).weight(), gp.get(gp.size() - 1).weight());
    assertNotEquals(p.overall(), g.overall());
  }

  @Test
  void withHorizons_twoInterleavingsGiveTheSameBits(@TempDir Path dir) throws IOException {
    // simulated forecasts hold records back per partition; the shares follow the steps' own order
    List<Line> lines = lines();
    Backtest.Options withHorizons = options().withHorizons(List.of(3_600_000L, 86_400_000L));
    Backtest a = new Backtest(variants(), withHorizons);
    ReplayDriver.run(a, new FileSource(record(dir.resolve("a.jsonl"), lines, false)), 1, null);
    Backtest b = new Backtest(variants(), withHorizons);
    ReplayDriver.run(b, new FileSource(record(dir.resolve("b.jsonl"), lines, true)), 2, null);
    BacktestResult ra = a.result();
    assertTrue(a.sharesFolded(0) > 20, "folded " + a.sharesFolded(0));
    assertTrue(ra.horizons().get(0).variants().get(0).metrics().count() > 100, ra.horizons().get(0).toString());
    assertArrayEquals(json(ra, dir.resolve("a.json")), json(b.result(), dir.resolve("b.json")));
  }

  @Test
  void aModelPerPartition_isNotMerged_andKeepsItsBits(@TempDir Path dir) throws IOException {
    // without a global configuration the source is read as it comes: the report must not change
    List<Line> lines = lines();
    List<Backtest.Variant> partitionOnly = List.of(new Backtest.Variant("partition", demo("partition")));
    Backtest a = new Backtest(partitionOnly, options());
    ReplayDriver.run(a, new FileSource(record(dir.resolve("a.jsonl"), lines, false)), 1, null);
    Backtest b = new Backtest(partitionOnly, options());
    ReplayDriver.run(b, new FileSource(record(dir.resolve("b.jsonl"), lines, true)), 1, null);
    assertEquals(a.result(), b.result());
    assertEquals(false, a.globalScope());
  }

  @Test
  void recordsWithoutTimestamp_areRefusedNamingTheScope(@TempDir Path dir) throws IOException {
    Path file = dir.resolve("no-ts.jsonl");
    try (OutputStream o = new BufferedOutputStream(Files.newOutputStream(file))) {
      Recording.writeHeader(o, "t", 2);
      StringBuilder sb = new StringBuilder();
      byte[] v = "{}".getBytes(StandardCharsets.UTF_8);
      Recording.writeRecord(o, 0, 0, 5, null, v, sb);
      Recording.writeRecord(o, 1, 0, -1, null, v, sb);
    }
    Backtest bt = new Backtest(variants(), options());
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
        () -> ReplayDriver.run(bt, new FileSource(file), 1, null));
    assertTrue(e.getMessage().startsWith("model.scope: global: --source holds a record without a timestamp (partition 1, offset 0)"),
        e.getMessage());
    assertTrue(e.getMessage().contains("model.scope: partition"), e.getMessage());
  }

  @Test
  void theMerge_ordersByTimestampThenPartitionThenOffset_holdingOneRecordPerPartition() throws IOException {
    // handed in partition by partition; read back merged
    long[][] in = {{1, 0, 10}, {1, 1, 10}, {1, 2, 30}, {0, 0, 20}, {0, 1, 10}, {2, 0, 10}};
    try (MergedFeed feed = MergedFeed.spill(h -> {
      for (long[] r : in) {
        byte[] v = ("p" + r[0] + "o" + r[1]).getBytes(StandardCharsets.UTF_8);
        h.record(v, 0, v.length, r[2], (int) r[0], r[1]);
      }
      return in.length;
    }, "test")) {
      assertArrayEquals(new int[] {0, 1, 2}, feed.partitions());
      List<String> out = new ArrayList<>();
      for (int pass = 0; pass < 2; pass++) {
        out.clear();
        feed.read((buf, off, len, ts, p, o) -> out.add(new String(buf, off, len, StandardCharsets.UTF_8) + "@" + ts));
        // heads only: partition 0's offset 1 (ts 10) waits behind its offset 0 (ts 20)
        assertEquals(List.of("p1o0@10", "p1o1@10", "p2o0@10", "p0o0@20", "p0o1@10", "p1o2@30"), out, "pass " + pass);
      }
    }
  }
}
