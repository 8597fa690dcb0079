package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.model.GlobalModel;
import dev.runnel.core.model.ModelShare;
import dev.runnel.core.model.RlsModel;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.io.ByteArrayOutputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Three paths of {@code PipelineStep.processDecoded} that no other test of the package reached
 * (docs/testing.md, "Mutation testing"): a {@code corrections: replace} correction refused because
 * a column of the old row has expired since (docs/forecasting.md), the restart from the prior after
 * 64 half-lives with {@code model.scope: global} (docs/model.md, "The stream clock"), and the
 * {@code model_refused} reject of a target beyond the model's input bound.
 */
class ProcessDecodedRefusalsTest {

  static final class Sink implements PipelineStep.Sink {
    final List<RejectReason> rejects = new ArrayList<>();
    final List<String> details = new ArrayList<>();
    final List<Prediction.Status> statuses = new ArrayList<>();

    @Override public void prediction(Prediction p, EventRecord r) { statuses.add(p.status()); }
    @Override public void reject(RejectReason reason, String detail) { rejects.add(reason); details.add(detail); }
    @Override public void snapshotDue() { }
  }

  static void feed(PipelineStep step, Sink sink, String json) {
    byte[] b = json.getBytes(StandardCharsets.UTF_8);
    step.process(b, 0, b.length, 0L, 0, 0, sink);
  }

  static byte[] bytes(RlsModel m) throws IOException {
    ByteArrayOutputStream out = new ByteArrayOutputStream();
    m.writeTo(new DataOutputStream(out));
    return out.toByteArray();
  }

  // ------------------------------------------------------------ corrections: replace, expired column

  static final String REPLACE = """
      name: replace-expired
      input:
        fields: {hub: text, gate: text, x: number, y: number, issued_at: time, hour_start: time}
        event_time: {field: issued_at, format: iso8601}
        time_zone: UTC
        forecast:
          entity_fields: [hub]
          target_time_field: hour_start
          max_actual_lag: P30D
          corrections: replace
      target: y
      features:
        - {kind: onehot, field: gate, max_levels: 8, expire_after_records: 20}
        - {kind: numeric, field: x}
      model:
        prior_variance: 10
      drift:
        break_block_records: 0
      """;

  static final long T0 = Instant.parse("2026-03-01T00:00:00Z").toEpochMilli();
  static final long MIN = 60_000L;

  static String actual(String hub, String gate, long t, double x, double y) {
    return String.format(Locale.ROOT, "{\"hub\":\"%s\",\"gate\":\"%s\",\"issued_at\":\"%s\",\"hour_start\":\"%s\",\"x\":%s,\"y\":%s}",
        hub, gate, Instant.ofEpochMilli(t), Instant.ofEpochMilli(t), x, y);
  }

  /**
   * The actual of hub "a" was learned with the level gate=rare; 40 training records without that
   * level expire it (expire_after_records: 20), so the old row cannot be taken out exactly and the
   * correction is refused with corrected_actual, the model unchanged; a correction of a row whose
   * columns all remain is taken (docs/forecasting.md, "corrections").
   */
  @Test
  void aReplaceCorrectionWhoseOldRowUsedAnExpiredLevelIsRefusedAndChangesNoModel() throws IOException {
    PipelineConfig c = ConfigLoader.parse(REPLACE, "replace-expired.yaml");
    PipelineStep step = new PipelineStep(c);
    PipelineStep twin = new PipelineStep(c);
    Sink sink = new Sink();
    Sink twinSink = new Sink();
    Random rnd = new Random(8);
    List<String> lines = new ArrayList<>();
    lines.add(actual("a", "rare", T0, 1.5, 7.0));
    for (int i = 1; i <= 40; i++) {
      double x = rnd.nextGaussian();
      String gate = i % 2 == 0 ? "g1" : "g2";
      lines.add(actual("h" + i, gate, T0 + i * MIN, x, (gate.equals("g1") ? 1 : 2) + 0.5 * x + 0.1 * rnd.nextGaussian()));
    }
    for (String l : lines) {
      feed(step, sink, l);
      feed(twin, twinSink, l);
    }
    assertEquals(List.of(), sink.rejects);
    for (int j = 0; j < step.featurizer().dimension(); j++) {
      assertTrue(!step.featurizer().columnName(j).equals("gate=rare"), "gate=rare has expired: column " + j);
    }
    byte[] before = bytes(step.model());
    long now = T0 + 40 * MIN;
    feed(step, sink, actual("a", "g1", now, 1.5, 9.0).replace("\"hour_start\":\"" + Instant.ofEpochMilli(now) + "\"",
        "\"hour_start\":\"" + Instant.ofEpochMilli(T0) + "\""));
    assertEquals(List.of(RejectReason.CORRECTED_ACTUAL), sink.rejects);
    assertTrue(sink.details.get(0).contains("has expired since"), sink.details.get(0));
    assertEquals(0, step.replacedActuals());
    assertArrayEquals(before, bytes(step.model()), "a refused correction leaves the model as it was");
    // the stream goes on as if the correction had not come
    String next = actual("h41", "g1", now + MIN, 0.3, 1.2);
    feed(step, sink, next);
    feed(twin, twinSink, next);
    assertArrayEquals(bytes(twin.model()), bytes(step.model()));
    // a correction of hub h40's actual (gate g1, still in the layout) is taken
    long t40 = T0 + 40 * MIN;
    feed(step, sink, actual("h40", "g1", now + 2 * MIN, 0.0, 5.0).replace("\"hour_start\":\"" + Instant.ofEpochMilli(now + 2 * MIN) + "\"",
        "\"hour_start\":\"" + Instant.ofEpochMilli(t40) + "\""));
    assertEquals(1, sink.rejects.size(), "the second correction is taken: " + sink.details);
    assertEquals(1, step.replacedActuals());
  }

  // ------------------------------------------------------------ model.scope: global, restart after 64 half-lives

  static final long DAY = 24 * 60 * MIN;

  /** Records of partition {@code part}'s hubs from {@code start}, minutes apart (as GlobalPipelineStepTest's feed). */
  static List<String> later(int part, long seed, int n, long start) {
    Random rnd = new Random(seed);
    List<String> out = new ArrayList<>();
    long t = start;
    for (int i = 0; i < n; i++) {
      t += MIN * (1 + rnd.nextInt(20));
      int hub = 4 * part + rnd.nextInt(4);
      double temp = 8 + 3 * part + 6 * rnd.nextGaussian();
      double price = 0.2 + 0.1 * rnd.nextDouble();
      double y = 20 + 2 * hub - 0.3 * temp - 10 * price + rnd.nextGaussian();
      out.add("{\"hub\":\"H" + hub + "\",\"observed_at\":\"" + Instant.ofEpochMilli(t) + "\",\"temperature_c\":" + temp
          + ",\"price\":" + price + ",\"sessions\":" + y + "}");
    }
    return out;
  }

  /**
   * With {@code model.scope: global} and a half-life of 3 days, a gap of 200 days (more than 64
   * half-lives) restarts the view from its prior over the local columns, as a model per partition
   * restarts: after the gap the view holds the same state, bit for bit, as the partition-scope step
   * fed the same records (the other partition's folded levels are gone from it); the sharing
   * bookkeeping goes on (a share folded before is not folded again, the next share follows the last
   * one, and a new share of the other partition folds and brings its levels back).
   */
  @Test
  void aGapOfMoreThan64HalfLivesRestartsTheGlobalViewAsThePartitionModelRestarts() throws IOException {
    // a clock that takes the 200-day step at once (input.clock.max_ahead)
    String et = "  event_time: {field: observed_at, format: iso8601}\n";
    String clock = et + "  clock: {max_ahead: P400D}\n";
    PipelineConfig partition = ConfigLoader.parse(GlobalPipelineStepTest.BASE.replace(et, clock), "p.yaml");
    PipelineConfig global = ConfigLoader.parse(GlobalPipelineStepTest.GLOBAL.replace(et, clock), "g.yaml");
    PipelineStep p = new PipelineStep(partition, 0);
    PipelineStep g0 = new PipelineStep(global, 0);
    PipelineStep g1 = new PipelineStep(global, 1);
    Sink sink = new Sink();
    List<byte[]> first0 = GlobalPipelineStepTest.feed(0, 11, 60);
    List<byte[]> first1 = GlobalPipelineStepTest.feed(1, 12, 60);
    for (int i = 0; i < 60; i++) {
      p.process(first0.get(i), 0, first0.get(i).length, 0, 0, i, sink);
      g0.process(first0.get(i), 0, first0.get(i).length, 0, 0, i, sink);
      g1.process(first1.get(i), 0, first1.get(i).length, 0, 1, i, sink);
    }
    ModelShare s1 = g1.shareNow();
    assertEquals(GlobalModel.FoldResult.FOLDED, g0.fold(s1));
    assertTrue(g0.globalModel().viewIndex("hub=H5") >= 0, "the other partition's level is in the view");
    assertEquals(1, g0.shareNow().sequence());
    long gapStart = Instant.parse("2026-03-20T00:00:00Z").toEpochMilli() + 200 * DAY;
    List<String> after0 = later(0, 31, 30, gapStart);
    feed(p, sink, after0.get(0));
    feed(g0, sink, after0.get(0));
    assertEquals(1, p.modelRestarts());
    assertEquals(1, g0.modelRestarts());
    GlobalModel gm = g0.globalModel();
    assertEquals(gm.localDimension(), gm.view().dimension(), "the view holds the local columns only: " + gm.viewColumns());
    assertTrue(gm.viewIndex("hub=H5") < 0);
    assertArrayEquals(bytes(p.model()), bytes(g0.model()), "the view restarted as the partition's model");
    for (int i = 1; i < after0.size(); i++) {
      feed(p, sink, after0.get(i));
      feed(g0, sink, after0.get(i));
    }
    assertArrayEquals(bytes(p.model()), bytes(g0.model()), "and learns the same after the gap");
    assertEquals(List.of(), sink.rejects);
    // the sharing bookkeeping survives the restart
    assertEquals(GlobalModel.FoldResult.ALREADY_FOLDED, g0.fold(s1));
    ModelShare s2own = g0.shareNow();
    assertEquals(2, s2own.sequence());
    assertEquals(30, s2own.sampleSize(), 1.0, "the share holds the records since the restart");
    for (String l : later(1, 32, 30, gapStart)) {
      feed(g1, sink, l);
    }
    assertEquals(GlobalModel.FoldResult.FOLDED, g0.fold(g1.shareNow()));
    assertTrue(g0.globalModel().viewIndex("hub=H5") >= 0, "the other partition's levels come back with its next share");
  }

  // ------------------------------------------------------------ model_refused

  /**
   * A target beyond the model's input bound ({@code RlsModel.MAX_ABS_INPUT}, 1e100) passes the
   * record limits when {@code input.limits.max_abs_value} is raised above it, and the model refuses
   * the update: the record is rejected with model_refused and the model (with the global scope, the
   * view and the pending share) is unchanged; the next record is learned.
   */
  @Test
  void aTargetBeyondTheModelsBoundIsRejectedAsModelRefusedInBothScopes() throws IOException {
    String limits = GlobalPipelineStepTest.BASE.replace("  event_time: {field: observed_at, format: iso8601}\n",
        "  event_time: {field: observed_at, format: iso8601}\n  limits: {max_abs_value: 1.0e300}\n");
    assertTrue(limits.contains("1.0e300"));
    for (String yaml : List.of(limits, limits + "  scope: global\n  share_every_records: 40\n")) {
      PipelineConfig c = ConfigLoader.parse(yaml, "refused.yaml");
      PipelineStep step = new PipelineStep(c, 0);
      PipelineStep twin = new PipelineStep(c, 0);
      Sink sink = new Sink();
      List<String> lines = later(0, 41, 31, Instant.parse("2026-03-20T00:00:00Z").toEpochMilli());
      for (int i = 0; i < 20; i++) {
        feed(step, sink, lines.get(i));
        feed(twin, new Sink(), lines.get(i));
      }
      RlsModel m = step.model();
      long updates = m.updates();
      double ess = m.effectiveSampleSize();
      double rss = m.weightedResidualSumOfSquares();
      Snapshot before = step.snapshot();
      int predictions = sink.statuses.size();
      String huge = lines.get(20).replaceAll("\"sessions\":[^}]*", "\"sessions\":1.0e200");
      assertTrue(huge.endsWith("\"sessions\":1.0e200}"), huge);
      feed(step, sink, huge);
      assertEquals(List.of(RejectReason.MODEL_REFUSED), sink.rejects, yaml);
      assertEquals(1, step.rejected(RejectReason.MODEL_REFUSED));
      assertEquals(predictions, sink.statuses.size(), "no prediction for a refused record");
      // the model learned nothing; the featurizer's scalers saw the record's inputs and may have
      // re-based a column, which changes the coefficients' basis, not what they predict
      assertEquals(updates, step.model().updates());
      assertEquals(ess, step.model().effectiveSampleSize(), 0.0);
      assertEquals(rss, step.model().weightedResidualSumOfSquares(), 0.0);
      Snapshot after = step.snapshot();
      for (Snapshot.Column col : before.columns()) {
        assertEquals(col.rawWeight(), after.rawWeightOf(col.name()), 1e-9 * (1 + Math.abs(col.rawWeight())), col.name());
      }
      if (step.globalModel() != null) {
        assertEquals(twin.shareNow().sampleSize(), step.shareNow().sampleSize(), 0.0, "the pending share is unchanged");
      }
      feed(step, sink, lines.get(21));
      assertEquals(1, sink.rejects.size());
      assertEquals(Prediction.Status.SCORED, sink.statuses.get(sink.statuses.size() - 1));
    }
  }
}
