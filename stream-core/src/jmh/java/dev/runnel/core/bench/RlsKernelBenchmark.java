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
import org.openjdk.jmh.infra.BenchmarkParams;

/**
 * Benchmark 2: the RLS update kernel alone on dense rows (x0 = 1, the rest standard normal),
 * {@code lambda} = 0.999, prior variance 100.
 * <ul>
 *   <li>{@code update}: windup guard off: forget, Givens rotation of the row into the factor.
 *       Nominal work {@code 3 p^2} flops (6 per rotated element of the triangle), the figure used
 *       for GFLOP/s. The weights are not solved per update (see {@link RlsModel}).</li>
 *   <li>{@code updateAndWeights}: the same, then the weights ({@link RlsModel#weights}: one
 *       back-substitution, {@code p^2} more flops): what the EJML references produce.</li>
 *   <li>{@code updateGuarded}: {@code update} with the windup guard (one prior-row refresh per
 *       update, about {@code p^2} more flops on average).</li>
 *   <li>{@code separateSolvesAndUpdate}: the a-priori prediction and leverage by separate solves
 *       ({@link RlsModel#predict}: a back-substitution; {@link RlsModel#intervalHalfWidth}: a forward
 *       substitution), then the guarded update.</li>
 *   <li>{@code updateWithAPriori}: what the pipeline asks of the model per trained record: the
 *       same outputs from the guarded update's own rotations
 *       ({@link RlsModel#update(double[], double, double, double[])}), no solve.</li>
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

  /**
   * Warms only the model the running benchmark uses: training both here would make the JIT
   * compile {@code update} for a mix of the guarded and unguarded paths in every fork, which is
   * not what a process that runs one kind sees (p = 64, 3 forks: 0.35 of axpy before, 0.40 after,
   * in two runs minutes apart; docs/performance.md).
   */
  @Setup(Level.Trial)
  public void setup(BenchmarkParams params) {
    ys = new double[N];
    rows = BenchData.denseRows(p, N, 7, ys);
    ModelSettings s = ModelSettings.defaults().withPriorVariance(100);
    String method = params.getBenchmark().substring(params.getBenchmark().lastIndexOf('.') + 1);
    boolean usesPlain = method.equals("update") || method.equals("updateAndWeights");
    plain = new RlsModel(p, s.withWindupGuard(false));
    guarded = new RlsModel(p, s.withWindupGuard(true));
    RlsModel used = usesPlain ? plain : guarded;
    for (int k = 0; k < 2 * N; k++) {
      used.update(rows[k & (N - 1)], ys[k & (N - 1)], LAMBDA);
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

  private final double[] weights = new double[256];

  @Benchmark
  public double updateAndWeights() {
    int k = i++ & (N - 1);
    plain.update(rows[k], ys[k], LAMBDA);
    plain.weights(weights);
    return weights[0];
  }

  @Benchmark
  public double separateSolvesAndUpdate() {
    int k = i++ & (N - 1);
    double[] x = rows[k];
    double yhat = guarded.predict(x);
    double half = guarded.intervalHalfWidth(x);
    guarded.update(x, ys[k], LAMBDA);
    return yhat + half;
  }

  private final double[] aPriori = new double[2];

  @Benchmark
  public double updateWithAPriori() {
    int k = i++ & (N - 1);
    double[] x = rows[k];
    double z = guarded.settings().intervalZ() * guarded.noiseSd();
    guarded.update(x, ys[k], LAMBDA, aPriori);
    return aPriori[1] + z * Math.sqrt(1.0 + aPriori[0]);
  }
}
