package dev.runnel.core.bench;

import dev.runnel.core.model.ModelSettings;
import dev.runnel.core.model.RlsModel;
import java.util.concurrent.TimeUnit;
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
 * Benchmark 2: the RLS update kernel alone on dense rows (x0 = 1, the rest standard normal),
 * {@code lambda} = 0.999, prior variance 100.
 * <ul>
 *   <li>{@code update}: windup guard off: forget, Givens rotation of the row into the factor,
 *       back-substitution for the weights. Nominal work {@code 4 p^2} flops (6 per rotated
 *       element of the triangle, 2 per back-substitution element), the figure used for GFLOP/s.</li>
 *   <li>{@code updateGuarded}: the same with the windup guard (one prior-row refresh per update,
 *       about {@code p^2} more flops on average).</li>
 *   <li>{@code leverageAndUpdate}: what the pipeline asks of the model per trained record: the
 *       prediction, the leverage for the interval (one triangular solve) and the guarded update.</li>
 *   <li>{@code updateWithLeverage}: the same outputs with the leverage taken from the update's own
 *       rotation angles ({@link RlsModel#update(double[], double, double, double[])}), no solve.</li>
 * </ul>
 *
 * <pre>{@code
 * java -jar stream-core/target/benchmarks.jar RlsKernelBenchmark AxpyBenchmark
 * }</pre>
 */
@State(Scope.Thread)
@BenchmarkMode(Mode.Throughput)
@OutputTimeUnit(TimeUnit.SECONDS)
@Warmup(iterations = 3, time = 1)
@Measurement(iterations = 5, time = 1)
@Fork(1)
public class RlsKernelBenchmark {

  @Param({"8", "16", "32", "64", "128", "256"})
  public int p;

  private static final int N = 1024;
  private static final double LAMBDA = 0.999;
  private double[][] rows;
  private double[] ys;
  private RlsModel plain;
  private RlsModel guarded;
  private int i;

  @Setup(Level.Trial)
  public void setup() {
    ys = new double[N];
    rows = BenchData.denseRows(p, N, 7, ys);
    ModelSettings s = ModelSettings.defaults().withPriorVariance(100);
    plain = new RlsModel(p, s.withWindupGuard(false));
    guarded = new RlsModel(p, s.withWindupGuard(true));
    for (int k = 0; k < 2 * N; k++) {
      plain.update(rows[k & (N - 1)], ys[k & (N - 1)], LAMBDA);
      guarded.update(rows[k & (N - 1)], ys[k & (N - 1)], LAMBDA);
    }
  }

  @Benchmark
  public boolean update() {
    int k = i++ & (N - 1);
    return plain.update(rows[k], ys[k], LAMBDA);
  }

  @Benchmark
  public boolean updateGuarded() {
    int k = i++ & (N - 1);
    return guarded.update(rows[k], ys[k], LAMBDA);
  }

  @Benchmark
  public double leverageAndUpdate() {
    int k = i++ & (N - 1);
    double[] x = rows[k];
    double yhat = guarded.predict(x);
    double half = guarded.intervalHalfWidth(x);
    guarded.update(x, ys[k], LAMBDA);
    return yhat + half;
  }

  private final double[] lev = new double[1];

  @Benchmark
  public double updateWithLeverage() {
    int k = i++ & (N - 1);
    double[] x = rows[k];
    double yhat = guarded.predict(x);
    guarded.update(x, ys[k], LAMBDA, lev);
    return yhat + guarded.settings().intervalZ() * guarded.noiseSd() * Math.sqrt(1.0 + lev[0]);
  }
}
