package dev.runnel.core.bench;

import java.util.concurrent.TimeUnit;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.CommonOps_DDRM;
import org.ejml.dense.row.decomposition.TriangularSolver_DDRM;
import org.ejml.dense.row.factory.DecompositionFactory_DDRM;
import org.ejml.interfaces.decomposition.QRDecomposition;
import org.openjdk.jmh.annotations.Benchmark;
import org.openjdk.jmh.annotations.BenchmarkMode;
import org.openjdk.jmh.annotations.Fork;
import org.openjdk.jmh.annotations.Level;
import org.openjdk.jmh.annotations.Measurement;
import org.openjdk.jmh.annotations.Mode;
import org.openjdk.jmh.annotations.OutputTimeUnit;
import org.openjdk.jmh.annotations.Param;
import org.openjdk.jmh.annotations.Scope;
import org.openjdk.jmh.annotations.Setup;
import org.openjdk.jmh.annotations.State;
import org.openjdk.jmh.annotations.Warmup;

/**
 * Benchmark 2, reference: the same RLS update written with EJML's general dense operations
 * (ejml-ddense), on the rows of {@link RlsKernelBenchmark}.
 * <ul>
 *   <li>{@code informationQr}: the same square-root information update, as a general dense QR of
 *       the stacked {@code (p+1) x (p+1)} matrix {@code [sqrt(lambda) [R | z]; [x^T | y]]}
 *       (Householder, which does not know that {@code R} is already triangular), then
 *       {@code TriangularSolver_DDRM.solveU} for the weights: {@code O(p^3)}.</li>
 *   <li>{@code covarianceForm}: the textbook covariance-form update with {@code CommonOps_DDRM}
 *       ({@code P x}, gain, {@code P <- (P - k (P x)^T) / lambda}): {@code O(p^2)}, the
 *       numerically weaker form the model does not use.</li>
 * </ul>
 *
 * <pre>{@code
 * java -jar stream-core/target/benchmarks.jar EjmlReferenceBenchmark
 * }</pre>
 */
@State(Scope.Thread)
@BenchmarkMode(Mode.Throughput)
@OutputTimeUnit(TimeUnit.SECONDS)
@Warmup(iterations = 3, time = 1)
@Measurement(iterations = 5, time = 1)
@Fork(1)
public class EjmlReferenceBenchmark {

  @Param({"8", "32", "64", "128", "256"})
  public int p;

  private static final int N = 1024;
  private static final double LAMBDA = 0.999;
  private double[][] rows;
  private double[] ys;
  private int i;

  private DMatrixRMaj stacked;
  private DMatrixRMaj rz;
  private DMatrixRMaj rOnly;
  private DMatrixRMaj theta;
  private QRDecomposition<DMatrixRMaj> qr;

  private DMatrixRMaj cov;
  private DMatrixRMaj x;
  private DMatrixRMaj px;
  private DMatrixRMaj thetaCov;

  @Setup(Level.Trial)
  public void setup() {
    ys = new double[N];
    rows = BenchData.denseRows(p, N, 7, ys);
    int q = p + 1;
    stacked = new DMatrixRMaj(q, q);
    rz = new DMatrixRMaj(q, q);
    rOnly = new DMatrixRMaj(p, p);
    theta = new DMatrixRMaj(p, 1);
    qr = DecompositionFactory_DDRM.qr(q, q);
    for (int j = 0; j < p; j++) {
      rz.set(j, j, Math.sqrt(1.0 / 100)); // prior variance 100
    }
    cov = CommonOps_DDRM.identity(p);
    CommonOps_DDRM.scale(100, cov);
    x = new DMatrixRMaj(p, 1);
    px = new DMatrixRMaj(p, 1);
    thetaCov = new DMatrixRMaj(p, 1);
    for (int k = 0; k < 2 * N; k++) {
      informationQr();
      covarianceForm();
    }
  }

  @Benchmark
  public double informationQr() {
    int k = i++ & (N - 1);
    double[] row = rows[k];
    int q = p + 1;
    double sl = Math.sqrt(LAMBDA);
    // top p rows: sqrt(lambda) [R | z]; last row: [x | y]
    for (int a = 0; a < p; a++) {
      for (int b = 0; b < q; b++) {
        stacked.unsafe_set(a, b, sl * rz.unsafe_get(a, b));
      }
    }
    for (int b = 0; b < p; b++) {
      stacked.unsafe_set(p, b, row[b]);
    }
    stacked.unsafe_set(p, p, ys[k]);
    qr.decompose(stacked);
    qr.getR(rz, false);
    // weights: R theta = z
    CommonOps_DDRM.extract(rz, 0, p, 0, p, rOnly, 0, 0);
    for (int a = 0; a < p; a++) {
      theta.data[a] = rz.unsafe_get(a, p);
    }
    TriangularSolver_DDRM.solveU(rOnly.data, theta.data, p);
    return theta.data[0];
  }

  @Benchmark
  public double covarianceForm() {
    int k = i++ & (N - 1);
    System.arraycopy(rows[k], 0, x.data, 0, p);
    CommonOps_DDRM.mult(cov, x, px);
    double denom = LAMBDA + CommonOps_DDRM.dot(x, px);
    double e = ys[k] - CommonOps_DDRM.dot(x, thetaCov);
    CommonOps_DDRM.addEquals(thetaCov, e / denom, px);
    CommonOps_DDRM.multAddTransB(-1.0 / denom, px, px, cov);
    CommonOps_DDRM.scale(1.0 / LAMBDA, cov);
    return thetaCov.data[0];
  }
}
