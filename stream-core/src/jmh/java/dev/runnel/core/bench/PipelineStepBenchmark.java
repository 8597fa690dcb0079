package dev.runnel.core.bench;

import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.util.List;
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
 * Benchmark 1: {@link PipelineStep#process} over pre-encoded JSON bytes (decode, featurize,
 * predict with interval, update), one thread, with a sink that only reads the prediction.
 * {@code demo} is the demo configuration over the recorded invented sample feed (5,235 lines,
 * cycled; at each wrap the event time steps back 6 days, which the step treats as out of order);
 * {@code demo_forecast} is the demo with {@code input.forecast} (entity: the hub) and
 * {@code demo_lag}, {@code demo_smoothed}, {@code demo_seasonal} that with history features added
 * (two lags, P1D and P7D; a smoothed mean; a smoothed mean by hour of week; see
 * {@link BenchData#demoForecastConfigWith});
 * {@code pN} is a synthetic configuration of width N (see {@link BenchData}); the other {@code demo_*}
 * are the demo with one new feature kind or target option added ({@link BenchData#demoConfigWith}).
 *
 * <pre>{@code
 * java -jar stream-core/target/benchmarks.jar PipelineStepBenchmark -prof gc
 * }</pre>
 */
@State(Scope.Thread)
@BenchmarkMode(Mode.Throughput)
@OutputTimeUnit(TimeUnit.SECONDS)
@Warmup(iterations = 4, time = 1)
@Measurement(iterations = 5, time = 1)
@Fork(value = 1, jvmArgsAppend = {"-Xmx1g"})
public class PipelineStepBenchmark {

  @Param({"demo", "demo_forecast", "demo_lag", "demo_smoothed", "demo_seasonal", "p8", "p32", "p128", "p256", "demo_hinge", "demo_spline", "demo_holidays", "demo_log1p"})
  public String config;

  private PipelineStep step;
  private byte[][] records;
  private int mask;
  private int i;
  private long time;
  private final CountingSink sink = new CountingSink();

  /** Reads what a real sink would read; counts so the work cannot be dropped. */
  static final class CountingSink implements PipelineStep.Sink {
    double acc;
    long rejects;
    long snapshots;

    @Override public void prediction(Prediction prediction, EventRecord record) {
      acc += prediction.predicted() + prediction.low();
    }

    @Override public void reject(RejectReason reason, String detail) {
      rejects++;
    }

    @Override public void snapshotDue() {
      snapshots++;
    }
  }

  @Setup(Level.Trial)
  public void setup() {
    PipelineConfig c;
    if (config.startsWith("demo")) {
      c = switch (config) {
        case "demo" -> BenchData.demoConfig();
        case "demo_forecast" -> BenchData.demoForecastConfigWith();
        case "demo_lag" -> BenchData.demoForecastConfigWith("{kind: lag, offset: P1D}", "{kind: lag, offset: P7D, tolerance: PT1H}");
        case "demo_smoothed" -> BenchData.demoForecastConfigWith("{kind: smoothed, half_life: PT12H}");
        case "demo_seasonal" -> BenchData.demoForecastConfigWith("{kind: smoothed, half_life: P14D, season: hour_of_week}");
        default -> BenchData.demoConfigWith(config);
      };
      List<byte[]> lines = BenchData.demoRecords();
      records = lines.toArray(new byte[0][]);
      mask = -1;
    } else {
      int p = Integer.parseInt(config.substring(1));
      c = BenchData.syntheticConfig(p);
      records = BenchData.syntheticRecords(p, 1 << 14, BenchData.levelCount(p), 42);
      mask = records.length - 1;
    }
    step = new PipelineStep(c);
    // warm the state: every level admitted, scalers settled
    for (int k = 0; k < 3 * records.length; k++) {
      next();
    }
  }

  private void next() {
    int k;
    if (mask < 0) {
      k = i++;
      if (i == records.length) {
        i = 0;
      }
    } else {
      k = i++ & mask;
    }
    byte[] b = records[k];
    time += 60_000L;
    step.process(b, 0, b.length, time, 0, k, sink);
  }

  /** Dimension after warm-up (reported by {@link CoreBenchmarks}). */
  int dimension() {
    return step.model().dimension();
  }

  @Benchmark
  public double process() {
    next();
    return sink.acc;
  }
}
