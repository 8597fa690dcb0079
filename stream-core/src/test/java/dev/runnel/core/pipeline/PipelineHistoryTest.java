package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import java.nio.ByteBuffer;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The history features (lag, smoothed) through the whole step: no leakage (changing every actual
 * from a record on leaves every output up to and including that record's own a-priori prediction
 * bit for bit the same), and a restart from a checkpoint (version 5) continues bit for bit.
 */
class PipelineHistoryTest {

  static final String CONFIG = """
      name: history-test
      input:
        fields:
          hub: text
          temperature_c: number
          sessions: number
          issued_at: time
          hour_start: time
        event_time: {field: issued_at, format: iso8601}
        time_zone: UTC
        forecast: {entity_fields: [hub], target_time_field: hour_start}
      target: sessions
      features:
        - {kind: onehot, field: hub}
        - {kind: cyclic, cycle: hour_of_day}
        - {kind: numeric, field: temperature_c}
        - {kind: lag, name: day, offset: P1D}
        - {kind: lag, name: week, offset: P7D, tolerance: PT2H}
        - {kind: smoothed, name: recent, half_life: PT12H}
        - {kind: smoothed, name: same_hour, half_life: P5D, season: hour_of_day}
      model:
        prior_variance: 10
        interval_level: 0.9
      outputs:
        snapshot_every_records: 100
      """;

  static final long H = PipelineForecastTest.H;
  static final long T0 = PipelineForecastTest.T0;

  static PipelineConfig config() { return ConfigLoader.parse(CONFIG, "history-test.yaml"); }

  /**
   * Twenty days of hourly actuals for three hubs (each known 5 minutes after its hour), with the
   * next day's 24 forecasts per hub requested at 18:00. With {@code changedFrom} ≥ 0, every actual
   * at or after that line gets another value.
   */
  static List<byte[]> stream(int changedFrom) {
    Random rnd = new Random(11L);
    Random other = new Random(99L);
    List<byte[]> out = new ArrayList<>();
    String[] hubs = {"QM-01", "QM-02", "QM-03"};
    for (int h = 0; h < 20 * 24; h++) {
      long hour = T0 + h * H;
      for (int k = 0; k < hubs.length; k++) {
        double temp = 10 + 5 * Math.sin(h / 24.0 * 2 * Math.PI) + rnd.nextGaussian();
        double sessions = 5 + 3 * k + 4 * Math.sin((h % 24) / 24.0 * 2 * Math.PI) + 2 * rnd.nextGaussian();
        if (changedFrom >= 0 && out.size() >= changedFrom) sessions = 100 * other.nextDouble();
        out.add(PipelineForecastTest.line(hubs[k], hour + H + 5 * 60_000L, hour, temp, Math.rint(sessions * 10) / 10));
      }
      if (h % 24 == 17) {
        for (String hub : hubs) {
          for (int a = 0; a < 24; a++) {
            long target = hour + (7 + a) * H; // tomorrow 00:00 to 23:00, issued at today's 18:00
            out.add(PipelineForecastTest.line(hub, hour + H, target, 10.0, null));
          }
        }
      }
    }
    return out;
  }

  static PipelineForecastTest.Collector run(List<byte[]> lines) {
    PipelineStep step = new PipelineStep(config());
    PipelineForecastTest.Collector c = new PipelineForecastTest.Collector(step);
    for (byte[] b : lines) c.feed(b);
    return c;
  }

  @Test void changingEveryActualFromARecordOn_leavesEveryOutputUpToItsOwnPredictionUnchanged() {
    List<byte[]> base = stream(-1);
    PipelineForecastTest.Collector a = run(base);
    assertTrue(a.rejects.isEmpty(), a.rejects.toString());
    for (int near : new int[] {400, 1_500, 2_500}) {
      int from = near;
      while (!new String(base.get(from)).contains("sessions")) from++; // the first actual from there
      List<byte[]> changed = stream(from);
      assertNotEquals(new String(base.get(from)), new String(changed.get(from)), "the record at " + from + " is an actual and changed");
      PipelineForecastTest.Collector b = run(changed);
      // every output before the changed record is the same, bit for bit (forecasts of every hub among them)
      for (int i = 0; i < from; i++) {
        assertEquals(a.predictionJson.get(i), b.predictionJson.get(i), "line " + i + " (changes from " + from + ")");
      }
      // the changed record's own a-priori prediction: the same up to rounding, because the model gives it from
      // its update's rotations as y − e (RlsModel.update), which rounds with y; its row is the same (HistoryFeatureTest)
      double pa = a.predictions.get(from)[1];
      double pb = b.predictions.get(from)[1];
      assertEquals(pa, pb, 1e-12 * Math.max(1.0, Math.abs(pa)), "line " + from);
      int differ = 0;
      for (int i = from + 1; i < base.size(); i++) if (!a.predictionJson.get(i).equals(b.predictionJson.get(i))) differ++;
      assertTrue(differ > 100, "the change reaches later outputs: " + differ);
    }
  }

  @Test void theHistoryFeatures_haveAValueAndAMissingColumnEach() {
    PipelineStep step = new PipelineStep(config());
    List<String> names = step.featurizer().columnNames();
    assertTrue(names.containsAll(List.of("day", "day.missing", "week", "week.missing", "recent", "recent.missing",
        "same_hour", "same_hour.missing")), names.toString());
  }

  @Test void aRestartFromACheckpoint_continuesBitForBit_withTheLatestVersion() {
    List<byte[]> lines = stream(-1);
    PipelineForecastTest.Collector whole = run(lines);
    int cut = 1_501;
    PipelineStep first = new PipelineStep(config());
    PipelineForecastTest.Collector c1 = new PipelineForecastTest.Collector(first);
    for (int i = 0; i < cut; i++) c1.feed(lines.get(i));
    byte[] cp = first.checkpoint();
    // 9 since the weight-break scan (on by default) keeps its blocks in the checkpoint; 8 with it off
    assertEquals(PipelineStep.CHECKPOINT_VERSION, ByteBuffer.wrap(cp).getInt(4), "checkpoint version");
    assertEquals(9, PipelineStep.CHECKPOINT_VERSION);
    PipelineStep second = new PipelineStep(config());
    second.restore(cp);
    assertArrayEquals(cp, second.checkpoint(), "the restored state writes the same bytes");
    PipelineForecastTest.Collector c2 = new PipelineForecastTest.Collector(second);
    c2.offset = cut;
    for (int i = cut; i < lines.size(); i++) c2.feed(lines.get(i));
    for (int i = cut; i < lines.size(); i++) {
      assertEquals(whole.predictionJson.get(i), c2.predictionJson.get(i - cut), "line " + i);
    }
    assertArrayEquals(whole.step.checkpoint(), second.checkpoint(), "the final states are the same bytes");
  }

  @Test void aCheckpointWithoutHistory_isRefusedByAConfigurationWithIt() {
    PipelineStep plain = new PipelineStep(PipelineForecastTest.config(1000));
    byte[] cp = plain.checkpoint();
    assertEquals(6, ByteBuffer.wrap(cp).getInt(4), "a step with input.forecast and without history features still writes version 6");
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> new PipelineStep(config()).restore(cp));
    assertTrue(e.getMessage().startsWith("checkpoint format version 6 has no history state"), e.getMessage());
  }
}
