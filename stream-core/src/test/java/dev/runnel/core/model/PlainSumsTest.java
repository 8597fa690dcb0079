package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Random;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.CommonOps_DDRM;
import org.junit.jupiter.api.Test;

/**
 * The model against a reference kept apart: the information {@code Lambda} and the vector
 * {@code b = sum w x y} accumulated as plain sums, decayed by every update's {@code lambda} and
 * given every prior row the model reports ({@link PriorRowObserver}), with the weights solved from
 * them by EJML ({@code CommonOps_DDRM.solve}); and the a-priori leverage and prediction of each
 * update against separate solves made just before it. Strong forgetting makes the factor's scale
 * pass {@link RlsModel#MIN_SCALE} several times, so the renormalization runs after updates that
 * swapped the factor's two sets of rows at once (dense rows, no guard) and after row-by-row swaps
 * (with the guard's refresh row).
 */
class PlainSumsTest {

  private static void check(ModelSettings s, double lambda, int n, long seed) {
    int p = 6;
    RlsModel m = new RlsModel(p, s);
    double prior = 1.0 / s.priorVariance();
    double[] info = new double[p * p];
    double[] bvec = new double[p];
    for (int j = 0; j < p; j++) {
      info[j * p + j] = prior;
    }
    m.observePriorRows((column, added) -> info[column * p + column] += added);
    Random r = new Random(seed);
    double[] x = new double[p];
    double[] out = new double[2];
    double worstLeverage = 0.0;
    double worstPrediction = 0.0;
    for (int t = 0; t < n; t++) {
      x[0] = 1.0;
      for (int j = 1; j < p; j++) {
        x[j] = r.nextGaussian();
      }
      double y = 1.0 + x[1] - 2.0 * x[2] + 0.1 * r.nextGaussian();
      double leverageBefore = m.leverage(x) / lambda;
      double predictionBefore = m.predict(x);
      for (int k = 0; k < p * p; k++) { // the reference decays first; the refresh row comes during the update
        info[k] *= lambda;
      }
      for (int j = 0; j < p; j++) {
        bvec[j] = lambda * bvec[j] + x[j] * y;
        for (int k = 0; k < p; k++) {
          info[j * p + k] += x[j] * x[k];
        }
      }
      assertTrue(m.update(x, y, lambda, out), "update " + t);
      worstLeverage = Math.max(worstLeverage,
          Math.abs(out[0] - lambda * leverageBefore) / (1.0 + lambda * leverageBefore));
      worstPrediction = Math.max(worstPrediction,
          Math.abs(out[1] - predictionBefore) / (1.0 + Math.abs(predictionBefore)));
    }
    assertTrue(worstLeverage < 1e-10, "a-priori leverage against a separate solve: " + worstLeverage);
    assertTrue(worstPrediction < 1e-10, "a-priori prediction against a separate solve: " + worstPrediction);
    double[] got = m.informationMatrix();
    double norm = 0.0;
    double diff = 0.0;
    for (int k = 0; k < p * p; k++) {
      norm += info[k] * info[k];
      diff += (got[k] - info[k]) * (got[k] - info[k]);
    }
    assertTrue(Math.sqrt(diff) <= 1e-10 * Math.sqrt(norm), "information, relative error " + Math.sqrt(diff / norm));
    DMatrixRMaj theta = new DMatrixRMaj(p, 1);
    assertTrue(CommonOps_DDRM.solve(new DMatrixRMaj(p, p, true, info), new DMatrixRMaj(p, 1, true, bvec), theta));
    double[] w = new double[p];
    m.weights(w);
    for (int j = 0; j < p; j++) {
      assertEquals(theta.get(j), w[j], 1e-9 * (1.0 + Math.abs(theta.get(j))), "weight " + j);
    }
  }

  @Test
  void strongForgettingWithoutTheGuard() {
    // lambda = 0.9: the scale falls by 2^-0.076 per update and passes 2^-60 about every 790 updates
    check(ModelSettings.defaults().withPriorVariance(100).withWindupGuard(false), 0.9, 3000, 1);
  }

  @Test
  void strongForgettingWithTheGuard() {
    check(ModelSettings.defaults().withPriorVariance(100).withWindupGuard(true), 0.9, 3000, 2);
  }
}
