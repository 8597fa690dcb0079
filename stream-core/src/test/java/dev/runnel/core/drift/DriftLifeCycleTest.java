package dev.runnel.core.drift;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.DriftBaseline;
import dev.runnel.core.config.ErrorTest;
import dev.runnel.core.config.PipelineConfig;
import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * The drift monitor's alarms from start to end, on hand-worked values: the error test's two
 * warm-ups (the monitor's, then the Page–Hinkley test's), the frozen reference noise sd, the
 * alarm's fields, how long an error-level alarm stays listed, "level fell" alarms, the published
 * status, the weight alarm's exact boundary and baseline depth, and a restore into a monitor that
 * already has state of its own.
 */
class DriftLifeCycleTest {

  static final int W = 5; // both warm-ups
  static final int HOLD = 2;

  static PipelineConfig.Drift errorSettings() {
    return new PipelineConfig.Drift(4.0, DriftBaseline.SNAPSHOTS_AGO, 3, ErrorTest.PAGE_HINKLEY, 0.1, 3.0, W, HOLD);
  }

  static List<DriftAlarm> errorAlarms(DriftMonitor m) {
    List<DriftAlarm> out = new ArrayList<>();
    for (DriftAlarm a : m.alarms()) {
      if (a.kind().equals(DriftAlarm.ERROR_LEVEL)) {
        out.add(a);
      }
    }
    return out;
  }

  @Test
  void errorAlarm_honoursBothWarmups_firesOnTheWorkedValue_andExpiresAfterItsHold() {
    DriftMonitor m = new DriftMonitor(errorSettings());
    // calls 1..5 are skipped (the monitor's warm-up); calls with a zero sd are ignored and do not count
    for (int call = 1; call <= 9; call++) {
      assertFalse(m.observeError(Double.NaN, 0.0, 1.0, 0, 0), "a zero predictive sd is ignored");
      assertFalse(m.observeError(0.5, 1.0, 0.0, 0, 0), "a zero noise sd is ignored");
      assertFalse(m.observeError(call % 2 == 0 ? 0.5 : -0.5, 1.0, 1.0, 1000L * call, call), "call " + call);
      assertEquals(call <= W ? 0 : call - W, m.status().errorCount(), "values the test has seen after call " + call);
    }
    assertEquals(0.5, m.status().meanAbsError(), 1e-15, "the test sees |z|");
    // call 10 is the test's 5th value, the last of its warm-up: a wild value does not fire
    assertFalse(m.observeError(20.0, 1.0, 1.0, 10_000L, 10));
    assertFalse(m.observeError(Double.POSITIVE_INFINITY, 1.0, 1.0, 10_500L, 10), "a non-finite z is ignored");
    assertEquals(W, m.status().errorCount());
    // call 11: the 6th value, 8 (|z| is clipped at 8): mean (4·0.5 + 8 + 8)/6 = 3, U = 8 − 3 − 0.1 = 4.9 > 3
    assertTrue(m.observeError(-9.0, 1.0, 1.0, 11_000L, 11));
    assertEquals(1, m.errorAlarmsFired());
    assertEquals(0, m.status().errorCount(), "reset after the alarm");
    assertEquals(List.of(), m.alarms(), "listed only from the next snapshot on");

    String[] none = {};
    m.observeSnapshot(0, 12_000L, 12, none, new double[0], new double[0], 0);
    List<DriftAlarm> listed = errorAlarms(m);
    assertEquals(1, listed.size());
    DriftAlarm a = listed.get(0);
    assertEquals("up", a.direction());
    assertEquals(11_000L, a.firedAtMillis());
    assertEquals(0, a.firedAtSnapshot());
    assertEquals(11, a.firedAtRecord());
    assertEquals(8.0 - 3.0 - 0.1, a.score(), 1e-12);
    assertEquals(3.0, a.threshold());
    assertEquals(3.0, a.baselineValue(), 1e-12);
    assertTrue(Double.isNaN(a.currentValue()));
    assertEquals(null, a.column());
    m.observeSnapshot(1, 13_000L, 13, none, new double[0], new double[0], 0);
    assertEquals(List.of(a), errorAlarms(m), "still listed in the hold's last snapshot");
    m.observeSnapshot(2, 14_000L, 14, none, new double[0], new double[0], 0);
    assertEquals(List.of(), m.alarms(), "gone after " + HOLD + " snapshots");
  }

  @Test
  void afterAnAlarm_warmupsRestart_theReferenceSdIsFrozenAgain_andALevelThatFallsFiresDown() {
    DriftMonitor m = new DriftMonitor(errorSettings());
    int call = 0;
    // fire "up" as in the worked case
    for (; call < 2 * W; call++) {
      m.observeError(0.5, 1.0, 1.0, call, call);
    }
    assertTrue(m.observeError(8.0, 1.0, 1.0, call, call));
    call++;
    // the monitor's warm-up again: 5 calls skipped whatever their size
    for (int i = 0; i < W; i++, call++) {
      assertFalse(m.observeError(100.0, 1.0, 1.0, call, call));
      assertEquals(0, m.status().errorCount());
    }
    // the next call freezes the reference sd at 2; z = e / predictiveSd · (noiseSd / 2)
    List<Double> seen = new ArrayList<>();
    int fired = -1;
    for (int i = 0; i < 40 && fired < 0; i++, call++) {
      double noiseSd = i == 0 ? 2.0 : 4.0; // the live sd doubles after the freeze: z doubles with it
      double error = i < 8 ? 3.0 : 0.25; // |z| = 3 (first value 1.5), then 0.5: the level falls
      double z = error / 2.0 * (noiseSd / 2.0);
      seen.add(Math.min(Math.abs(z), DriftMonitor.MAX_ABS_Z));
      boolean f = m.observeError(-error, 2.0, noiseSd, 100_000L + call, call);
      double[] ref = PageHinkleyDefinitionTest.definition(seen, 0.1, W);
      boolean want = seen.size() > W && (ref[0] > 3.0 || ref[1] > 3.0);
      assertEquals(want, f, "value " + seen.size() + ": " + ref[0] + ", " + ref[1]);
      if (f) {
        fired = call;
        assertTrue(ref[1] > 3.0 && !(ref[0] > 3.0), "the definition says down");
        m.observeSnapshot(7, 0, call, new String[0], new double[0], new double[0], 0);
        List<DriftAlarm> dated = errorAlarms(m);
        assertEquals(2, dated.size(), "the first alarm (up) is dated at this snapshot too");
        DriftAlarm a = dated.get(1);
        assertEquals("down", a.direction());
        assertEquals(ref[1], a.score(), 1e-12);
        assertEquals(ref[2], a.baselineValue(), 1e-12);
        assertEquals(call, a.firedAtRecord());
        assertEquals(7, a.firedAtSnapshot());
      } else {
        assertEquals(ref[2], m.status().meanAbsError(), 1e-12, "mean of |z| with the frozen reference sd");
      }
    }
    assertTrue(fired > 0, "a level that fell fired");
    assertEquals(2, m.errorAlarmsFired());
  }

  @Test
  void statusNamesEveryField_andAnOffTestNeverFires() {
    DriftMonitor m = new DriftMonitor(errorSettings());
    for (int i = 0; i < W + 3; i++) {
      m.observeError(i % 2 == 0 ? 1.0 : 3.0, 1.0, 1.0, i, i);
    }
    DriftStatus s = m.status();
    assertEquals("page_hinkley", s.errorTest());
    assertEquals(3, s.errorCount());
    assertEquals(7.0 / 3.0, s.meanAbsError(), 1e-15); // |z| 3, 1, 3
    double[] ref = PageHinkleyDefinitionTest.definition(List.of(3.0, 1.0, 3.0), 0.1, W);
    assertEquals(ref[0], s.upStatistic());
    assertEquals(ref[1], s.downStatistic());
    assertEquals(3.0, s.threshold());
    assertEquals("snapshots_ago", s.baseline());
    assertEquals(4.0, s.weightAlarmSe());
    assertEquals(0, s.weightAlarmsFired());
    assertEquals(0, s.errorAlarmsFired());

    DriftMonitor off = new DriftMonitor(new PipelineConfig.Drift(2.5, DriftBaseline.PREVIOUS_SNAPSHOT, 1, ErrorTest.OFF,
        0.1, 3.0, 1, HOLD));
    for (int i = 0; i < 100; i++) {
      assertFalse(off.observeError(i < 50 ? 0.1 : 50.0, 1.0, 1.0, i, i));
    }
    DriftStatus o = off.status();
    assertEquals("off", o.errorTest());
    assertTrue(Double.isNaN(o.upStatistic()) && Double.isNaN(o.downStatistic()) && Double.isNaN(o.threshold())
        && Double.isNaN(o.meanAbsError()), o.toString());
    assertEquals(0, o.errorCount());
    assertEquals("previous_snapshot", o.baseline());
    assertEquals(2.5, o.weightAlarmSe());
  }

  static void snap(DriftMonitor m, long index, String[] names, double[] w, double[] se) {
    m.observeSnapshot(index, 1000 * index, 10 * index, names, w, se, names.length);
  }

  @Test
  void weightAlarm_exactBoundary_depthOfTheBaseline_direction_andClearing() {
    DriftMonitor m = new DriftMonitor(new PipelineConfig.Drift(4.0, DriftBaseline.SNAPSHOTS_AGO, 3, ErrorTest.OFF,
        0.1, 3.0, 1, HOLD));
    String[] names = {"a", "b", "c"};
    double[] se = {1.0, 0.75, 0.0};
    // snapshots 0..2: until 3 are kept, the baseline is the oldest kept (snapshot 0); "c" has no
    // standard error and is never scored
    for (int i = 0; i < 3; i++) {
      snap(m, i, names, new double[] {i, 1.0, 1.0}, se);
      if (i == 0) {
        assertTrue(Double.isNaN(m.moved("a")), "no baseline at the first snapshot");
      } else {
        assertEquals(i / Math.sqrt(2.0), m.moved("a"), 1e-15, "snapshot " + i);
      }
    }
    // snapshot 3: the baseline is snapshot 0 (3 back): a moved by (3 − 0)/√2
    snap(m, 3, names, new double[] {3.0, 1.0, 2.0}, new double[] {1.0, 1.0, 0.0});
    assertEquals(3.0 / Math.sqrt(2.0), m.moved("a"), 1e-15);
    assertTrue(Double.isNaN(m.moved("c")), "a column without a standard error is not scored");
    // snapshot 4: baseline snapshot 1 (a = 1, se 1; b = 1, se 0.75). b: (6 − 1)/√(1 + 0.5625) = 5/1.25 = 4 exactly: not above k
    snap(m, 4, names, new double[] {1.0 - 4.0 * Math.sqrt(2.0) * 1.0001, 6.0, 1.0}, new double[] {1.0, 1.0, 0.0});
    assertEquals(4.0, m.moved("b"));
    List<DriftAlarm> alarms = m.alarms();
    assertEquals(1, alarms.size(), alarms.toString());
    DriftAlarm a = alarms.get(0);
    assertEquals("a", a.column());
    assertEquals("down", a.direction());
    assertEquals(4, a.firedAtSnapshot());
    assertEquals(40, a.firedAtRecord());
    assertEquals(4000, a.firedAtMillis());
    assertEquals(1.0, a.baselineValue());
    assertEquals(4.0 * 1.0001, a.score(), 1e-12);
    assertEquals(4.0, a.threshold());
    assertEquals(1, m.weightAlarmsFired());
    // snapshot 5: baseline snapshot 2 (a = 2): still far below, the same alarm with a new score
    snap(m, 5, new String[] {"a"}, new double[] {-10.0}, new double[] {1.0});
    a = m.alarms().get(0);
    assertEquals(12.0 / Math.sqrt(2.0), a.score(), 1e-12);
    assertEquals(-10.0, a.currentValue());
    assertEquals(4, a.firedAtSnapshot(), "the alarm keeps the snapshot it fired at");
    assertEquals(1, m.weightAlarmsFired(), "one alarm while it stays raised");
    assertTrue(Double.isNaN(m.moved("b")), "a column that is gone has no score");
    // snapshot 6: baseline snapshot 3 (a = 3): a = 3.5 is back within k, the alarm clears
    snap(m, 6, names, new double[] {3.5, 1.0, 1.0}, new double[] {1.0, 1.0, 0.0});
    assertEquals(List.of(), m.alarms());
  }

  @Test
  void aZeroThresholdTurnsWeightAlarmsOff() {
    DriftMonitor m = new DriftMonitor(new PipelineConfig.Drift(0.0, DriftBaseline.PREVIOUS_SNAPSHOT, 1, ErrorTest.OFF,
        0.1, 3.0, 1, HOLD));
    String[] names = {"a"};
    snap(m, 0, names, new double[] {0.0}, new double[] {1.0});
    snap(m, 1, names, new double[] {100.0}, new double[] {1.0});
    assertEquals(100.0 / Math.sqrt(2.0), m.moved("a"), 1e-12);
    assertEquals(List.of(), m.alarms());
    assertEquals(0, m.weightAlarmsFired());
  }

  static byte[] bytes(DriftMonitor m) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    m.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  /** A monitor with alarms of both kinds, history, scores and a half-way error test. */
  static DriftMonitor busy(PipelineConfig.Drift s, int snapshots, double shift, String... names) {
    DriftMonitor m = new DriftMonitor(s);
    for (int i = 0; i < snapshots; i++) {
      for (int r = 0; r < 20; r++) {
        m.observeError(r < 12 ? 0.5 + shift : 8.0, 1.0, 1.0, i * 100L + r, i * 20L + r);
      }
      double[] w = new double[names.length];
      double[] se = new double[names.length];
      for (int j = 0; j < names.length; j++) {
        w[j] = j == 0 ? i * shift : j + i;
        se[j] = j == 0 ? 1.0 : 0.1;
      }
      snap(m, i, names, w, se);
    }
    return m;
  }

  @Test
  void aRestoreReplacesEveryPartOfTheState_evenInAMonitorThatHadItsOwn() throws IOException {
    for (DriftBaseline baseline : DriftBaseline.values()) {
      PipelineConfig.Drift s = new PipelineConfig.Drift(4.0, baseline, 3, ErrorTest.PAGE_HINKLEY, 0.1, 3.0, W, HOLD);
      DriftMonitor saved = busy(s, 1, 0.0, "a", "b");
      DriftMonitor other = busy(s, 6, 5.0, "a", "b", "c"); // more history, another column, its own alarms and scores
      byte[] want = bytes(saved);
      assertFalse(java.util.Arrays.equals(want, bytes(other)));
      other.readFrom(new DataInputStream(new ByteArrayInputStream(want)));
      assertArrayEquals(want, bytes(other), baseline.word());
      assertEquals(saved.alarms(), other.alarms());
      assertEquals(saved.moved("b"), other.moved("b"));
      assertEquals(saved.status(), other.status());
      // and they go on alike
      String[] names = {"a", "b"};
      snap(saved, 1, names, new double[] {0.5, 9.0}, new double[] {1.0, 0.1});
      snap(other, 1, names, new double[] {0.5, 9.0}, new double[] {1.0, 0.1});
      assertArrayEquals(bytes(saved), bytes(other), baseline.word());
      assertEquals(saved.alarms(), other.alarms());
    }
  }
}
