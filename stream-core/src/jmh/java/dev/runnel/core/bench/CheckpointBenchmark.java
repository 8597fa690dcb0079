package dev.runnel.core.bench;

import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.PipelineStep;
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
 * Benchmark 6 (part): writing and restoring the whole pipeline checkpoint of a warm synthetic
 * pipeline of width {@code p}. The size in bytes is printed by {@link CoreBenchmarks}.
 *
 * <pre>{@code
 * java -jar stream-core/target/benchmarks.jar CheckpointBenchmark
 * }</pre>
 */
@State(Scope.Thread)
@BenchmarkMode(Mode.AverageTime)
@OutputTimeUnit(TimeUnit.MICROSECONDS)
@Warmup(iterations = 3, time = 1)
@Measurement(iterations = 5, time = 1)
@Fork(1)
public class CheckpointBenchmark {

  @Param({"128"})
  public int p;

  private PipelineStep step;
  private PipelineConfig config;
  private byte[] bytes;

  static PipelineStep warm(int p) {
    PipelineStep s = new PipelineStep(BenchData.syntheticConfig(p));
    byte[][] recs = BenchData.syntheticRecords(p, 1 << 13, BenchData.levelCount(p), 42);
    PipelineStepBenchmark.CountingSink sink = new PipelineStepBenchmark.CountingSink();
    for (int k = 0; k < recs.length; k++) {
      s.process(recs[k], 0, recs[k].length, 60_000L * k, 0, k, sink);
    }
    return s;
  }

  @Setup(Level.Trial)
  public void setup() {
    step = warm(p);
    config = BenchData.syntheticConfig(p);
    bytes = step.checkpoint();
  }

  @Benchmark
  public int checkpoint() {
    return step.checkpoint().length;
  }

  /** A restore needs a fresh step (as the runner creates one per partition): construction included. */
  @Benchmark
  public int restore() {
    PipelineStep target = new PipelineStep(config);
    target.restore(bytes);
    return target.model().dimension();
  }
}
