package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayOutputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.Random;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.CommonOps_DDRM;
import org.junit.jupiter.api.Test;

/**
 * The a-priori leverage and prediction given by the four-argument update and by {@code forecast},
 * against separate solves and an explicit EJML inverse.
 */
class UpdateLeverageTest {

  private static byte[] bytes(RlsModel m) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    m.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  @Test
  void leverageFromTheUpdateEqualsTheAPrioriLeverageAndTheStateIsTheSame() throws IOException {
    Random r = new Random(3);
    int p = 12;
    ModelSettings s = ModelSettings.defaults().withPriorVariance(10);
    RlsModel a = new RlsModel(p, s);
    RlsModel b = new RlsModel(p, s);
    double[] x = new double[p];
    double[] out = new double[1];
    double worst = 0.0;
    for (int t = 0; t < 3000; t++) {
      x[0] = 1.0;
      for (int j = 1; j < p; j++) {
        x[j] = j < 6 ? r.nextGaussian() : (r.nextInt(6) == j - 6 ? 1.0 : 0.0); // dense part and a one-hot part
      }
      double y = 2.0 + x[1] - 0.5 * x[3] + 0.3 * r.nextGaussian();
      double lambda = t % 7 == 0 ? 1.0 : 0.995;
      double before = a.leverage(x);
      if (t % 500 == 0) {
        // EJML's general inverse of the information R^T R as an independent reference
        DMatrixRMaj info = new DMatrixRMaj(p, p, true, a.informationMatrix());
        DMatrixRMaj inv = new DMatrixRMaj(p, p);
        assertTrue(CommonOps_DDRM.invert(info, inv));
        DMatrixRMaj xv = new DMatrixRMaj(p, 1, true, x.clone());
        double ref = CommonOps_DDRM.dot(xv, CommonOps_DDRM.mult(inv, xv, null));
        assertEquals(ref, before, 1e-10 * ref);
      }
      assertTrue(a.update(x, y, lambda, out));
      assertTrue(b.update(x, y, lambda));
      worst = Math.max(worst, Math.abs(out[0] - before) / before);
    }
    assertTrue(worst < 1e-11, "largest relative difference " + worst);
    assertArrayEquals(bytes(b), bytes(a), "the leverage output does not change the update");
  }

  @Test
  void predictionFromTheUpdateAndTheForecastAgreeWithTheSolvedWeights() throws IOException {
    // rows with leading zeros (the update leaves the rows before the first non-zero untouched),
    // a one-hot block, forgetting and the windup guard's refresh rows
    Random r = new Random(11);
    int p = 16;
    ModelSettings s = ModelSettings.defaults().withPriorVariance(10);
    RlsModel a = new RlsModel(p, s);
    RlsModel b = new RlsModel(p, s);
    double[] x = new double[p];
    double[] out = new double[2];
    double[] fc = new double[2];
    double worstPrediction = 0.0;
    double worstForecast = 0.0;
    double worstLeverage = 0.0;
    for (int t = 0; t < 4000; t++) {
      int lead = t % 5 == 0 ? r.nextInt(p) : 0;
      for (int j = 0; j < p; j++) {
        x[j] = j < lead ? 0.0 : j < 8 ? r.nextGaussian() : (r.nextInt(8) == j - 8 ? 1.0 : 0.0);
      }
      double y = 1.0 + x[1] - 0.5 * x[3] + 2.0 * x[9] + 0.3 * r.nextGaussian();
      double lambda = t % 7 == 0 ? 1.0 : 0.99;
      double predicted = a.predict(x);
      double lev = a.leverage(x);
      a.forecast(x, fc);
      worstForecast = Math.max(worstForecast, Math.abs(fc[1] - predicted) / (1.0 + Math.abs(predicted)));
      worstLeverage = Math.max(worstLeverage, Math.abs(fc[0] - lev) / Math.max(lev, 1e-300));
      assertTrue(a.update(x, y, lambda, out));
      assertTrue(b.update(x, y, lambda));
      worstPrediction = Math.max(worstPrediction, Math.abs(out[1] - predicted) / (1.0 + Math.abs(predicted)));
    }
    assertTrue(worstPrediction < 1e-12, "prediction from the update: largest difference " + worstPrediction);
    assertTrue(worstForecast < 1e-12, "forecast: largest difference " + worstForecast);
    assertTrue(worstLeverage < 1e-11, "forecast leverage: largest relative difference " + worstLeverage);
    assertArrayEquals(bytes(b), bytes(a), "asking for the a-priori values does not change the update");
  }

  @Test
  void refusedUpdateGivesNaNAndChangesNothing() throws IOException {
    RlsModel m = new RlsModel(3, ModelSettings.defaults());
    m.update(new double[] {1, 2, 3}, 1.0, 0.99);
    byte[] before = bytes(m);
    double[] out = {7.0};
    boolean ok = m.update(new double[] {1, Double.NaN, 3}, 1.0, 0.99, out);
    assertTrue(!ok && Double.isNaN(out[0]));
    assertArrayEquals(before, bytes(m));
  }
}
