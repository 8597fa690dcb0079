package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.util.Random;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.CommonOps_DDRM;
import org.junit.jupiter.api.Test;

/** Exactness properties: re-basing, marginalization, the update guard, checkpoints. */
class ModelPropertiesTest {

  static byte[] bytes(RlsModel m) {
    try {
      ByteArrayOutputStream b = new ByteArrayOutputStream();
      m.writeTo(new DataOutputStream(b));
      return b.toByteArray();
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  static RlsModel restore(byte[] b) {
    try {
      return RlsModel.readFrom(new DataInputStream(new ByteArrayInputStream(b)));
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  static RlsModel trained(Random rnd, int p, int n, ModelSettings s) {
    RlsModel m = new RlsModel(p, s);
    double[] x = new double[p];
    for (int i = 0; i < n; i++) {
      x[0] = 1.0;
      double y = 1.0;
      for (int j = 1; j < p; j++) {
        x[j] = rnd.nextGaussian() * 3 + j;
        y += j * x[j];
      }
      assertTrue(m.update(x, y + rnd.nextGaussian(), 0.995));
    }
    return m;
  }

  @Test
  void rebasingChangesNoPrediction() {
    Random rnd = new Random(11);
    RlsModel m = trained(rnd, 5, 200, ModelSettings.defaults());
    double[][] probes = new double[50][5];
    double[] before = new double[50];
    double[] leverageBefore = new double[50];
    for (int i = 0; i < 50; i++) {
      probes[i][0] = 1.0;
      for (int j = 1; j < 5; j++) {
        probes[i][j] = rnd.nextGaussian() * 3 + j;
      }
      before[i] = m.predict(probes[i]);
      leverageBefore[i] = m.leverage(probes[i]);
    }
    for (int r = 0; r < 40; r++) {
      int k = 1 + rnd.nextInt(4);
      double scale = Math.exp(rnd.nextGaussian());
      double shift = rnd.nextGaussian() * 2;
      m.columnRebased(k, scale, shift);
      for (double[] x : probes) { // the same raw input, encoded in the new basis: z' = (z - shift) / scale
        x[k] = (x[k] - shift) / scale;
      }
    }
    for (int i = 0; i < 50; i++) {
      assertEquals(before[i], m.predict(probes[i]), 1e-10 * Math.abs(before[i]), "prediction " + i);
      assertEquals(leverageBefore[i], m.leverage(probes[i]), 1e-9 * leverageBefore[i], "leverage " + i);
    }
  }

  @Test
  void removingAColumnKeepsTheJointPosteriorOfTheRest() {
    Random rnd = new Random(12);
    RlsModel m = trained(rnd, 6, 40, ModelSettings.defaults().withPriorVariance(4.0));
    int p = 6;
    int removed = 2;
    double[] theta = new double[p];
    m.weights(theta);
    // the joint posterior covariance before removal; marginalizing must keep its sub-block exactly
    DMatrixRMaj jointCov = new DMatrixRMaj(p, p, true, m.unscaledCovariance());
    m.columnRemoved(removed);
    assertEquals(p - 1, m.dimension());
    double[] after = new double[p - 1];
    m.weights(after);
    double[] marg = m.unscaledCovariance();
    for (int i = 0, ii = 0; i < p; i++) {
      if (i == removed) {
        continue;
      }
      assertEquals(theta[i], after[ii], 1e-12 * (1 + Math.abs(theta[i])), "weight " + i);
      for (int j = 0, jj = 0; j < p; j++) {
        if (j == removed) {
          continue;
        }
        double e = jointCov.get(i, j);
        assertEquals(e, marg[ii * (p - 1) + jj], 1e-10 * Math.sqrt(jointCov.get(i, i) * jointCov.get(j, j)),
            "covariance " + i + "," + j);
        jj++;
      }
      ii++;
    }
  }

  @Test
  void removalMatchesAnExplicitInverseOfTheInformation() {
    // an independent route: build the information from known rows, invert with EJML, take the sub-block
    Random rnd = new Random(13);
    int p = 5;
    ModelSettings s = ModelSettings.defaults().withPriorVariance(2.0).withWindupGuard(false);
    RlsModel m = new RlsModel(p, s);
    DMatrixRMaj info = new DMatrixRMaj(p, p);
    DMatrixRMaj rhs = new DMatrixRMaj(p, 1);
    for (int j = 0; j < p; j++) {
      info.set(j, j, 0.5); // prior information 1 / 2.0
    }
    double[] x = new double[p];
    for (int i = 0; i < 30; i++) {
      x[0] = 1.0;
      for (int j = 1; j < p; j++) {
        x[j] = rnd.nextGaussian();
      }
      double y = rnd.nextGaussian() + x[1] - x[3];
      assertTrue(m.update(x, y, 1.0));
      for (int a = 0; a < p; a++) {
        rhs.add(a, 0, x[a] * y);
        for (int b = 0; b < p; b++) {
          info.add(a, b, x[a] * x[b]);
        }
      }
    }
    DMatrixRMaj cov = info.copy();
    assertTrue(CommonOps_DDRM.invert(cov));
    DMatrixRMaj mean = new DMatrixRMaj(p, 1);
    CommonOps_DDRM.mult(cov, rhs, mean);
    m.columnRemoved(3);
    m.columnRemoved(1);
    int[] keep = {0, 2, 4};
    double[] w = new double[3];
    m.weights(w);
    double[] c = m.unscaledCovariance();
    for (int a = 0; a < 3; a++) {
      assertEquals(mean.get(keep[a], 0), w[a], 1e-12, "weight of column " + keep[a]);
      for (int b = 0; b < 3; b++) {
        assertEquals(cov.get(keep[a], keep[b]), c[a * 3 + b], 1e-12, "covariance " + keep[a] + "," + keep[b]);
      }
    }
  }

  @Test
  void rejectedUpdateLeavesStateBitIdentical() {
    Random rnd = new Random(14);
    RlsModel m = trained(rnd, 4, 50, ModelSettings.defaults());
    byte[] before = bytes(m);
    double[] good = {1.0, 0.5, -0.25, 2.0};
    double[][] badX = {
        {1.0, Double.NaN, 0, 0}, {1.0, 0, Double.POSITIVE_INFINITY, 0}, {1.0, 0, 0, -1e200}, {Double.NEGATIVE_INFINITY, 0, 0, 0}};
    for (double[] x : badX) {
      assertFalse(m.update(x, 1.0, 0.99));
      assertArrayEquals(before, bytes(m));
    }
    for (double y : new double[] {Double.NaN, Double.POSITIVE_INFINITY, 1e150}) {
      assertFalse(m.update(good, y, 0.99));
      assertArrayEquals(before, bytes(m));
    }
    assertThrows(IllegalArgumentException.class, () -> m.update(good, 1.0, 0.0));
    assertThrows(IllegalArgumentException.class, () -> m.update(good, 1.0, 1.5));
    assertThrows(IllegalArgumentException.class, () -> m.update(new double[2], 1.0, 1.0));
    assertArrayEquals(before, bytes(m));
    assertTrue(m.update(good, 1.0, 0.99), "a good row is accepted afterwards");
  }

  @Test
  void checkpointRoundTripContinuesBitForBit() {
    Random rnd = new Random(15);
    int split = 500 + rnd.nextInt(1000);
    ModelSettings s = ModelSettings.defaults().withPriorVariance(50.0);
    RlsModel a = new RlsModel(3, s);
    RlsModel b = null;
    long seed = rnd.nextLong();
    Random data = new Random(seed);
    double[] x = new double[12];
    for (int step = 0; step < 3000; step++) {
      if (step == split) {
        b = restore(bytes(a));
        assertArrayEquals(bytes(a), bytes(b));
      }
      double u = data.nextDouble();
      if (u < 0.01 && a.dimension() < 10) {
        a.columnAdded(a.dimension(), "n");
        if (b != null) {
          b.columnAdded(b.dimension(), "n");
        }
      } else if (u < 0.015 && a.dimension() > 2) {
        int k = 1 + data.nextInt(a.dimension() - 1);
        a.columnRemoved(k);
        if (b != null) {
          b.columnRemoved(k);
        }
      } else if (u < 0.05) {
        int k = 1 + data.nextInt(a.dimension() - 1);
        double sc = 0.5 + data.nextDouble();
        double sh = data.nextGaussian();
        a.columnRebased(k, sc, sh);
        if (b != null) {
          b.columnRebased(k, sc, sh);
        }
      }
      x[0] = 1.0;
      for (int j = 1; j < a.dimension(); j++) {
        x[j] = data.nextGaussian();
      }
      double y = x[1] + data.nextGaussian();
      double lambda = 0.98 + 0.02 * data.nextDouble();
      if (b != null) {
        assertEquals(Double.doubleToRawLongBits(a.predict(x)), Double.doubleToRawLongBits(b.predict(x)), "step " + step);
        assertEquals(Double.doubleToRawLongBits(a.intervalHalfWidth(x)),
            Double.doubleToRawLongBits(b.intervalHalfWidth(x)));
        assertEquals(a.update(x, y, lambda), b.update(x, y, lambda));
      } else {
        a.update(x, y, lambda);
      }
    }
    assertArrayEquals(bytes(a), bytes(b));
  }

  @Test
  void checkpointRejectsUnknownVersion() {
    byte[] b = bytes(new RlsModel(2, ModelSettings.defaults()));
    b[7] = 99; // the format version's low byte
    assertThrows(IOException.class, () -> RlsModel.readFrom(new DataInputStream(new ByteArrayInputStream(b))));
  }

  @Test
  void callerMistakesThrowNamingTheParameter() {
    RlsModel m = new RlsModel(3, ModelSettings.defaults());
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> m.columnAdded(5, "x"));
    assertTrue(e.getMessage().contains("index"));
    assertThrows(IllegalArgumentException.class, () -> m.columnRemoved(0));
    assertThrows(IllegalArgumentException.class, () -> m.columnRebased(1, -1.0, 0.0));
    assertThrows(IllegalArgumentException.class, () -> new ModelSettings(0.0, true, true, 1.6, 100));
    assertThrows(IllegalArgumentException.class,
        () -> new RlsModel(2, ModelSettings.defaults().withConstantTerm(false)).columnRebased(0, 1.0, 0.5));
  }
}
