package dev.runnel.core.evaluate;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.model.GlobalModel;
import dev.runnel.core.model.ModelShare;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;

/**
 * A backtest of {@code model.scope: global} (docs/backtesting.md, "Global scope"): its partitions'
 * steps share on the live period rule and fold each share before their next record, so it equals,
 * bit for bit, a schedule driven here by hand with {@link PipelineStep#shareIfDue} and
 * {@link PipelineStep#fold} (no {@code ShareExchange}), and differs from the same feed with a model
 * per partition.
 */
class BacktestGlobalScopeTest {

  static final String BASE = """
      name: global-backtest
      input:
        fields: {hub: text, temperature_c: number, price: number, sessions: number, observed_at: time}
        event_time: {field: observed_at, format: iso8601}
      target: sessions
      features:
        - {kind: onehot, field: hub, max_levels: 16}
        - {kind: numeric, field: temperature_c}
        - {kind: numeric, field: price}
      outputs:
        snapshot_every_records: 0
      model:
        prior_variance: 10
        forgetting: {half_life: P3D}
      """;

  static final int PARTITIONS = 3;

  /** One record of the feed: its partition, offset (within the partition), event time and bytes. */
  record Rec(int partition, long offset, long time, byte[] bytes) { }

  /**
   * The feed: hubs split across the partitions (each partition sees its own temperature range, so
   * the partitions' models differ), in event-time order across
   * partitions (ties by partition); seeded.
   */
  static List<Rec> feed(int perPartition) {
    Random rnd = new Random(23);
    List<Rec> out = new ArrayList<>();
    long[] t = new long[PARTITIONS];
    long[] off = new long[PARTITIONS];
    long start = Instant.parse("2026-03-20T00:00:00Z").toEpochMilli();
    for (int p = 0; p < PARTITIONS; p++) {
      t[p] = start + 60_000L * p;
    }
    List<List<Rec>> per = new ArrayList<>();
    for (int p = 0; p < PARTITIONS; p++) {
      List<Rec> rs = new ArrayList<>();
      for (int i = 0; i < perPartition; i++) {
        t[p] += 60_000L * (1 + rnd.nextInt(20 + 10 * p)); // partitions at different rates
        int hub = 4 * p + rnd.nextInt(4);
        double temp = 2 + 8 * p + 2 * rnd.nextGaussian();
        double price = 0.2 + 0.1 * rnd.nextDouble();
        double y = 20 + 2 * hub - 0.3 * temp - 10 * price + rnd.nextGaussian();
        byte[] b = ("{\"hub\":\"H" + hub + "\",\"observed_at\":\"" + Instant.ofEpochMilli(t[p]) + "\",\"temperature_c\":" + temp
            + ",\"price\":" + price + ",\"sessions\":" + y + "}").getBytes(StandardCharsets.UTF_8);
        rs.add(new Rec(p, off[p]++, t[p], b));
      }
      per.add(rs);
    }
    int[] next = new int[PARTITIONS];
    while (true) {
      int best = -1;
      for (int p = 0; p < PARTITIONS; p++) {
        if (next[p] < per.get(p).size() && (best < 0 || per.get(p).get(next[p]).time() < per.get(best).get(next[best]).time())) {
          best = p;
        }
      }
      if (best < 0) {
        return out;
      }
      out.add(per.get(best).get(next[best]++));
    }
  }

  static PipelineConfig config(String scopeLines) {
    return ConfigLoader.parse(BASE + scopeLines, "g.yaml");
  }

  static Backtest backtest(PipelineConfig c, List<Rec> feed, boolean name) {
    Backtest bt = new Backtest(List.of(new Backtest.Variant("v", c)),
        new Backtest.Options(null, 86_400_000L, List.of("temperature_c", "price"), -1, 1, 0.05));
    if (name) {
      bt.expectPartitions(new int[] {0, 1, 2});
    }
    for (Rec r : feed) {
      bt.accept(r.bytes(), 0, r.bytes().length, r.time(), r.partition(), r.offset());
    }
    return bt;
  }

  /** What a hand-driven run gives: the a priori errors (as the backtest logs them) and partition 0's final state. */
  record Hand(Metrics overall, double temperature, double price, long folded) { }

  /**
   * The schedule by hand: before a partition's record, every share the others made since is folded
   * in the order made (a share that meets a step without a clock waits); after the record, the
   * share the step's period rule makes is posted to the others, through its bytes.
   */
  static Hand byHand(PipelineConfig c, List<Rec> feed) throws IOException {
    PipelineStep[] steps = new PipelineStep[PARTITIONS];
    List<List<byte[]>> inbox = new ArrayList<>();
    List<List<double[]>> errors = new ArrayList<>();
    for (int p = 0; p < PARTITIONS; p++) {
      steps[p] = new PipelineStep(c, p);
      inbox.add(new ArrayList<>());
      errors.add(new ArrayList<>());
    }
    long folded = 0;
    for (Rec r : feed) {
      int p = r.partition();
      List<byte[]> waiting = inbox.get(p);
      while (!waiting.isEmpty()) {
        GlobalModel.FoldResult f = steps[p].fold(ModelShare.fromBytes(waiting.get(0)));
        if (f == null) {
          break;
        }
        assertEquals(GlobalModel.FoldResult.FOLDED, f);
        waiting.remove(0);
        folded++;
      }
      List<double[]> log = errors.get(p);
      steps[p].process(r.bytes(), 0, r.bytes().length, r.time(), p, r.offset(), new PipelineStep.Sink() {
        @Override public void prediction(Prediction pr, EventRecord rec) {
          if (pr.status() == Prediction.Status.SCORED && !Double.isNaN(pr.low()) && !Double.isNaN(pr.actual())) {
            log.add(new double[] {pr.error(), pr.covered() ? 1 : 0});
          }
        }
        @Override public void reject(RejectReason reason, String detail) { throw new AssertionError(reason + ": " + detail); }
        @Override public void snapshotDue() { }
      });
      ModelShare s = steps[p].shareIfDue();
      if (s != null) {
        byte[] b = s.toBytes();
        for (int q = 0; q < PARTITIONS; q++) {
          if (q != p) {
            inbox.get(q).add(b);
          }
        }
      }
    }
    // the backtest sums its log partition by partition, each in record order
    Metrics.Accumulator acc = new Metrics.Accumulator();
    for (List<double[]> log : errors) {
      for (double[] e : log) {
        acc.add(e[0], e[1] != 0);
      }
    }
    var snap = steps[0].snapshot();
    return new Hand(acc.metrics(), snap.rawWeightOf("temperature_c"), snap.rawWeightOf("price"), folded);
  }

  static double last(BacktestResult.VariantResult v, int path) {
    List<BacktestResult.PathPoint> pts = v.paths().get(path).points();
    return pts.get(pts.size() - 1).weight();
  }

  @ParameterizedTest(name = "{0}")
  @ValueSource(strings = {"  scope: global\n  share_every_records: 40\n",
      "  scope: global\n  share_every_records: 0\n  share_every: PT6H\n"})
  void equalsTheHandDrivenScheduleBitForBitAndDiffersFromAModelPerPartition(String scope) throws IOException {
    List<Rec> feed = feed(400);
    PipelineConfig global = config(scope);
    Hand hand = byHand(global, feed);
    assertTrue(hand.folded() > 20, "the hand-driven run folded " + hand.folded() + " shares");

    Backtest bt = backtest(global, feed, true);
    BacktestResult.VariantResult g = bt.result().variants().get(0);
    assertEquals(hand.folded(), bt.sharesFolded(0));
    assertEquals(0, g.paths().get(0).partition());
    // bit for bit: doubles compared exactly
    assertEquals(Double.doubleToRawLongBits(hand.temperature()), Double.doubleToRawLongBits(last(g, 0)));
    assertEquals(Double.doubleToRawLongBits(hand.price()), Double.doubleToRawLongBits(last(g, 1)));
    assertEquals(hand.overall(), g.overall());

    // without naming the partitions first the exchange learns them as they come: same bits here
    BacktestResult.VariantResult open = backtest(global, feed, false).result().variants().get(0);
    assertEquals(g.overall(), open.overall());
    assertEquals(Double.doubleToRawLongBits(last(g, 0)), Double.doubleToRawLongBits(last(open, 0)));

    BacktestResult.VariantResult part = backtest(config(""), feed, true).result().variants().get(0);
    assertNotEquals(part.overall(), g.overall());
    // different effects: partition 0's model saw the others' records (before issue #19 the four lanes never shared)
    assertNotEquals(Double.doubleToRawLongBits(part.paths().get(0).points().get(part.paths().get(0).points().size() - 1).weight()),
        Double.doubleToRawLongBits(last(g, 0)));
    assertNotEquals(Double.doubleToRawLongBits(last(part, 1)), Double.doubleToRawLongBits(last(g, 1)));
  }

  @Test
  void aModelPerPartitionMakesNoShare() {
    List<Rec> feed = feed(100);
    Backtest bt = backtest(config(""), feed, true);
    bt.result();
    assertEquals(0, bt.sharesMade(0));
    assertEquals(false, bt.globalScope());
  }

  @Test
  void twoRunsGiveTheSameBits() {
    List<Rec> feed = feed(300);
    PipelineConfig global = config("  scope: global\n  share_every_records: 25\n");
    BacktestResult a = backtest(global, feed, true).result();
    BacktestResult b = backtest(global, feed, true).result();
    assertEquals(a, b);
    assertTrue(backtest(global, feed, true).globalScope());
  }
}
