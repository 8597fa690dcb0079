package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Columns added as never re-based live in a leading block of the factor (its own column order).
 * A model that keeps them there must give what a model with the layout's order gives, through
 * adds, removals, re-basings, forgetting and the windup guard; and its checkpoint must continue
 * bit for bit.
 */
class ColumnOrderTest {

  private static byte[] bytes(RlsModel m) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    m.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  private static RlsModel copy(RlsModel m) throws IOException {
    return RlsModel.readFrom(new DataInputStream(new ByteArrayInputStream(bytes(m))));
  }

  @Test
  void leadingBlockGivesTheSameModelAsTheLayoutOrder() throws IOException {
    for (boolean guard : new boolean[] {false, true}) {
      Random data = new Random(guard ? 21 : 22);
      ModelSettings s = ModelSettings.defaults().withPriorVariance(50).withWindupGuard(guard);
      int dense = 4;
      RlsModel ordered = new RlsModel(1 + dense, s); // one-hot levels in a leading block
      RlsModel plain = new RlsModel(1 + dense, s); // every column appended, the layout's order
      RlsModel restored = null;
      List<Boolean> level = new ArrayList<>(); // per layout column: a one-hot level?
      for (int j = 0; j <= dense; j++) {
        level.add(false);
      }
      double[] x = new double[64];
      double[] wa = new double[64];
      double[] wb = new double[64];
      double[] outA = new double[2];
      double[] outB = new double[2];
      double worst = 0.0;
      for (int step = 0; step < 6000; step++) {
        double u = data.nextDouble();
        int p = ordered.dimension();
        if (u < 0.01 && p < 40) {
          boolean lv = data.nextDouble() < 0.8;
          ordered.columnAdded(p, "c", lv);
          plain.columnAdded(p, "c");
          if (restored != null) {
            restored.columnAdded(p, "c", lv);
          }
          level.add(lv);
        } else if (u < 0.017 && p > 3) {
          int k = 1 + data.nextInt(p - 1);
          ordered.columnRemoved(k);
          plain.columnRemoved(k);
          if (restored != null) {
            restored.columnRemoved(k);
          }
          level.remove(k);
        } else if (u < 0.1) {
          int k = 1 + data.nextInt(p - 1);
          if (!level.get(k)) {
            double sc = 0.5 + data.nextDouble();
            double sh = data.nextGaussian();
            ordered.columnRebased(k, sc, sh);
            plain.columnRebased(k, sc, sh);
            if (restored != null) {
              restored.columnRebased(k, sc, sh);
            }
          }
        }
        p = ordered.dimension();
        // one level of the one-hot block on (or none), the other columns dense
        List<Integer> levels = new ArrayList<>();
        for (int j = 0; j < p; j++) {
          if (level.get(j)) {
            levels.add(j);
          }
        }
        int on = levels.isEmpty() || data.nextInt(10) == 0 ? -1 : levels.get(data.nextInt(levels.size()));
        x[0] = 1.0;
        for (int j = 1; j < p; j++) {
          x[j] = level.get(j) ? (j == on ? 1.0 : 0.0) : data.nextGaussian();
        }
        double y = 1.0 + x[1] - 0.5 * x[2] + (on >= 0 ? 0.1 * (on % 7) : 0.0) + 0.3 * data.nextGaussian();
        double lambda = 0.99 + 0.01 * data.nextDouble();
        if (step == 3000) {
          restored = copy(ordered);
        }
        assertTrue(ordered.update(x, y, lambda, outA));
        assertTrue(plain.update(x, y, lambda, outB));
        if (restored != null) {
          double[] outC = new double[2];
          assertTrue(restored.update(x, y, lambda, outC));
          assertEquals(Double.doubleToRawLongBits(outA[1]), Double.doubleToRawLongBits(outC[1]), "restored, step " + step);
        }
        if (step % 10 == 0) {
          ordered.weights(wa);
          plain.weights(wb);
          for (int j = 0; j < p; j++) {
            worst = Math.max(worst, Math.abs(wa[j] - wb[j]) / (1.0 + Math.abs(wb[j])));
          }
          worst = Math.max(worst, Math.abs(outA[1] - outB[1]) / (1.0 + Math.abs(outB[1])));
          worst = Math.max(worst, Math.abs(outA[0] - outB[0]) / (1e-3 + Math.abs(outB[0])));
          worst = Math.max(worst, Math.abs(ordered.leverage(x) - plain.leverage(x)) / plain.leverage(x));
        }
      }
      int p = ordered.dimension();
      assertTrue(level.subList(1, p).contains(true) && level.subList(1, p).contains(false), "both kinds of column present");
      assertTrue(worst < 1e-9, "guard " + guard + ": largest relative difference " + worst);
      double[] sa = new double[p];
      double[] sb = new double[p];
      ordered.standardErrors(sa);
      plain.standardErrors(sb);
      double[] ca = ordered.unscaledCovariance();
      double[] cb = plain.unscaledCovariance();
      double[] ia = ordered.informationMatrix();
      double[] ib = plain.informationMatrix();
      for (int j = 0; j < p; j++) {
        assertEquals(sb[j], sa[j], 1e-9 * sb[j], "standard error " + j);
      }
      for (int j = 0; j < p * p; j++) {
        assertEquals(cb[j], ca[j], 1e-8 * (Math.abs(cb[j]) + 1e-6), "covariance entry " + j);
        assertEquals(ib[j], ia[j], 1e-8 * (Math.abs(ib[j]) + 1e-3), "information entry " + j);
      }
      assertArrayEquals(bytes(ordered), bytes(restored), "the restored model continued bit for bit");
    }
  }

  @Test
  void reBasingALevelColumnIsRefused() {
    RlsModel m = new RlsModel(2, ModelSettings.defaults());
    m.columnAdded(2, "hub=H01", true);
    IllegalStateException e = assertThrows(IllegalStateException.class, () -> m.columnRebased(2, 2.0, 0.5));
    assertTrue(e.getMessage().contains("column 2 was added as never re-based"), e.getMessage());
  }
}
