package dev.runnel.core.drift;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Random;
import org.junit.jupiter.api.Test;

/** The Page–Hinkley test on hand-worked values and on seeded streams with and without a step. */
class PageHinkleyTest {

  @Test
  void firesOnTheValueWorkedOutByHand() {
    // δ = 0, λ = 3, warm-up 1. Values 1,1,1,1 then 3,3,3. Worked by hand:
    // t=5: mean 7/5 = 1.4,   U = 3 − 1.4       = 1.6
    // t=6: mean 10/6 = 1.667, U = 1.6 + 1.333  = 2.933  (not above 3)
    // t=7: mean 13/7 = 1.857, U = 2.933 + 1.143 = 4.076 (above 3: fires on the 7th value)
    PageHinkley ph = new PageHinkley(0.0, 3.0, 1);
    double[] x = {1, 1, 1, 1, 3, 3, 3};
    int firedAt = -1;
    for (int i = 0; i < x.length; i++) {
      PageHinkley.Direction d = ph.add(x[i]);
      if (i == 5) {
        assertEquals(2.9333333333333336, ph.upStatistic(), 1e-12, "U after the 6th value");
      }
      if (d != PageHinkley.Direction.NONE) {
        assertEquals(PageHinkley.Direction.UP, d);
        firedAt = i + 1;
        break;
      }
    }
    assertEquals(7, firedAt);
    assertEquals(4.076190476190476, ph.lastFireStatistic(), 1e-12);
    assertEquals(0, ph.count(), "reset after the alarm");
  }

  @Test
  void firesDownWhenTheLevelFalls() {
    // mirror of the worked case: 3,3,3,3 then 1,1,1 fires "down" on the 7th value by the same arithmetic
    PageHinkley ph = new PageHinkley(0.0, 3.0, 1);
    double[] x = {3, 3, 3, 3, 1, 1, 1};
    PageHinkley.Direction last = PageHinkley.Direction.NONE;
    int i = 0;
    while (i < x.length && last == PageHinkley.Direction.NONE) {
      last = ph.add(x[i++]);
    }
    assertEquals(PageHinkley.Direction.DOWN, last);
    assertEquals(7, i);
  }

  /**
   * Absolute values of standard normal errors whose sd doubles at record 2,000. Stated delay with
   * δ = 0.1, λ = 30: the mean of |z| moves from √(2/π) ≈ 0.80 to 1.60 (common practice), so the
   * statistic climbs about 0.7 per record and fires after roughly 45 records; every one of 200
   * seeded trials must fire within 120 records of the change and none before it.
   */
  @Test
  void stepInTheErrorLevelFiresWithinTheStatedDelay() {
    int maxDelay = 0;
    long sum = 0;
    for (int trial = 0; trial < 200; trial++) {
      Random rnd = new Random(1000 + trial);
      PageHinkley ph = new PageHinkley(0.1, 30, 100);
      int fired = -1;
      for (int i = 0; i < 4000 && fired < 0; i++) {
        double sd = i < 2000 ? 1.0 : 2.0;
        if (ph.add(Math.abs(sd * rnd.nextGaussian())) != PageHinkley.Direction.NONE) {
          fired = i;
        }
      }
      assertTrue(fired >= 2000, "trial " + trial + " fired before the change, at " + fired);
      int delay = fired - 2000;
      assertTrue(delay <= 120, "trial " + trial + ": delay " + delay);
      maxDelay = Math.max(maxDelay, delay);
      sum += delay;
    }
    double mean = sum / 200.0;
    assertTrue(mean > 20 && mean < 80, "mean delay " + mean + " (expected about 45)");
  }

  /**
   * Stated false-alarm behaviour: for independent |z| (sd 0.60) with δ = 0.1, λ = 30, one
   * excursion reaches λ with probability about exp(−2·0.1·30/0.364) ≈ 7e−8 (Wald's
   * approximation, common practice); 10 streams of 10⁵ values must give no alarm at all.
   */
  @Test
  void stationaryStreamsOfAHundredThousandGiveNoAlarm() {
    for (int s = 0; s < 10; s++) {
      Random rnd = new Random(77 + s);
      PageHinkley ph = new PageHinkley(0.1, 30, 100);
      double maxUp = 0;
      for (int i = 0; i < 100_000; i++) {
        assertEquals(PageHinkley.Direction.NONE, ph.add(Math.abs(rnd.nextGaussian())), "stream " + s + " value " + i);
        maxUp = Math.max(maxUp, Math.max(ph.upStatistic(), ph.downStatistic()));
      }
      assertTrue(maxUp > 1 && maxUp < 30, "largest statistic " + maxUp);
    }
  }

  @Test
  void parametersOutsideTheirRangeAreRefusedByName() {
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> new PageHinkley(-1, 30, 1));
    assertTrue(e.getMessage().contains("drift.error_allowance"), e.getMessage());
    e = assertThrows(IllegalArgumentException.class, () -> new PageHinkley(0.1, 0, 1));
    assertTrue(e.getMessage().contains("drift.error_threshold"), e.getMessage());
    e = assertThrows(IllegalArgumentException.class, () -> new PageHinkley(0.1, 1, 0));
    assertTrue(e.getMessage().contains("drift.error_warmup_records"), e.getMessage());
  }
}
