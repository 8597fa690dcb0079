package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Random;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.factory.DecompositionFactory_DDRM;
import org.ejml.dense.row.factory.LinearSolverFactory_DDRM;
import org.ejml.interfaces.decomposition.CholeskyDecomposition_F64;
import org.ejml.interfaces.linsol.LinearSolverDense;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;

/**
 * Long runs with lambda = 0.995 on nearly collinear columns: the information stays symmetric
 * positive definite (EJML Cholesky as reference) and the weights match a from-scratch EJML QR
 * solve of the same weighted problem (the last rows whose weight is above 1e-17, data rows and
 * the guard's prior rows).
 */
class LongStabilityTest {

  private static final double LAMBDA = 0.995;
  /** 0.995^8000 = 3.8e-18: older rows cannot move a 1e-6 comparison. */
  private static final int WINDOW = 8000;
  private static final int P = 5;

  @Test
  void millionUpdatesStaySpdAndMatchReference() {
    run(1_000_000);
  }

  @Tag("long")
  @Test
  void tenMillionUpdatesStaySpdAndMatchReference() {
    run(10_000_000);
  }

  /** Ring buffer of the most recent rows with the update count at which each was added. */
  static final class Ring {
    final double[][] rows = new double[WINDOW][P];
    final double[] y = new double[WINDOW];
    final long[] at = new long[WINDOW];
    long count;

    void add(double[] x, double target, long t) {
      int i = (int) (count++ % WINDOW);
      System.arraycopy(x, 0, rows[i], 0, P);
      y[i] = target;
      at[i] = t;
    }

    int size() {
      return (int) Math.min(count, WINDOW);
    }
  }

  private static void run(long updates) {
    Random rnd = new Random(995);
    // prior variance 1e8: the ridge barely touches the near-collinear directions (collinearity 1e-4),
    // so the information has a condition number about 1e8 (R about 1e4)
    RlsModel m = new RlsModel(P, ModelSettings.defaults().withPriorVariance(1e8));
    Ring data = new Ring();
    Ring prior = new Ring();
    long[] now = new long[1];
    m.observePriorRows((column, information) -> {
      double[] e = new double[P];
      e[column] = Math.sqrt(information);
      prior.add(e, 0.0, now[0]);
    });
    double[] x = new double[P];
    for (long t = 1; t <= updates; t++) {
      now[0] = t;
      x[0] = 1.0;
      x[1] = rnd.nextGaussian();
      x[2] = x[1] + 1e-4 * rnd.nextGaussian();
      x[3] = rnd.nextGaussian();
      x[4] = 0.5 * x[1] + 0.5 * x[3] + 1e-4 * rnd.nextGaussian();
      double y = 1 + x[1] + 2 * x[2] - x[3] + 0.5 * x[4] + 0.1 * rnd.nextGaussian();
      data.add(x, y, t);
      assertTrue(m.update(x, y, LAMBDA), "update " + t);
      if (t % 250_000 == 0) {
        check(m, data, prior, t, rnd);
      }
    }
  }

  private static void check(RlsModel m, Ring data, Ring prior, long t, Random rnd) {
    CholeskyDecomposition_F64<DMatrixRMaj> chol = DecompositionFactory_DDRM.chol(P, true);
    assertTrue(chol.decompose(new DMatrixRMaj(P, P, true, m.informationMatrix())), "R^T R is SPD at " + t);
    DMatrixRMaj cov = new DMatrixRMaj(P, P, true, m.unscaledCovariance());
    assertTrue(chol.decompose(cov), "covariance is SPD at " + t);

    int n = data.size() + prior.size();
    DMatrixRMaj a = new DMatrixRMaj(n, P);
    DMatrixRMaj b = new DMatrixRMaj(n, 1);
    int i = 0;
    for (Ring ring : new Ring[] {data, prior}) {
      for (int k = 0; k < ring.size(); k++) {
        double sw = Math.pow(LAMBDA, 0.5 * (t - ring.at[k]));
        for (int j = 0; j < P; j++) {
          a.set(i, j, sw * ring.rows[k][j]);
        }
        b.set(i, 0, sw * ring.y[k]);
        i++;
      }
    }
    LinearSolverDense<DMatrixRMaj> solver = LinearSolverFactory_DDRM.leastSquares(n, P);
    assertTrue(solver.setA(a));
    DMatrixRMaj ref = new DMatrixRMaj(P, 1);
    solver.solve(b, ref);
    double[] w = new double[P];
    m.weights(w);
    double norm = 0;
    double diff = 0;
    for (int j = 0; j < P; j++) {
      norm = Math.max(norm, Math.abs(ref.get(j, 0)));
      diff = Math.max(diff, Math.abs(w[j] - ref.get(j, 0)));
    }
    // forward error of any backward-stable solve ~ eps * kappa(R) * (1 + kappa(R) * |r| / (|A| |theta|))
    // ~ 1e-16 * 1e4 * (1 + 1e4 * 0.05) ~ 5e-10 for each of the two solvers; 1e-6 leaves a wide margin
    assertTrue(diff <= 1e-6 * norm, "weights at " + t + ": max diff " + diff + " of " + norm);
    double[] probe = new double[P];
    for (int k = 0; k < 100; k++) {
      probe[0] = 1.0;
      probe[1] = rnd.nextGaussian();
      probe[2] = probe[1] + 1e-4 * rnd.nextGaussian();
      probe[3] = rnd.nextGaussian();
      probe[4] = 0.5 * probe[1] + 0.5 * probe[3] + 1e-4 * rnd.nextGaussian();
      double refPred = 0;
      for (int j = 0; j < P; j++) {
        refPred += probe[j] * ref.get(j, 0);
      }
      // predictions along the data are well conditioned: 1e-9 relative to their size plus the noise sd
      assertTrue(Math.abs(m.predict(probe) - refPred) <= 1e-9 * (Math.abs(refPred) + 0.1),
          "prediction at " + t + ": " + m.predict(probe) + " vs " + refPred);
    }
  }
}
