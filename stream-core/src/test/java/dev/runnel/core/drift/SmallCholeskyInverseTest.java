package dev.runnel.core.drift;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Arrays;
import java.util.Random;
import org.apache.commons.math3.linear.Array2DRowRealMatrix;
import org.apache.commons.math3.linear.LUDecomposition;
import org.apache.commons.math3.linear.RealMatrix;
import org.junit.jupiter.api.Test;

/**
 * {@link SmallCholesky#invertInto} against Commons Math's {@link LUDecomposition} inverse, for
 * p = 1 to 6, with every array one row and column larger than p and the cells outside the
 * {@code p × p} corner set to NaN: a loop that runs one step too far (a bound {@code <} made
 * {@code <=}) reads a NaN into the inverse or into the factor, and one that stops a step early
 * leaves a cell of the inverse unwritten (also NaN here).
 */
class SmallCholeskyInverseTest {

  private static double[][] nanFilled(int n) {
    double[][] a = new double[n][n];
    for (double[] row : a) {
      Arrays.fill(row, Double.NaN);
    }
    return a;
  }

  @Test void inverseOfTheCorner_matchesCommonsMath_forWidthsOneToSix() {
    Random r = new Random(42);
    for (int p = 1; p <= 6; p++) {
      for (int trial = 0; trial < 5; trial++) {
        // A·Aᵀ + I: symmetric positive definite (common practice)
        double[][] a = new double[p][p];
        for (double[] row : a) {
          for (int j = 0; j < p; j++) {
            row[j] = r.nextGaussian();
          }
        }
        double[][] spd = new double[p][p];
        for (int i = 0; i < p; i++) {
          for (int j = 0; j < p; j++) {
            double s = i == j ? 1.0 : 0.0;
            for (int k = 0; k < p; k++) {
              s += a[i][k] * a[j][k];
            }
            spd[i][j] = s;
          }
        }
        double[][] m = nanFilled(p + 1);
        for (int i = 0; i < p; i++) {
          System.arraycopy(spd[i], 0, m[i], 0, p);
        }
        double[][] l = nanFilled(p + 1);
        double[][] li = nanFilled(p + 1);
        double[][] out = nanFilled(p + 1);
        assertTrue(SmallCholesky.invertInto(m, p, l, li, out), "p=" + p + " positive definite");
        RealMatrix ref = new LUDecomposition(new Array2DRowRealMatrix(spd)).getSolver().getInverse(); // Commons Math
        for (int i = 0; i < p; i++) {
          for (int j = 0; j < p; j++) {
            double want = ref.getEntry(i, j);
            assertEquals(want, out[i][j], 1e-10 * Math.max(1.0, Math.abs(want)), "p=" + p + " trial " + trial + " (" + i + "," + j + ")");
          }
        }
        // exactly sized arrays work too: nothing outside the corner is touched
        double[][] outExact = new double[p][p];
        assertTrue(SmallCholesky.invertInto(spd, p, new double[p][p], new double[p][p], outExact));
        for (int i = 0; i < p; i++) {
          for (int j = 0; j < p; j++) {
            assertEquals(out[i][j], outExact[i][j], 0.0, "p=" + p + " same bits in exact arrays");
          }
        }
      }
    }
  }

  @Test void notPositiveDefinite_isRefused() {
    double[][] m = {{1, 2}, {2, 1}}; // eigenvalues 3 and -1
    assertFalse(SmallCholesky.invertInto(m, 2, new double[2][2], new double[2][2], new double[2][2]));
  }
}
