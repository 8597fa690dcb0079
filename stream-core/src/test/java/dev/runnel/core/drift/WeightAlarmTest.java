package dev.runnel.core.drift;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.DriftBaseline;
import dev.runnel.core.config.ErrorTest;
import dev.runnel.core.config.PipelineConfig;
import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The weight alarm on synthetic snapshots: each snapshot's weight is its true value plus an
 * independent normal error of sd {@code se}, so the score {@code (w − w_b)/√(se² + se_b²)} is exactly
 * standard normal while nothing changes.
 */
class WeightAlarmTest {

  static final String[] NAMES = {"constant", "a", "b", "c", "d"};

  static PipelineConfig.Drift settings(DriftBaseline baseline, int back) {
    return new PipelineConfig.Drift(4.0, baseline, back, ErrorTest.OFF, 0.1, 30, 100, 4);
  }

  /** Feeds snapshots; column "a" steps from 1 to 2 at snapshot {@code step} (se 0.1: a 7-sd move). Returns alarm flags for "a". */
  static boolean[] run(DriftMonitor m, long seed, int count, int step) {
    Random rnd = new Random(seed);
    boolean[] aAlarm = new boolean[count];
    double[] w = new double[NAMES.length];
    double[] se = new double[NAMES.length];
    for (int i = 0; i < count; i++) {
      for (int j = 0; j < NAMES.length; j++) {
        double truth = j == 1 && i >= step ? 2.0 : 1.0;
        se[j] = 0.1;
        w[j] = truth + se[j] * rnd.nextGaussian();
      }
      m.observeSnapshot(i, 1_000L * i, 100L * i, NAMES, w, se, NAMES.length);
      for (DriftAlarm a : m.alarms()) {
        if ("a".equals(a.column())) {
          aAlarm[i] = true;
        }
      }
    }
    return aAlarm;
  }

  @Test
  void plannedStepFiresAtTheFirstSnapshotAfterItAndClearsWhenTheRollingBaselinePassesIt() {
    int misses = 0;
    for (int trial = 0; trial < 50; trial++) {
      DriftMonitor m = new DriftMonitor(settings(DriftBaseline.SNAPSHOTS_AGO, 8));
      boolean[] a = run(m, 300 + trial, 60, 30);
      // stated: the alarm is up at the step's snapshot (score ≈ 7.1 against k = 4) ...
      if (!a[30]) {
        misses++;
      }
      // ... stays up while the baseline is before the step (8 snapshots) and is down after
      int up = 0;
      for (int i = 30; i < 38; i++) {
        up += a[i] ? 1 : 0;
      }
      assertTrue(up >= 7, "trial " + trial + ": up in " + up + " of 8 snapshots");
      assertTrue(!a[40] && !a[45], "trial " + trial + ": cleared once the baseline is after the step");
    }
    // P(N(7.07, 1) ≤ 4) ≈ 0.001 (normal table, common practice): at most one miss in 50
    assertTrue(misses <= 1, misses + " misses");
  }

  @Test
  void previousSnapshotBaselineFiresOnceAndFirstReadyBaselineStaysUp() {
    DriftMonitor prev = new DriftMonitor(settings(DriftBaseline.PREVIOUS_SNAPSHOT, 1));
    boolean[] a = run(prev, 9, 40, 20);
    assertTrue(a[20] && !a[22] && !a[30], "previous-snapshot baseline: up at the step only");
    DriftMonitor first = new DriftMonitor(settings(DriftBaseline.FIRST_READY_SNAPSHOT, 1));
    boolean[] b = run(first, 9, 40, 20);
    int up = 0;
    for (int i = 20; i < 40; i++) {
      up += b[i] ? 1 : 0;
    }
    assertTrue(up >= 19 && !b[10], "first-ready baseline: up after the step, " + up + " of 20");
    DriftAlarm alarm = first.alarms().get(0);
    assertEquals("a", alarm.column());
    assertEquals("up", alarm.direction());
    assertEquals(20, alarm.firedAtSnapshot(), "fired at the step and kept its first time while up");
    assertEquals(20_000L, alarm.firedAtMillis());
  }

  /**
   * Stated false-alarm rate: with an exactly standard normal score, P(|score| > 4) = 6.3e−5 per
   * column and snapshot (normal table, common practice). 20,000 stationary snapshots of 5
   * columns: expected 6.3 alarms; at most 16 allowed (Poisson upper tail below 0.001).
   */
  @Test
  void stationarySnapshotsFireAtTheNormalTailRate() {
    DriftMonitor m = new DriftMonitor(settings(DriftBaseline.SNAPSHOTS_AGO, 8));
    run(m, 4242, 20_000, Integer.MAX_VALUE);
    long fired = m.weightAlarmsFired();
    assertTrue(fired <= 16, fired + " alarms in 100,000 column-snapshots");
  }

  @Test
  void stateRoundTripsThroughItsCheckpoint() throws IOException {
    PipelineConfig.Drift s = new PipelineConfig.Drift(4.0, DriftBaseline.SNAPSHOTS_AGO, 8, ErrorTest.PAGE_HINKLEY,
        0.1, 30, 100, 4);
    DriftMonitor a = new DriftMonitor(s);
    run(a, 5, 35, 30);
    Random rnd = new Random(8);
    for (int i = 0; i < 500; i++) {
      a.observeError(rnd.nextGaussian() * (i < 300 ? 1 : 3), 1.0, 1.0, i, i);
    }
    ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    a.writeTo(new DataOutputStream(bytes));
    DriftMonitor b = new DriftMonitor(s);
    b.readFrom(new DataInputStream(new ByteArrayInputStream(bytes.toByteArray())));
    assertEquals(a.status(), b.status());
    // both continue identically
    run(a, 6, 10, 0);
    run(b, 6, 10, 0);
    List<DriftAlarm> x = a.alarms();
    assertEquals(x, b.alarms());
    assertTrue(a.errorAlarmsFired() >= 1, "the error level tripled at value 300");
  }
}
