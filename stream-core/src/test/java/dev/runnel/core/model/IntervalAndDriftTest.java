package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Random;
import org.junit.jupiter.api.Test;

/** Prediction intervals cover at their level; forgetting tracks a change at the rate its half-life implies. */
class IntervalAndDriftTest {

  @Test
  void ninetyPercentIntervalCoversNinetyPercent() {
    Random rnd = new Random(90);
    ModelSettings s = ModelSettings.defaults().withIntervalZ(ModelSettings.zForLevel(0.90));
    RlsModel m = new RlsModel(4, s);
    double[] x = new double[4];
    int covered = 0;
    int counted = 0;
    for (int t = 0; t < 100_000; t++) {
      x[0] = 1.0;
      x[1] = rnd.nextGaussian();
      x[2] = rnd.nextGaussian() * 2;
      x[3] = rnd.nextDouble() < 0.2 ? 1.0 : 0.0;
      double y = 5 + x[1] - 0.5 * x[2] + 3 * x[3] + 2.0 * rnd.nextGaussian();
      double half = m.intervalHalfWidth(x);
      if (!Double.isNaN(half)) {
        counted++;
        if (Math.abs(y - m.predict(x)) <= half) {
          covered++;
        }
      }
      assertTrue(m.update(x, y, 1.0));
    }
    double share = covered / (double) counted;
    // Gaussian noise, a correctly specified model: 90 % nominal; binomial sd over 1e5 is 0.1 %
    assertTrue(share >= 0.88 && share <= 0.92, "coverage " + share);
  }

  /**
   * With half-life h, old data keeps weight share lambda^t = 2^(-t/h) t records after the change
   * (in the steady state the total weight is 1/(1 - lambda) before and after), so the estimate's
   * bias after t records is about delta 2^(-t/h). It is within one standard error se once
   * t >= h log2(delta / se); then |estimate - new| stays within 3 se unless the noise alone is
   * beyond 2 se (about 5 % at a single record). The test checks at t* = h log2(delta / se) + h
   * (one half-life of margin: bias then se / 2) and requires that the estimate was still more
   * than 3 se away a quarter of the way there.
   */
  @Test
  void forgettingReachesTheNewWeightWithinTheHalfLifeBound() {
    Random rnd = new Random(66);
    double h = 200;
    double lambda = Math.pow(2, -1 / h);
    RlsModel m = new RlsModel(3, ModelSettings.defaults());
    double[] x = new double[3];
    double[] w = new double[3];
    double[] se = new double[3];
    int change = 5000;
    double before = 1.0;
    double after = 3.0;
    double seAtChange = 0;
    int tStar = -1;
    for (int t = 0; t < change + 4000; t++) {
      x[0] = 1.0;
      x[1] = rnd.nextGaussian();
      x[2] = rnd.nextGaussian();
      double b = t < change ? before : after;
      double y = 0.5 + b * x[1] - x[2] + 0.5 * rnd.nextGaussian();
      assertTrue(m.update(x, y, lambda));
      if (t == change - 1) {
        m.standardErrors(se);
        seAtChange = se[1];
        tStar = change + (int) Math.ceil(h * (Math.log((after - before) / seAtChange) / Math.log(2)) + h);
      }
      if (t == change + (tStar - change) / 4) {
        m.weights(w);
        assertTrue(Math.abs(w[1] - after) > 3 * seAtChange, "not yet there a quarter of the way: " + w[1]);
      }
      if (tStar > 0 && t == tStar) {
        m.weights(w);
        m.standardErrors(se);
        assertTrue(Math.abs(w[1] - after) <= 3 * se[1],
            "at t* = change + " + (tStar - change) + ": weight " + w[1] + ", se " + se[1]);
      }
    }
    assertTrue(tStar > change && tStar - change < 10 * h, "t* derived: " + (tStar - change));
  }
}
