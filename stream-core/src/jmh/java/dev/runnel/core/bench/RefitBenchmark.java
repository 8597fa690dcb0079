package dev.runnel.core.bench;

import java.util.concurrent.TimeUnit;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.factory.LinearSolverFactory_DDRM;
import org.ejml.interfaces.linsol.LinearSolverDense;
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
 * Benchmark 3: refitting from scratch instead of updating: EJML's least-squares QR solver
 * (Householder) on all {@code n} = 10^4 weighted rows seen so far, the rows pre-scaled by
 * {@code sqrt(lambda^(n-t))}, per new record. Compare with {@link RlsKernelBenchmark#update}.
 *
 * <pre>{@code
 * java -jar stream-core/target/benchmarks.jar RefitBenchmark
 * }</pre>
 */
@State(Scope.Thread)
@BenchmarkMode(Mode.AverageTime)
@OutputTimeUnit(TimeUnit.MICROSECONDS)
@Warmup(iterations = 2, time = 2)
@Measurement(iterations = 3, time = 2)
@Fork(1)
public class RefitBenchmark {

  @Param({"8", "32", "128"})
  public int p;

  @Param({"10000"})
  public int n;

  private DMatrixRMaj a;
  private DMatrixRMaj b;
  private DMatrixRMaj work;
  private DMatrixRMaj theta;
  private LinearSolverDense<DMatrixRMaj> solver;

  @Setup(Level.Trial)
  public void setup() {
    double[] ys = new double[n];
    double[][] rows = BenchData.denseRows(p, n, 7, ys);
    a = new DMatrixRMaj(n, p);
    b = new DMatrixRMaj(n, 1);
    for (int t = 0; t < n; t++) {
      double w = Math.sqrt(Math.pow(0.999, n - 1 - t));
      for (int j = 0; j < p; j++) {
        a.unsafe_set(t, j, w * rows[t][j]);
      }
      b.data[t] = w * ys[t];
    }
    work = new DMatrixRMaj(n, p);
    theta = new DMatrixRMaj(p, 1);
    solver = LinearSolverFactory_DDRM.leastSquares(n, p);
  }

  @Benchmark
  public double refit() {
    work.setTo(a);
    if (!solver.setA(work)) {
      return Double.NaN;
    }
    solver.solve(b, theta);
    return theta.data[0];
  }
}
