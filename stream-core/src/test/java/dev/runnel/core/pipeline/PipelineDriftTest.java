package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.drift.DriftAlarm;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Drift alarms computed by the whole pipeline on seeded synthetic streams of 10⁵ records (a
 * snapshot every 1,000 trained records): a stationary stream, a planned step in one coefficient and
 * a planned step in the noise level. Stated behaviour (defaults: k = 4 standard errors against the
 * snapshot 8 back; Page–Hinkley δ = 0.1, λ = 30):
 * <ul>
 *   <li>stationary: no error-level alarm and at most one weight alarm per 10⁵ records;</li>
 *   <li>coefficient step: a weight alarm on that column within 2 snapshots of the step;</li>
 *   <li>noise step (sd 1 → 2): an error-level alarm "up" within 500 records of the step.</li>
 * </ul>
 */
class PipelineDriftTest {

  static final String CONFIG = """
      name: drift-test
      input:
        fields: {site: text, x1: number, x2: number, y: number, at: time}
        event_time: {field: at, format: iso8601}
      target: y
      features:
        - {kind: onehot, field: site, max_levels: 4}
        - {kind: numeric, field: x1}
        - {kind: numeric, field: x2}
      model:
        prior_variance: 100
        forgetting: {factor: 0.999}
      outputs:
        snapshot_every_records: 1000
      """;

  static final int N = 100_000;
  static final int STEP = 50_000;
  private static final ObjectMapper JSON = new ObjectMapper();

  /** y = 5 + site effect + b1·x1 − x2 + sd·noise; b1 and sd may step at record STEP. */
  static List<byte[]> feed(long seed, double b1After, double sdAfter) {
    Random rnd = new Random(seed);
    long t = Instant.parse("2026-01-01T00:00:00Z").toEpochMilli();
    double[] siteEffect = {0, 1, -1};
    List<byte[]> out = new ArrayList<>(N);
    for (int i = 0; i < N; i++) {
      t += 60_000;
      int site = rnd.nextInt(3);
      double x1 = 10 + 3 * rnd.nextGaussian();
      double x2 = 2 * rnd.nextGaussian();
      double b1 = i < STEP ? 2.0 : b1After;
      double sd = i < STEP ? 1.0 : sdAfter;
      double y = 5 + siteEffect[site] + b1 * x1 - x2 + sd * rnd.nextGaussian();
      out.add(String.format(Locale.ROOT, "{\"site\":\"S%d\",\"x1\":%.6f,\"x2\":%.6f,\"y\":%.6f,\"at\":\"%s\"}",
          site, x1, x2, y, Instant.ofEpochMilli(t)).getBytes(StandardCharsets.UTF_8));
    }
    return out;
  }

  /** What a run published: the snapshots (as JSON) and the record index of each newly fired error alarm. */
  record Outcome(List<JsonNode> snapshots, List<Long> errorAlarmRecords, PipelineStep step) { }

  static Outcome run(PipelineStep step, List<byte[]> feed, int from, int to) {
    OutputJson json = new OutputJson("drift-test", 0.9);
    List<JsonNode> snaps = new ArrayList<>();
    List<Long> errorAt = new ArrayList<>();
    long[] seenErrors = {step.drift().errorAlarmsFired()};
    for (int i = from; i < to; i++) {
      byte[] b = feed.get(i);
      step.process(b, 0, b.length, 0L, 0, i, new PipelineStep.Sink() {
        @Override public void prediction(Prediction p, EventRecord r) { }
        @Override public void reject(RejectReason reason, String detail) {
          throw new AssertionError("unexpected reject " + reason + ": " + detail);
        }
        @Override public void snapshotDue() {
          try {
            snaps.add(JSON.readTree(json.snapshot(step.snapshot(), 0)));
          } catch (IOException e) {
            throw new AssertionError(e);
          }
        }
      });
      if (step.drift().errorAlarmsFired() > seenErrors[0]) {
        seenErrors[0] = step.drift().errorAlarmsFired();
        errorAt.add((long) i);
      }
    }
    return new Outcome(snaps, errorAt, step);
  }

  static PipelineStep newStep() {
    return new PipelineStep(ConfigLoader.parse(CONFIG, "drift-test.yaml"));
  }

  /** Index of the first snapshot whose alarms include a weight alarm on {@code column}, or -1. */
  static int firstWeightAlarm(List<JsonNode> snaps, String column) {
    for (int i = 0; i < snaps.size(); i++) {
      for (JsonNode a : snaps.get(i).path("alarms")) {
        if (a.path("kind").asText().equals(DriftAlarm.WEIGHT) && a.path("column").asText().equals(column)) {
          return i;
        }
      }
    }
    return -1;
  }

  @Test
  void stationaryStreamRaisesNoErrorAlarmAndAtMostOneWeightAlarm() {
    for (long seed = 1; seed <= 3; seed++) {
      Outcome o = run(newStep(), feed(seed, 2.0, 1.0), 0, N);
      assertEquals(100, o.snapshots().size());
      assertEquals(List.of(), o.errorAlarmRecords(), "seed " + seed);
      long weightAlarms = o.step().drift().weightAlarmsFired();
      assertTrue(weightAlarms <= 1, "seed " + seed + ": " + weightAlarms + " weight alarms");
      // the scores are there, and small: a snapshot 8 back is the baseline
      JsonNode last = o.snapshots().get(99);
      double maxMoved = 0;
      for (JsonNode c : last.path("columns")) {
        assertTrue(c.path("drift_score").isNumber(), c.toString());
        maxMoved = Math.max(maxMoved, Math.abs(c.path("drift_score").asDouble()));
      }
      assertTrue(maxMoved < 4, "largest score at the last snapshot " + maxMoved);
      assertEquals(99, last.path("index").asLong());
    }
  }

  @Test
  void stepInOneCoefficientRaisesItsWeightAlarmWithinTwoSnapshots() {
    Outcome o = run(newStep(), feed(21, 3.0, 1.0), 0, N);
    int stepSnapshot = STEP / 1000; // snapshot index 50 covers records 49,001..50,000 (before the step)
    int fired = firstWeightAlarm(o.snapshots(), "x1");
    assertTrue(fired > stepSnapshot - 1 && fired <= stepSnapshot + 2,
        "weight alarm on x1 at snapshot " + fired + "; step after snapshot " + (stepSnapshot - 1));
    JsonNode alarm = null;
    for (JsonNode a : o.snapshots().get(fired).path("alarms")) {
      if ("x1".equals(a.path("column").asText())) {
        alarm = a;
      }
    }
    assertEquals("up", alarm.path("direction").asText());
    assertTrue(alarm.path("current_value").asDouble() > alarm.path("baseline_value").asDouble() + 0.3, alarm.toString());
    assertEquals(fired, alarm.path("fired_at_snapshot").asInt());
    // no weight alarm on x1 before the step
    for (int i = 0; i < stepSnapshot; i++) {
      for (JsonNode a : o.snapshots().get(i).path("alarms")) {
        assertTrue(!"x1".equals(a.path("column").asText()), "alarm before the step at snapshot " + i);
      }
    }
  }

  @Test
  void stepInTheNoiseLevelRaisesAnErrorAlarmWithinFiveHundredRecords() {
    Outcome o = run(newStep(), feed(31, 2.0, 2.0), 0, N);
    assertTrue(!o.errorAlarmRecords().isEmpty(), "no error-level alarm");
    long first = o.errorAlarmRecords().get(0);
    assertTrue(first >= STEP && first < STEP + 500, "error-level alarm at record " + first);
    int snap = (int) (first / 1000);
    JsonNode s = o.snapshots().get(snap);
    JsonNode found = null;
    for (JsonNode a : s.path("alarms")) {
      if (a.path("kind").asText().equals(DriftAlarm.ERROR_LEVEL)) {
        found = a;
      }
    }
    assertTrue(found != null, "the next snapshot carries the alarm: " + s.path("alarms"));
    assertEquals("up", found.path("direction").asText());
    assertEquals(Instant.parse("2026-01-01T00:00:00Z").plusSeconds(60 * (first + 1)).toString(),
        found.path("fired_at").asText(), "fired_at is the event time of the record that fired it");
    assertEquals(first + 1, found.path("fired_at_record").asLong());
  }

  @Test
  void alarmsSurviveACheckpointBitForBit() {
    List<byte[]> feed = feed(21, 3.0, 2.0);
    PipelineStep whole = newStep();
    run(whole, feed, 0, 60_000);
    PipelineStep first = newStep();
    run(first, feed, 0, 50_700);
    PipelineStep second = newStep();
    second.restore(first.checkpoint());
    run(second, feed, 50_700, 60_000);
    assertArrayEquals(whole.checkpoint(), second.checkpoint());
    assertEquals(whole.snapshot().alarms(), second.snapshot().alarms());
    assertTrue(!whole.snapshot().alarms().isEmpty() || whole.drift().weightAlarmsFired() > 0, "the split saw alarms");
  }
}
