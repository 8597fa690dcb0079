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

/** The leverage given by the four-argument update, against a separate solve and an explicit EJML inverse. */
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
