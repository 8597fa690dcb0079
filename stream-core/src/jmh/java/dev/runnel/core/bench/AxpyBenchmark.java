package dev.runnel.core.bench;

import java.util.concurrent.TimeUnit;
import org.openjdk.jmh.annotations.Benchmark;
import org.openjdk.jmh.annotations.BenchmarkMode;
import org.openjdk.jmh.annotations.Fork;
import org.openjdk.jmh.annotations.Measurement;
import org.openjdk.jmh.annotations.Mode;
import org.openjdk.jmh.annotations.OutputTimeUnit;
import org.openjdk.jmh.annotations.Param;
import org.openjdk.jmh.annotations.Scope;
import org.openjdk.jmh.annotations.Setup;
import org.openjdk.jmh.annotations.State;
import org.openjdk.jmh.annotations.Warmup;

/**
 * The machine's practical floating-point limit for this kind of loop: {@code y += a x} over two
 * L1-resident arrays ({@code 2 n} flops per call), a plain loop the JIT vectorizes. Run in the same
 * JMH invocation as {@link RlsKernelBenchmark} so the two see the same machine load.
 *
 * <pre>{@code
 * java -jar stream-core/target/benchmarks.jar AxpyBenchmark
 * }</pre>
 */
@State(Scope.Thread)
@BenchmarkMode(Mode.Throughput)
@OutputTimeUnit(TimeUnit.SECONDS)
@Warmup(iterations = 3, time = 1)
@Measurement(iterations = 5, time = 1)
@Fork(1)
public class AxpyBenchmark {

  @Param({"1024"})
  public int n;

  private double[] x;
  private double[] y;
  private double a = 1e-9;

  @Setup
  public void setup() {
    x = new double[n];
    y = new double[n];
    for (int i = 0; i < n; i++) {
      x[i] = i * 0.5;
      y[i] = 1.0 - i;
    }
  }

  @Benchmark
  public double axpy() {
    final double[] xs = x;
    final double[] ys = y;
    final double s = a;
    for (int i = 0; i < ys.length; i++) {
      ys[i] += s * xs[i];
    }
    a = -s; // keeps y bounded
    return ys[0];
  }
}
