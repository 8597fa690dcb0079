package dev.runnel.core.drift;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The Page–Hinkley test against its definition, recomputed from scratch after every value: for
 * the values since the last reset, {@code U_T = Σ_{t>warmup} (x_t − x̄_t − δ)} and
 * {@code D_T = Σ_{t>warmup} (x_t − x̄_t + δ)} (both 0 during the warm-up, so their running minimum
 * and maximum start at 0), alarm "up" when {@code U_T − min U_t > λ}, else "down" when
 * {@code max D_t − D_T > λ}, and a reset after an alarm. Checks both directions, the warm-up, the
 * statistics, the running mean and what is kept of the last alarm; a test that never fires (or
 * fires one value early or late) fails here.
 */
class PageHinkleyDefinitionTest {

  /** The statistics of the values since the last reset, by the definition (no running state). */
  static double[] definition(List<Double> xs, double delta, long warmup) {
    double sum = 0;
    double u = 0;
    double uMin = 0;
    double d = 0;
    double dMax = 0;
    for (int t = 1; t <= xs.size(); t++) {
      double x = xs.get(t - 1);
      sum += x;
      double meanT = sum / t;
      if (t > warmup) {
        u += x - meanT - delta;
        d += x - meanT + delta;
        uMin = Math.min(uMin, u);
        dMax = Math.max(dMax, d);
      }
    }
    return new double[] {u - uMin, dMax - d, xs.isEmpty() ? 0 : sum / xs.size()};
  }

  @Test
  void agreesWithTheDefinitionAfterEveryValue_inBothDirections() {
    Random rnd = new Random(20261205L);
    int ups = 0;
    int downs = 0;
    for (int trial = 0; trial < 20; trial++) {
      double delta = 0.05 * trial;
      double lambda = 2.0 + trial % 5;
      long warmup = 1 + trial % 7;
      PageHinkley ph = new PageHinkley(delta, lambda, warmup);
      List<Double> since = new ArrayList<>();
      double level = 0;
      double lastStat = Double.NaN;
      double lastMean = Double.NaN;
      for (int i = 0; i < 400; i++) {
        if (i % 40 == 0) {
          level = 3 * rnd.nextGaussian(); // a new level now and then: alarms both ways
        }
        double x = level + rnd.nextGaussian();
        since.add(x);
        double[] ref = definition(since, delta, warmup);
        PageHinkley.Direction want = PageHinkley.Direction.NONE;
        if (since.size() > warmup) {
          if (ref[0] > lambda) {
            want = PageHinkley.Direction.UP;
          } else if (ref[1] > lambda) {
            want = PageHinkley.Direction.DOWN;
          }
        }
        PageHinkley.Direction got = ph.add(x);
        assertEquals(want, got, "trial " + trial + " value " + i + ": statistics " + ref[0] + ", " + ref[1]);
        if (want != PageHinkley.Direction.NONE) {
          lastStat = want == PageHinkley.Direction.UP ? ref[0] : ref[1];
          lastMean = ref[2];
          ups += want == PageHinkley.Direction.UP ? 1 : 0;
          downs += want == PageHinkley.Direction.DOWN ? 1 : 0;
          since.clear();
          assertEquals(0, ph.count());
          assertEquals(0.0, ph.mean());
          assertEquals(0.0, ph.upStatistic());
          assertEquals(0.0, ph.downStatistic());
        } else {
          double tol = 1e-9 * (1 + Math.abs(ref[0]) + Math.abs(ref[1]));
          assertEquals(since.size(), ph.count());
          assertEquals(ref[0], ph.upStatistic(), tol, "U − min U");
          assertEquals(ref[1], ph.downStatistic(), tol, "max D − D");
          assertEquals(ref[2], ph.mean(), 1e-12 * (1 + Math.abs(ref[2])), "running mean");
        }
        if (Double.isNaN(lastStat)) {
          assertTrue(Double.isNaN(ph.lastFireStatistic()) && Double.isNaN(ph.lastFireMean()), "NaN before the first alarm");
        } else {
          assertEquals(lastStat, ph.lastFireStatistic(), 1e-9 * (1 + lastStat));
          assertEquals(lastMean, ph.lastFireMean(), 1e-12 * (1 + Math.abs(lastMean)));
        }
      }
      assertEquals(delta, ph.allowance());
      assertEquals(lambda, ph.threshold());
    }
    assertTrue(ups >= 20 && downs >= 20, "both directions fired often: " + ups + " up, " + downs + " down");
  }

  @Test
  void theWarmupsLastValueNeverFires_theNextOneMay() {
    // warm-up 3: values 0, 0, 10. Were the third value tested: mean 10/3, U = 10 − 10/3 ≈ 6.7 > 1.
    PageHinkley ph = new PageHinkley(0.0, 1.0, 3);
    assertEquals(PageHinkley.Direction.NONE, ph.add(0));
    assertEquals(PageHinkley.Direction.NONE, ph.add(0));
    assertEquals(PageHinkley.Direction.NONE, ph.add(10));
    assertEquals(0.0, ph.upStatistic(), "no statistic during the warm-up");
    // fourth value 10: mean 5, U = 10 − 5 = 5 > 1
    assertEquals(PageHinkley.Direction.UP, ph.add(10));
    assertEquals(5.0, ph.lastFireStatistic());
    assertEquals(5.0, ph.lastFireMean());
  }

  @Test
  void aStatisticEqualToTheThresholdDoesNotFire_eitherWay() {
    // warm-up 1, δ = 0, λ = 1. Up: 0 then 2: mean 1, U = 2 − 1 = 1 (exact), not above λ.
    PageHinkley up = new PageHinkley(0.0, 1.0, 1);
    up.add(0);
    assertEquals(PageHinkley.Direction.NONE, up.add(2));
    assertEquals(1.0, up.upStatistic());
    // Down: 0 then −2: mean −1, D = −2 + 1 = −1, max D − D = 1 (exact), not above λ.
    PageHinkley down = new PageHinkley(0.0, 1.0, 1);
    down.add(0);
    assertEquals(PageHinkley.Direction.NONE, down.add(-2));
    assertEquals(1.0, down.downStatistic());
    assertEquals(-1.0, down.mean());
    // one more −2: mean −4/3, D = −1 + (−2 + 4/3) = −5/3: max D − D = 5/3 > 1, "down"
    assertEquals(PageHinkley.Direction.DOWN, down.add(-2));
    assertEquals(5.0 / 3.0, down.lastFireStatistic(), 1e-15);
    assertEquals(-4.0 / 3.0, down.lastFireMean(), 1e-15);
  }
}
