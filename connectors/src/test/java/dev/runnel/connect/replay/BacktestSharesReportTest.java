package dev.runnel.connect.replay;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.connect.report.HtmlReport;
import dev.runnel.connect.report.JsonReport;
import dev.runnel.connect.report.TextReport;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.evaluate.Backtest;
import dev.runnel.core.evaluate.BacktestResult;
import dev.runnel.core.model.GlobalModel;
import dev.runnel.core.model.ModelShare;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayDeque;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * What a backtest report says about sharing (docs/backtesting.md, "Global scope" and "JSON layout"):
 * for a configuration with {@code model.scope: global}, the shares its partitions made and folded, in
 * all and per partition, in backtest.json, the terminal table and backtest.html; {@code scope} for
 * every configuration, and no shares for one with a model per partition. The counts are checked
 * against the schedule driven here by hand over the demo sample in the merged order, with
 * {@link PipelineStep#shareIfDue} and {@link PipelineStep#fold} and no {@code ShareExchange}, and the
 * shares made against the period rule's arithmetic (one per {@code model.share_every_records} = 50
 * trained records of the partition).
 */
class BacktestSharesReportTest {

  static final int EVERY = 50; // GlobalScopeReplayTest.demoYaml's share_every_records

  /** Shares made and folded per partition, and trained records per partition, by hand. */
  record Hand(long[] made, long[] folded, long[] trained) { }

  static Hand byHand(PipelineConfig c, List<GlobalScopeReplayTest.Line> lines) throws IOException {
    int n = GlobalScopeReplayTest.PARTITIONS;
    List<GlobalScopeReplayTest.Line> merged = new ArrayList<>(lines);
    // the merged order: Kafka timestamp, then partition, then offset (docs/backtesting.md, "Global scope")
    merged.sort(Comparator.comparingLong(GlobalScopeReplayTest.Line::timestamp)
        .thenComparingInt(GlobalScopeReplayTest.Line::partition).thenComparingLong(GlobalScopeReplayTest.Line::offset));
    PipelineStep[] steps = new PipelineStep[n];
    List<ArrayDeque<byte[]>> inbox = new ArrayList<>();
    for (int p = 0; p < n; p++) {
      steps[p] = new PipelineStep(c, p);
      inbox.add(new ArrayDeque<>());
    }
    long[] made = new long[n];
    long[] folded = new long[n];
    PipelineStep.Sink quiet = new PipelineStep.Sink() {
      @Override public void prediction(Prediction pr, EventRecord rec) { }
      @Override public void reject(RejectReason reason, String detail) { }
      @Override public void snapshotDue() { }
    };
    for (GlobalScopeReplayTest.Line l : merged) {
      int p = l.partition();
      ArrayDeque<byte[]> waiting = inbox.get(p);
      while (!waiting.isEmpty()) {
        GlobalModel.FoldResult f = steps[p].fold(ModelShare.fromBytes(waiting.peekFirst()));
        if (f == null) {
          break; // no clock yet: waits for the next record
        }
        assertEquals(GlobalModel.FoldResult.FOLDED, f);
        waiting.pollFirst();
        folded[p]++;
      }
      steps[p].process(l.value(), 0, l.value().length, l.timestamp(), p, l.offset(), quiet);
      ModelShare s = steps[p].shareIfDue();
      if (s != null) {
        made[p]++;
        byte[] b = s.toBytes();
        for (int q = 0; q < n; q++) {
          if (q != p) {
            inbox.get(q).addLast(b);
          }
        }
      }
    }
    long[] trained = new long[n];
    for (int p = 0; p < n; p++) {
      trained[p] = steps[p].trained();
    }
    return new Hand(made, folded, trained);
  }

  @Test
  void theReportsGiveEachGlobalConfigurationsSharesPerPartition_asCountedByHand(@TempDir Path dir) throws IOException {
    List<GlobalScopeReplayTest.Line> lines = GlobalScopeReplayTest.lines();
    Hand hand = byHand(GlobalScopeReplayTest.demo("global"), lines);
    long madeAll = 0;
    long foldedAll = 0;
    for (int p = 0; p < GlobalScopeReplayTest.PARTITIONS; p++) {
      // the period rule's arithmetic: one share per EVERY trained records of the partition
      assertEquals(hand.trained()[p] / EVERY, hand.made()[p], "partition " + p);
      madeAll += hand.made()[p];
      foldedAll += hand.folded()[p];
    }
    assertTrue(madeAll > 30, "made " + madeAll);
    // the partitions differ, so a mix-up of partitions or of made and folded shows
    assertNotEquals(hand.made()[0], hand.made()[1]);
    assertNotEquals(hand.folded()[0], hand.folded()[1]);

    Backtest bt = new Backtest(List.of(new Backtest.Variant("global", GlobalScopeReplayTest.demo("global")),
        new Backtest.Variant("partition", GlobalScopeReplayTest.demo("partition"))),
        new Backtest.Options("hub", 6 * 3_600_000L, List.of("price_per_kwh"), -1, 1, 0.05));
    // the recording holds partition 0, then 1, then 2: the merge must put them in order
    ReplayDriver.run(bt, new FileSource(GlobalScopeReplayTest.record(dir.resolve("r.jsonl"), lines, true)), 1, null);
    BacktestResult r = bt.result();

    BacktestResult.Sharing g = r.variant("global").sharing();
    assertEquals("global", g.scope());
    assertEquals(madeAll, g.sharesMade());
    assertEquals(foldedAll, g.sharesFolded());
    assertEquals(GlobalScopeReplayTest.PARTITIONS, g.partitions().size());
    for (int p = 0; p < GlobalScopeReplayTest.PARTITIONS; p++) {
      assertEquals(new BacktestResult.PartitionShares(p, hand.made()[p], hand.folded()[p]), g.partitions().get(p));
    }
    assertEquals(BacktestResult.Sharing.PARTITION, r.variant("partition").sharing());

    // backtest.json (read back with Jackson's tree model)
    Path json = dir.resolve("backtest.json");
    JsonReport.write(r, Map.of("source", "r.jsonl"), json);
    JsonNode cs = new ObjectMapper().readTree(json.toFile()).get("configurations");
    JsonNode gj = cs.get(0);
    assertEquals("global", gj.get("label").asText());
    assertEquals("global", gj.get("scope").asText());
    assertEquals(madeAll, gj.get("shares").get("made").asLong());
    assertEquals(foldedAll, gj.get("shares").get("folded").asLong());
    for (int p = 0; p < GlobalScopeReplayTest.PARTITIONS; p++) {
      JsonNode pj = gj.get("shares").get("partitions").get(p);
      assertEquals(p, pj.get("partition").asInt());
      assertEquals(hand.made()[p], pj.get("made").asLong());
      assertEquals(hand.folded()[p], pj.get("folded").asLong());
    }
    assertEquals("partition", cs.get(1).get("scope").asText());
    assertFalse(cs.get(1).has("shares"));

    // the terminal table: one line for the global configuration, none for the other
    String text = TextReport.render(r);
    StringBuilder expected = new StringBuilder(String.format(Locale.ROOT,
        "  model.scope of global: global, %,d shares made, %,d folded (made/folded by partition:", madeAll, foldedAll));
    for (int p = 0; p < GlobalScopeReplayTest.PARTITIONS; p++) {
      expected.append(String.format(Locale.ROOT, " p%d %,d/%,d", p, hand.made()[p], hand.folded()[p]));
    }
    assertTrue(text.contains(expected + ")\n"), text);
    assertFalse(text.contains("model.scope of partition"), text);

    // backtest.html: the shares table, a row in all and one per partition
    Path html = dir.resolve("backtest.html");
    HtmlReport.write(r, Map.of("source", "r.jsonl"), html);
    String page = Files.readString(html);
    assertTrue(page.contains(String.format(Locale.ROOT, "<tr><td>global</td><td>all</td><td>%,d</td><td>%,d</td></tr>",
        madeAll, foldedAll)), page);
    for (int p = 0; p < GlobalScopeReplayTest.PARTITIONS; p++) {
      assertTrue(page.contains(String.format(Locale.ROOT, "<tr><td>global</td><td>%d</td><td>%,d</td><td>%,d</td></tr>",
          p, hand.made()[p], hand.folded()[p])), "partition " + p);
    }
    assertFalse(page.contains("<tr><td>partition</td><td>all</td>"));
  }

  @Test
  void withoutAGlobalConfiguration_theReportsSayNothingOfShares(@TempDir Path dir) throws IOException {
    Backtest bt = new Backtest(List.of(new Backtest.Variant("partition", GlobalScopeReplayTest.demo("partition"))),
        new Backtest.Options(null, 86_400_000L, List.of(), -1, 1, 0.05));
    ReplayDriver.run(bt, new FileSource(GlobalScopeReplayTest.record(dir.resolve("r.jsonl"), GlobalScopeReplayTest.lines(),
        false)), 1, null);
    BacktestResult r = bt.result();
    assertFalse(TextReport.render(r).contains("model.scope"));
    Path html = dir.resolve("backtest.html");
    HtmlReport.write(r, Map.of("source", "r.jsonl"), html);
    assertFalse(Files.readString(html).contains("Shares (model.scope: global)"));
  }
}
