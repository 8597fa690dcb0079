package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.drift.ChangeAttribution;
import dev.runnel.core.drift.DriftMonitor;
import dev.runnel.core.drift.DriftStatus;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * What the step hands the drift monitor is what it publishes: each test drives a step and, beside
 * it, a second drift object fed only from the step's outputs (the published predictions and
 * snapshots, and the records' own values), and asks for the same alarms and statistics.
 *
 * <ul>
 *   <li>the error test and the noise hold after {@code drift.reset_to_records}: the a priori error
 *       is {@code actual − predicted} and its predictive sd is the interval's half-width over
 *       {@code z} (docs/drift.md); the hold's statistic is that error's square over that sd's; and
 *       the noise estimate restarts when the hold ends;</li>
 *   <li>the weight scores: {@code (w − w_b) / √(se² + se_b²)} of two published snapshots' raw weights
 *       and raw standard errors, the constant's included, with a stale scaler centre that makes the
 *       constant's standard error depend on its cross term (as {@code SnapshotStaleCentreTest});</li>
 *   <li>the change attribution: its "before" weights are the raw weights a snapshot publishes at
 *       the alarm, the window's rows are the records' raw values (1, x1, x2, x3), and a window
 *       opens on the record of an "up" alarm only.</li>
 * </ul>
 */
class DriftInputsTest {

  static final String CONFIG = """
      name: drift-inputs
      input:
        fields: {x1: number, x2: number, x3: number, y: number, at: time}
        event_time: {field: at, format: iso8601}
      target: y
      features:
        - {kind: numeric, field: x1}
        - {kind: numeric, field: x2}
        - {kind: numeric, field: x3}
      model:
        prior_variance: 100
        forgetting: {half_life: P7D}
      """;

  static final int N = 5_000;
  static final int STEP = 2_500;

  /** One record: its raw values, and the line. */
  record Line(double x1, double x2, double x3, double y, long at, byte[] bytes) { }

  /** y = 1 + 2·x1 + b2·x2 − x3 + noise, correlated columns far from 0; b2 = 1, and {@code b2After} from STEP. */
  static List<Line> feed(long seed, double b2After) {
    Random rnd = new Random(seed);
    long t = Instant.parse("2026-01-01T00:00:00Z").toEpochMilli();
    List<Line> out = new ArrayList<>(N);
    for (int i = 0; i < N; i++) {
      t += 10 * 60_000;
      double f = rnd.nextGaussian();
      double x1 = 20 + 3 * (0.8 * f + 0.6 * rnd.nextGaussian());
      double x2 = 5 + 2 * (0.8 * f + 0.6 * rnd.nextGaussian());
      double x3 = -4 + 0.8 * f + 0.6 * rnd.nextGaussian();
      double b2 = i < STEP ? 1.0 : b2After;
      double y = 1 + 2 * x1 + b2 * x2 - x3 + rnd.nextGaussian();
      // six decimals in the text, and the parsed values are what the record holds
      String s = String.format(Locale.ROOT, "{\"x1\":%.6f,\"x2\":%.6f,\"x3\":%.6f,\"y\":%.6f,\"at\":\"%s\"}",
          x1, x2, x3, y, Instant.ofEpochMilli(t));
      String[] v = s.substring(1, s.indexOf(",\"at\"")).split(",");
      out.add(new Line(value(v[0]), value(v[1]), value(v[2]), value(v[3]), t, s.getBytes(StandardCharsets.UTF_8)));
    }
    return out;
  }

  private static double value(String field) {
    return Double.parseDouble(field.substring(field.indexOf(':') + 1));
  }

  /** Keeps the latest prediction and every due snapshot. */
  static final class Keep implements PipelineStep.Sink {
    final PipelineStep step;
    final List<Snapshot> snapshots = new ArrayList<>();
    Prediction.Status status;
    double predicted;
    double low;
    double high;

    Keep(PipelineStep step) { this.step = step; }

    @Override public void prediction(Prediction p, EventRecord r) {
      status = p.status();
      predicted = p.predicted();
      low = p.low();
      high = p.high();
    }

    @Override public void reject(RejectReason reason, String detail) {
      throw new AssertionError("unexpected reject " + reason + ": " + detail);
    }

    @Override public void snapshotDue() { snapshots.add(step.snapshot()); }

    void feed(Line l) { step.process(l.bytes(), 0, l.bytes().length, 0L, 0, 0, this); }
  }

  /**
   * The error test and the noise hold: a second {@link DriftMonitor} with the same settings, fed
   * with {@code actual − predicted} and the predictive sd {@code (high − low) / (2z)} of each
   * published prediction, fires at the same records with the same statistics, and holds the noise
   * estimate over the same records.
   */
  @Test
  void theErrorTestAndTheNoiseHoldSeeThePublishedPredictionsErrors() {
    PipelineConfig config = ConfigLoader.parse(CONFIG + "drift: {reset_to_records: 40, break_block_records: 0}\n", "d.yaml");
    PipelineStep step = new PipelineStep(config);
    Keep keep = new Keep(step);
    DriftMonitor shadow = new DriftMonitor(config.drift());
    double z = step.model().settings().intervalZ();
    int fired = 0;
    int held = 0;
    int holdsEnded = 0;
    long trained = 0;
    for (Line l : feed(5, 3.0)) {
      boolean heldBefore = shadow.noiseHeld();
      shadow.forgettingFor(1.0, 1.0); // takes the reset that is due (its factor is the model's business)
      keep.feed(l);
      trained++;
      double error = l.y() - keep.predicted;
      double sd = (keep.high - keep.low) / (2 * z);
      if (heldBefore) {
        held++;
        double zSquared = keep.status == Prediction.Status.WARMING_UP ? Double.NaN : (error / sd) * (error / sd);
        if (shadow.afterUpdate(zSquared)) {
          holdsEnded++;
        }
      }
      if (keep.status == Prediction.Status.SCORED && shadow.observeError(error, sd, step.model().noiseSd(), l.at(), trained)) {
        fired++;
      }
      assertEquals(shadow.noiseHeld(), step.drift().noiseHeld(), "noise held after record " + trained);
      assertEquals(shadow.errorAlarmsFired(), step.drift().errorAlarmsFired(), "error alarms after record " + trained);
      DriftStatus a = shadow.status();
      DriftStatus b = step.drift().status();
      assertEquals(a.errorCount(), b.errorCount(), "test count after record " + trained);
      assertEquals(a.upStatistic(), b.upStatistic(), 1e-9 * (1 + Math.abs(a.upStatistic())), "up statistic after record " + trained);
      assertEquals(a.downStatistic(), b.downStatistic(), 1e-9 * (1 + Math.abs(a.downStatistic())), "down statistic after record " + trained);
      assertEquals(a.meanAbsError(), b.meanAbsError(), 1e-9 * (1 + Math.abs(a.meanAbsError())), "mean after record " + trained);
    }
    assertTrue(fired >= 1, "the tripled weight fires the error test");
    assertTrue(held >= 40, "the noise was held after an up alarm: " + held + " records");
    assertTrue(holdsEnded >= 1, "a hold ended");
  }

  /**
   * When the noise hold ends, the noise estimate restarts from its value with a weight of 10
   * records ({@code PipelineStep.NOISE_RESTART_RECORDS}, docs/drift.md): the next record's squared
   * standardized error {@code r² = e² / (1 + xᵀ(λΛ)⁻¹x)} then weighs {@code 1 / (10·d + 1)} in it, with
   * {@code d = 2^(−1/500)} the noise estimate's per-record decay ({@code model.noise_half_life_records}
   * 500, docs/model.md). {@code r²} comes from the published prediction: {@code e = actual − predicted},
   * and {@code 1 + xᵀΛ⁻¹x = (sd / s)²} with {@code sd} the interval's half-width over {@code z} and
   * {@code s} the noise sd it was made with (the interval's leverage is taken before the record's
   * forgetting λ). With {@code reset_to_records: 1} a hold can end at its first record, where no
   * earlier restart inside the hold can stand in for the one at its end.
   */
  @Test
  void theNoiseEstimateRestartsWhenTheHoldEnds() {
    PipelineConfig config = ConfigLoader.parse(CONFIG + "drift: {reset_to_records: 1, break_block_records: 0}\n", "d.yaml");
    PipelineStep step = new PipelineStep(config);
    Keep keep = new Keep(step);
    double z = step.model().settings().intervalZ();
    double d = StrictMath.pow(2.0, -1.0 / 500);
    List<Line> lines = feed(4, 2.0); // seed and step chosen so that a hold ends at its first record
    int checked = 0;
    int checkedAfterOneRecordHolds = 0;
    int heldRun = 0;
    for (int i = 0; i + 1 < lines.size(); i++) {
      boolean heldBefore = step.drift().noiseHeld();
      keep.feed(lines.get(i));
      heldRun = heldBefore ? heldRun + 1 : 0;
      if (!heldBefore || step.drift().noiseHeld()) {
        continue;
      }
      // the hold ended with this record
      boolean oneRecordHold = heldRun == 1;
      double s0 = step.model().noiseSd();
      Line next = lines.get(i + 1);
      keep.feed(next);
      i++;
      if (keep.status != Prediction.Status.SCORED || step.drift().noiseHeld()) {
        continue;
      }
      double e = next.y() - keep.predicted;
      double sd = (keep.high - keep.low) / (2 * z);
      // the published interval's leverage is that of the information before this record's
      // forgetting; the noise estimate standardizes with the forgotten one, xᵀ(λΛ)⁻¹x = lev / λ,
      // λ = 2^(−10 min / 7 days) (records 10 minutes apart, half-life P7D; docs/model.md)
      double lambda = StrictMath.pow(2.0, -600_000.0 / (7 * 86_400_000.0));
      double leverage = (sd / s0) * (sd / s0) - 1;
      double r2 = e * e / (1 + leverage / lambda);
      double expected = Math.sqrt((d * 10 * s0 * s0 + r2) / (d * 10 + 1));
      assertEquals(expected, step.model().noiseSd(), 1e-9 * expected, "the noise sd after the record that followed the hold, record " + (i + 1));
      checked++;
      if (oneRecordHold) {
        checkedAfterOneRecordHolds++;
      }
    }
    assertTrue(checkedAfterOneRecordHolds >= 1, "a record after a hold that ended at its first record was checked");
    assertTrue(checked >= 1, "a record after a hold was checked");
  }

  /**
   * The weight scores: each published column's score is {@code (w − w_b) / √(se² + se_b²)} of its
   * raw weight and raw standard error in this snapshot and the one before
   * ({@code drift.baseline: previous_snapshot}). The numeric feature jumps from near 5 to near 60,
   * so the running centre lags and the forgetting model's covariance of the constant and the slope
   * is far from 0: the constant's standard error depends on the sign of its cross term.
   */
  @Test
  void theWeightScoresAreThoseOfThePublishedRawWeightsAndStandardErrors() {
    PipelineConfig config = ConfigLoader.parse("""
        name: stale-scores
        input:
          fields: {y: number, x: number}
        target: y
        features:
          - {kind: numeric, field: x, scaling: standardize}
        model:
          prior_variance: no_prior
          forgetting: {factor: 0.97}
        outputs:
          snapshot_every_records: 10
        drift:
          baseline: previous_snapshot
          break_block_records: 0
        """, "stale-scores.yaml");
    PipelineStep step = new PipelineStep(config);
    Keep keep = new Keep(step);
    Random r = new Random(17);
    for (int i = 0; i < 300; i++) {
      double x = (i < 150 ? 5.0 : 60.0) + r.nextDouble();
      double y = 2.0 + 0.4 * x + 0.3 * r.nextGaussian();
      byte[] b = ("{\"y\":" + y + ",\"x\":" + x + "}").getBytes(StandardCharsets.UTF_8);
      step.process(b, 0, b.length, 0L, -1, i, keep);
    }
    assertEquals(30, keep.snapshots.size());
    int constantScores = 0;
    for (int k = 1; k < keep.snapshots.size(); k++) {
      List<Snapshot.Column> before = keep.snapshots.get(k - 1).columns();
      List<Snapshot.Column> now = keep.snapshots.get(k).columns();
      for (int j = 0; j < now.size(); j++) {
        Snapshot.Column b = before.get(j);
        Snapshot.Column c = now.get(j);
        assertEquals(b.name(), c.name());
        boolean scored = Double.isFinite(b.rawWeight()) && b.rawStandardError() > 0
            && Double.isFinite(c.rawWeight()) && c.rawStandardError() > 0;
        if (!scored) {
          assertTrue(Double.isNaN(c.movedSe()), "snapshot " + k + ", " + c.name() + ": no score without both estimates");
          continue;
        }
        double expected = (c.rawWeight() - b.rawWeight())
            / Math.sqrt(c.rawStandardError() * c.rawStandardError() + b.rawStandardError() * b.rawStandardError());
        assertEquals(expected, c.movedSe(), 1e-9 * (1 + Math.abs(expected)), "snapshot " + k + ", " + c.name());
        if (j == 0) {
          constantScores++;
        }
      }
    }
    assertTrue(constantScores > 20, "the constant was scored in most snapshots: " + constantScores);
  }

  /**
   * The change attribution: opened at an "up" alarm with no snapshot published (so no baseline),
   * its "before" weights are the raw weights a snapshot built right after the alarm's record
   * publishes; and a second {@link ChangeAttribution} opened with those weights and fed with the
   * records' raw values (1, x1, x2, x3) and targets evaluates the same window: the same columns,
   * before and after values and scores.
   */
  @Test
  void theAttributionOpensWithThePublishedRawWeightsAndSeesTheRawRows() {
    PipelineConfig config = ConfigLoader.parse(CONFIG + "outputs: {snapshot_every_records: 0}\ndrift: {break_block_records: 0}\n",
        "d.yaml");
    PipelineStep step = new PipelineStep(config);
    Keep keep = new Keep(step);
    ChangeAttribution shadow = new ChangeAttribution(config.drift().attributionRecords(), config.drift().attributionSe());
    Map<String, Double> rawAtAlarm = new HashMap<>();
    boolean opened = false;
    List<Long> upAlarms = new ArrayList<>();
    List<Long> openings = new ArrayList<>();
    long lastOpening = -1;
    for (Line l : feed(7, 3.0)) {
      boolean openBefore = step.drift().attribution().isOpen();
      long alarmsBefore = step.drift().errorAlarmsFired();
      keep.feed(l);
      if (step.drift().errorAlarmsFired() > alarmsBefore && step.drift().lastErrorAlarmUp()) {
        upAlarms.add(step.trained());
      }
      if (step.drift().attribution().isOpen() && step.drift().attribution().openedAtRecord() != lastOpening) {
        lastOpening = step.drift().attribution().openedAtRecord();
        openings.add(lastOpening);
      }
      if (!openBefore && step.drift().attribution().isOpen()) {
        assertFalse(opened, "one window in this feed");
        opened = true;
        Snapshot s = step.snapshot();
        String[] names = new String[s.columns().size()];
        double[] raw = new double[names.length];
        for (int j = 0; j < names.length; j++) {
          names[j] = s.columns().get(j).name();
          raw[j] = s.columns().get(j).rawWeight();
          rawAtAlarm.put(names[j], raw[j]);
        }
        assertEquals(4, names.length);
        shadow.open(names, raw, names.length, step.model().effectiveSampleSize(), 1L, step.trained());
      } else if (shadow.isOpen()) {
        shadow.observe(new double[] {1.0, l.x1(), l.x2(), l.x3()}, l.y(), 4, 1L);
      }
    }
    assertTrue(opened, "the tripled weight opened the attribution");
    // a window opens on the record of an "up" error alarm, and only there
    assertFalse(upAlarms.isEmpty());
    assertEquals(upAlarms.get(0), openings.get(0), "the first window opens on the first up alarm's record");
    assertTrue(upAlarms.containsAll(openings), "windows opened at " + openings + ", up alarms at " + upAlarms);
    List<ChangeAttribution.Change> stepChanges = step.drift().attribution().latest();
    List<ChangeAttribution.Change> shadowChanges = shadow.latest();
    assertFalse(stepChanges.isEmpty(), "the window was evaluated");
    assertEquals(shadowChanges.size(), stepChanges.size());
    for (int k = 0; k < stepChanges.size(); k++) {
      ChangeAttribution.Change a = shadowChanges.get(k);
      ChangeAttribution.Change b = stepChanges.get(k);
      assertEquals(a.column(), b.column(), "column " + k + " by |score|");
      assertEquals(rawAtAlarm.get(b.column()), b.before(), 1e-9 * (1 + Math.abs(b.before())), b.column() + " before");
      assertEquals(a.after(), b.after(), 1e-6 * (1 + Math.abs(a.after())), b.column() + " after");
      assertEquals(a.score(), b.score(), 1e-6 * (1 + Math.abs(a.score())), b.column() + " score");
    }
    assertEquals("x2", stepChanges.get(0).column(), "the tripled weight has the largest score");
  }
}
