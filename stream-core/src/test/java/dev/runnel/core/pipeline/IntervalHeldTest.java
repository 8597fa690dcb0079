package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;

import org.junit.jupiter.api.Test;

/**
 * "Covered" is whether the closed interval {@code [low, high]} held the actual (docs/formats.md,
 * settled forecasts; the coverage metric counts the same): both ends count as held, the next
 * double outside does not, and a missing value (NaN) is never covered. Checked at the exact ends,
 * where a {@code <} written for {@code <=} would differ. The error is {@code actual − forecast}
 * and the horizon {@code target − issue}.
 */
class IntervalHeldTest {

  private static boolean prediction(double low, double high, double actual) {
    Prediction p = new Prediction();
    p.low = low;
    p.high = high;
    p.actual = actual;
    return p.covered();
  }

  private static boolean settled(double low, double high, double actual) {
    SettledForecast s = new SettledForecast();
    s.low = low;
    s.high = high;
    s.actual = actual;
    return s.covered();
  }

  @Test void bothEndsAreHeld_theNextDoubleOutsideIsNot() {
    double lo = -1.25;
    double hi = 3.5;
    double[] actual = {lo, hi, Math.nextDown(lo), Math.nextUp(hi), Math.nextUp(lo), Math.nextDown(hi), 0.0, Double.NaN};
    boolean[] held = {true, true, false, false, true, true, true, false};
    for (int i = 0; i < actual.length; i++) {
      assertEquals(held[i], prediction(lo, hi, actual[i]), "prediction, actual " + actual[i]);
      assertEquals(held[i], settled(lo, hi, actual[i]), "settled, actual " + actual[i]);
    }
    // a degenerate interval holds exactly its one point
    assertEquals(true, prediction(2.0, 2.0, 2.0));
    assertEquals(true, settled(2.0, 2.0, 2.0));
    // missing interval ends (warming up) hold nothing
    assertEquals(false, prediction(Double.NaN, Double.NaN, 1.0));
    assertEquals(false, settled(Double.NaN, hi, 1.0));
    assertEquals(false, settled(lo, Double.NaN, 1.0));
  }

  @Test void errorAndHorizon() {
    Prediction p = new Prediction();
    p.predicted = 10.5;
    p.actual = 7.25;
    p.eventTimeMillis = 1_000_000L;
    p.targetTimeMillis = 1_000_000L + 3_600_000L;
    assertEquals(-3.25, p.error());
    assertEquals(3_600_000L, p.horizonMillis());
    assertEquals(1_000_000L, p.issueTimeMillis());
    p.actual = Double.NaN;
    assertEquals(Double.NaN, p.error());
    SettledForecast s = new SettledForecast();
    s.forecast = 2.5;
    s.actual = 4.0;
    s.issueTimeMillis = 500L;
    s.targetTimeMillis = 200L;
    assertEquals(1.5, s.error());
    assertEquals(-300L, s.horizonMillis(), "a request whose target had come has a horizon of 0 or less");
  }
}
