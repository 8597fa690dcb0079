package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Covariance wind-up: a column that receives no data while the others do must keep its variance
 * at most its prior with the guard (stabilized forgetting, Kulhavý and Zarrop 1993: the fixed
 * point of Lambda = lambda Lambda + (1 - lambda) Lambda_0 + x x^T keeps Lambda >= Lambda_0), and
 * blows up without it (the plain decaying prior: Lambda_kk = lambda^t / v0).
 */
class WindupGuardTest {

  private static final double V0 = 10.0;
  private static final double LAMBDA = 0.99;

  private static double varianceOfAbsentColumn(boolean guard, int updates, double[] maxSeen) {
    Random rnd = new Random(77);
    RlsModel m = new RlsModel(4, ModelSettings.defaults().withPriorVariance(V0).withWindupGuard(guard));
    double[] x = new double[4];
    double max = 0.0;
    for (int t = 0; t < updates; t++) {
      x[0] = 1.0;
      x[1] = rnd.nextGaussian();
      x[2] = rnd.nextDouble() < 0.5 ? 1.0 : 0.0;
      x[3] = 0.0; // the absent category
      assertTrue(m.update(x, 2 * x[1] - x[2] + rnd.nextGaussian(), LAMBDA));
      // after the first round-robin cycle (4 updates), at every phase of the cycle (1021 is odd)
      if (t >= 4 && (t % 1021 == 0 || t == updates - 1 || t < 64)) {
        max = Math.max(max, m.unscaledCovariance()[3 * 4 + 3]);
      }
    }
    maxSeen[0] = max;
    return m.unscaledCovariance()[3 * 4 + 3];
  }

  @Test
  void absentColumnVarianceStaysWithinPriorWithGuard() {
    double[] max = new double[1];
    double last = varianceOfAbsentColumn(true, 1_000_000, max);
    // bounded by the prior variance after the first cycle; 1e-9 relative allows for rounding of the decay bookkeeping
    assertTrue(max[0] <= V0 * (1 + 1e-9), "max variance " + max[0] + " > prior " + V0);
    assertTrue(last >= 0.9 * V0, "and it stays near the prior rather than shrinking: " + last);
  }

  @Test
  void absentColumnVarianceExplodesWithoutGuard() {
    double[] max = new double[1];
    double last = varianceOfAbsentColumn(false, 5_000, max);
    // 0.99^5000 = 1.5e-22: the prior information has decayed away
    assertTrue(last > 1e6 * V0, "variance " + last + " should far exceed the prior " + V0);
  }
}
