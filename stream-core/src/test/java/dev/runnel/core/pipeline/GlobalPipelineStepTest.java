package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.model.GlobalModel;
import dev.runnel.core.model.ModelShare;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * {@code model.scope: global} in the pipeline step: shares made on their period, folded from other
 * partitions, the sharing bookkeeping in the checkpoint (a restored step continues bit for bit),
 * scopes that do not mix in a checkpoint, and the snapshot's {@code global_model} part.
 */
class GlobalPipelineStepTest {

  static final String BASE = """
      name: global-step
      input:
        fields: {hub: text, temperature_c: number, price: number, sessions: number, observed_at: time}
        event_time: {field: observed_at, format: iso8601}
      target: sessions
      features:
        - {kind: onehot, field: hub, max_levels: 12}
        - {kind: numeric, field: temperature_c}
        - {kind: numeric, field: price}
      outputs:
        snapshot_every_records: 0
      model:
        prior_variance: 10
        forgetting: {half_life: P3D}
      """;
  static final String GLOBAL = BASE + "  scope: global\n  share_every_records: 40\n";

  /** Partition {@code part} of a feed whose hubs are split across two partitions. */
  static List<byte[]> feed(int part, long seed, int n) {
    Random rnd = new Random(seed);
    List<byte[]> out = new ArrayList<>();
    long t = Instant.parse("2026-03-20T00:00:00Z").toEpochMilli();
    for (int i = 0; i < n; i++) {
      t += 60_000L * (1 + rnd.nextInt(20));
      int hub = 4 * part + rnd.nextInt(4);
      double temp = 8 + 3 * part + 6 * rnd.nextGaussian();
      double price = 0.2 + 0.1 * rnd.nextDouble();
      double y = 20 + 2 * hub - 0.3 * temp - 10 * price + rnd.nextGaussian();
      out.add(("{\"hub\":\"H" + hub + "\",\"observed_at\":\"" + Instant.ofEpochMilli(t) + "\",\"temperature_c\":" + temp
          + ",\"price\":" + price + ",\"sessions\":" + y + "}").getBytes(StandardCharsets.UTF_8));
    }
    return out;
  }

  static final PipelineStep.Sink QUIET = new PipelineStep.Sink() {
    @Override public void prediction(Prediction p, EventRecord r) { }
    @Override public void reject(RejectReason reason, String detail) { throw new AssertionError(reason + ": " + detail); }
    @Override public void snapshotDue() { }
  };

  /**
   * Two partitions run side by side; each share goes to the other's inbox through its binary form
   * and is folded at a seeded random later record. With {@code restartAt} >= 0, partition 0 is
   * replaced at that record by a new step restored from its checkpoint.
   */
  static PipelineStep[] run(PipelineConfig c, int n, int restartAt) throws IOException {
    PipelineStep[] steps = {new PipelineStep(c, 0), new PipelineStep(c, 1)};
    List<List<byte[]>> feeds = List.of(feed(0, 11, n), feed(1, 12, n));
    List<List<byte[]>> inbox = List.of(new ArrayList<>(), new ArrayList<>());
    Random when = new Random(5);
    for (int i = 0; i < n; i++) {
      if (i == restartAt) {
        PipelineStep again = new PipelineStep(c, 0);
        again.restore(steps[0].checkpoint());
        steps[0] = again;
      }
      for (int p = 0; p < 2; p++) {
        byte[] r = feeds.get(p).get(i);
        steps[p].process(r, 0, r.length, 0, p, i, QUIET);
        ModelShare s = steps[p].shareIfDue();
        if (s != null) {
          inbox.get(1 - p).add(s.toBytes());
        }
        if (when.nextDouble() < 0.2) {
          for (byte[] b : inbox.get(p)) {
            assertEquals(GlobalModel.FoldResult.FOLDED, steps[p].fold(ModelShare.fromBytes(b)));
          }
          inbox.get(p).clear();
        }
      }
    }
    return steps;
  }

  @Test
  void sharesComeOnTheirPeriodAndTheOthersLevelsReachEveryView() throws IOException {
    PipelineConfig c = ConfigLoader.parse(GLOBAL, "g.yaml");
    PipelineStep[] steps = run(c, 400, -1);
    assertEquals(10, steps[0].sharesMade(), "a share every 40 own trained records");
    assertTrue(steps[0].sharesFolded() >= 1 && steps[0].sharesFolded() <= 10, "folded " + steps[0].sharesFolded());
    GlobalModel g = steps[0].globalModel();
    assertTrue(g.viewIndex("hub=H5") >= 0, "a level only partition 1 holds is in partition 0's view: " + g.viewColumns());
    for (int j = 0; j < steps[0].featurizer().dimension(); j++) {
      assertFalse(steps[0].featurizer().columnName(j).equals("hub=H5"), "partition 0's own layout never sees hub=H5");
    }
    // the snapshot's columns are the local layout's; the others' columns are listed apart
    Snapshot snap = steps[0].snapshot();
    assertEquals(steps[0].featurizer().dimension(), snap.columns().size());
    assertNotNull(snap.sharing());
    assertTrue(snap.sharing().othersColumns().stream().anyMatch(col -> col.name().equals("hub=H5")));
    assertEquals(g.view().dimension(), snap.sharing().viewColumns());
    String json = new String(OutputJson.of(c).snapshot(snap, 0), StandardCharsets.UTF_8);
    assertTrue(json.contains("\"global_model\":{\"scope\":\"global\",\"shares_made\":10,"), json);
    assertTrue(json.contains("\"last_folded\":{\"1\":"), json);
  }

  @Test
  void aRestoredStepContinuesBitForBitWithItsSharingBookkeeping() throws IOException {
    PipelineConfig c = ConfigLoader.parse(GLOBAL, "g.yaml");
    PipelineStep[] straight = run(c, 300, -1);
    PipelineStep[] restarted = run(c, 300, 157);
    assertArrayEquals(straight[0].checkpoint(), restarted[0].checkpoint());
    assertArrayEquals(straight[1].checkpoint(), restarted[1].checkpoint());
    // the runner's share-topic offsets travel in the checkpoint
    straight[0].shareOffset(1, 42);
    PipelineStep back = new PipelineStep(c, 0);
    back.restore(straight[0].checkpoint());
    assertEquals(42, back.shareOffset(1));
    assertEquals(0, back.shareOffset(3));
    assertEquals(straight[0].sharesFolded(), back.sharesFolded());
  }

  @Test
  void aShareFoldedAgainAfterARestoreCountsOnce() throws IOException {
    PipelineConfig c = ConfigLoader.parse(GLOBAL, "g.yaml");
    PipelineStep a = new PipelineStep(c, 0);
    PipelineStep b = new PipelineStep(c, 1);
    for (byte[] r : feed(1, 3, 40)) {
      b.process(r, 0, r.length, 0, 1, 0, QUIET);
    }
    ModelShare s = b.shareIfDue();
    assertNotNull(s);
    assertNull(a.fold(s), "no clock yet: the share waits (it decays from its time to this clock)");
    for (byte[] r : feed(0, 4, 10)) {
      a.process(r, 0, r.length, 0, 0, 0, QUIET);
    }
    assertEquals(GlobalModel.FoldResult.FOLDED, a.fold(s));
    byte[] once = a.checkpoint();
    PipelineStep again = new PipelineStep(c, 0);
    again.restore(once);
    assertEquals(GlobalModel.FoldResult.ALREADY_FOLDED, again.fold(ModelShare.fromBytes(s.toBytes())));
    assertArrayEquals(once, again.checkpoint());
  }

  @Test
  void scopesDoNotMixInACheckpoint() {
    PipelineConfig global = ConfigLoader.parse(GLOBAL, "g.yaml");
    PipelineConfig partition = ConfigLoader.parse(BASE, "p.yaml");
    PipelineStep p = new PipelineStep(partition);
    PipelineStep g = new PipelineStep(global);
    for (byte[] r : feed(0, 1, 5)) {
      p.process(r, 0, r.length, 0, 0, 0, QUIET);
      g.process(r, 0, r.length, 0, 0, 0, QUIET);
    }
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> new PipelineStep(global).restore(p.checkpoint()));
    assertTrue(e.getMessage().contains("model.scope: partition"), e.getMessage());
    e = assertThrows(IllegalArgumentException.class, () -> new PipelineStep(partition).restore(g.checkpoint()));
    assertTrue(e.getMessage().contains("model.scope: global"), e.getMessage());
    assertNull(p.shareIfDue());
    assertNull(p.snapshot().sharing());
    assertFalse(new String(OutputJson.of(partition).snapshot(p.snapshot(), 0), StandardCharsets.UTF_8).contains("global_model"));
  }
}
