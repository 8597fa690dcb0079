package dev.runnel.core.drift;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.DriftBaseline;
import dev.runnel.core.config.ErrorTest;
import dev.runnel.core.config.PipelineConfig;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * What an error-level alarm asks of the model, in the drift monitor itself (the pipeline tests
 * check it only through a whole step): after an "up" alarm with {@code drift.reset_to_records: m > 0}
 * the next forgetting factor is {@code lambda · m / n_eff} once (when {@code n_eff > m}), and the
 * noise estimate is held for at most {@code HOLD_LIMIT · m} updates; a "down" alarm, or {@code m = 0},
 * asks for neither. Expected values are from the javadoc of {@code forgettingFor} and
 * {@code afterUpdate}, worked by hand; the direction of the alarm from the Page–Hinkley definition
 * ({@link PageHinkleyDefinitionTest#definition}).
 */
class DriftResetDueTest {

  static final int W = 5; // both warm-ups, as DriftLifeCycleTest

  static PipelineConfig.Drift settings(int resetToRecords) {
    return new PipelineConfig.Drift(4.0, DriftBaseline.SNAPSHOTS_AGO, 3, ErrorTest.PAGE_HINKLEY, 0.1, 3.0, W, 2,
        1200, 4.0, resetToRecords, 0);
  }

  /** DriftLifeCycleTest's worked up alarm: 5 skipped, 5 values of |z| = 0.5, then |z| 8: U = 8 − 3 − 0.1 = 4.9 > 3. */
  static void fireUp(DriftMonitor m) {
    for (int call = 1; call <= 2 * W; call++) {
      assertFalse(m.observeError(call % 2 == 0 ? 0.5 : -0.5, 1.0, 1.0, 1000L * call, call), "call " + call);
    }
    assertTrue(m.observeError(-9.0, 1.0, 1.0, 11_000L, 11), "the worked up alarm");
  }

  @Test
  void upAlarm_withResetToRecords_cutsTheNextForgettingOnce_andHoldsTheNoise() {
    DriftMonitor m = new DriftMonitor(settings(10));
    assertEquals(0.99, m.forgettingFor(0.99, 50.0), "no alarm yet: lambda itself");
    assertFalse(m.noiseHeld());
    fireUp(m);
    assertTrue(m.lastErrorAlarmUp());
    assertTrue(m.noiseHeld(), "held after an up alarm");
    // information cut to about m = 10 records' worth of n_eff = 50: lambda · 10/50
    assertEquals(0.99 * (10.0 / 50.0), m.forgettingFor(0.99, 50.0));
    assertEquals(0.99, m.forgettingFor(0.99, 50.0), "once only");
    // held at most HOLD_LIMIT · m = 100 updates when no scored record comes (z² NaN is not counted)
    int held = 0;
    while (!m.afterUpdate(Double.NaN)) {
      held++;
      assertTrue(held < 1000, "the hold never ended");
    }
    assertEquals(DriftMonitor.HOLD_LIMIT * 10 - 1, held, "the 100th held update ends the hold");
    assertFalse(m.noiseHeld());
  }

  @Test
  void theHoldEndsAfterMScoredUpdatesWhoseMeanSquaredErrorIsBelowTwo_notAtTwo() {
    // z² = 0.5 in every held update: after m = 10 of them the moving mean 0.5 is below 2: caught up
    DriftMonitor m = new DriftMonitor(settings(10));
    fireUp(m);
    for (int i = 1; i < 10; i++) {
      assertFalse(m.afterUpdate(0.5), "held update " + i + " of at least 10");
      assertFalse(m.afterUpdate(Double.NaN), "an unscored update does not count");
    }
    assertTrue(m.afterUpdate(0.5), "the 10th scored update ends the hold");
    assertFalse(m.noiseHeld());

    // z² = 2 exactly: the mean is 2, not below it, so the hold goes on to its limit of 100 updates
    DriftMonitor atTwo = new DriftMonitor(settings(10));
    fireUp(atTwo);
    for (int i = 1; i < DriftMonitor.HOLD_LIMIT * 10; i++) {
      assertFalse(atTwo.afterUpdate(2.0), "held update " + i);
    }
    assertTrue(atTwo.afterUpdate(2.0), "the limit ends it");
  }

  @Test
  void anUpdateWithoutAHoldLeavesTheStateAsItWas() throws java.io.IOException {
    DriftMonitor fresh = new DriftMonitor(settings(10));
    DriftMonitor m = new DriftMonitor(settings(10));
    assertFalse(m.afterUpdate(0.5));
    assertFalse(m.noiseHeld());
    assertEquals(java.util.Arrays.toString(bytes(fresh)), java.util.Arrays.toString(bytes(m)));
  }

  static byte[] bytes(DriftMonitor m) throws java.io.IOException {
    java.io.ByteArrayOutputStream bo = new java.io.ByteArrayOutputStream();
    java.io.DataOutputStream out = new java.io.DataOutputStream(bo);
    m.writeTo(out);
    m.writeAttributionTo(out);
    out.flush();
    return bo.toByteArray();
  }

  @Test
  void upAlarm_whenTheModelHoldsFewerRecordsThanM_keepsLambda() {
    DriftMonitor m = new DriftMonitor(settings(10));
    fireUp(m);
    assertEquals(0.99, m.forgettingFor(0.99, 8.0), "n_eff = 8 is already below m = 10");
  }

  @Test
  void upAlarm_withoutResetToRecords_asksNothing() {
    DriftMonitor m = new DriftMonitor(settings(0));
    fireUp(m);
    assertTrue(m.lastErrorAlarmUp());
    assertEquals(0.99, m.forgettingFor(0.99, 50.0), "reset_to_records 0: no reset");
    assertFalse(m.noiseHeld());
  }

  @Test
  void downAlarm_asksNothing_andIsNotUp() {
    DriftMonitor m = new DriftMonitor(settings(10));
    for (int call = 1; call <= W; call++) {
      assertFalse(m.observeError(0.5, 1.0, 1.0, call, call), "the monitor's warm-up");
    }
    // |z| = 3 for 8 values, then 0.25: the level falls
    List<Double> seen = new ArrayList<>();
    boolean fired = false;
    for (int i = 0; i < 60 && !fired; i++) {
      double error = i < 8 ? 3.0 : 0.25;
      seen.add(error);
      fired = m.observeError(error, 1.0, 1.0, 100L + i, 100 + i);
    }
    assertTrue(fired, "a level that fell fired");
    double[] ref = PageHinkleyDefinitionTest.definition(seen, 0.1, W);
    assertTrue(ref[1] > 3.0 && !(ref[0] > 3.0), "the definition says down");
    assertFalse(m.lastErrorAlarmUp());
    assertEquals(0.99, m.forgettingFor(0.99, 50.0), "a down alarm asks no reset");
    assertFalse(m.noiseHeld(), "nor a hold");
  }
}
