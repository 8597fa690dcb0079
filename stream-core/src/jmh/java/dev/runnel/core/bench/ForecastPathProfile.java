package dev.runnel.core.bench;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.OutputJson;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.pipeline.SettledForecast;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.lang.management.ManagementFactory;
import java.lang.management.ThreadMXBean;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Locale;

/**
 * Configurations of the whole pipeline step run side by side over a long feed, with a plain sink,
 * to be profiled (docs/performance.md, "Forecast path", "Where the time of the forecast path
 * goes"): each in a thread named after it, one at a time in turns of 0.2 s of thread CPU time (so
 * the load of a shared machine falls on both alike); start it under JFR and split
 * {@code jdk.ExecutionSample} by thread. Each step is made anew when the feed wraps, as
 * {@code PipelineBuildsAB --fresh-each-lap} does. Prints records per second of thread CPU time and
 * the callbacks per record, per configuration.
 *
 * <pre>{@code
 * java -XX:+UnlockDiagnosticVMOptions -XX:+DebugNonSafepoints \
 *     -XX:StartFlightRecording=filename=with.jfr,settings=profile \
 *     -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.ForecastPathProfile \
 *     --variants demo_no_forecast,demo_forecast --records year.jsonl --seconds 40
 * }</pre>
 * Options: {@code --variants A,B} (default {@code demo_no_forecast,demo_forecast};
 * {@link BenchData#demoYamlWith}, and {@link #yaml} for {@code /reject} and {@code /no_memory}), {@code --records FILE}, {@code --seconds N} (of thread CPU time each,
 * after a warm-up of a fifth of it), {@code --encode} (the sink writes every prediction and settled
 * forecast as the output JSON, as {@code run} does, {@link OutputJson}).
 */
public final class ForecastPathProfile {
  private ForecastPathProfile() { }

  /** Counts the callbacks; with {@code json} set, encodes predictions and settled forecasts as {@code run} does. */
  static final class Sink implements PipelineStep.Sink {
    final OutputJson json;
    long predictions;
    long settled;
    long rejects;
    long bytes;
    double acc;

    Sink(OutputJson json) {
      this.json = json;
    }

    @Override public void prediction(Prediction p, EventRecord record) {
      predictions++;
      acc += p.predicted();
      if (json != null) {
        bytes += json.prediction(p, record).length;
      }
    }

    @Override public void settled(SettledForecast s, EventRecord record) {
      settled++;
      acc += s.forecast();
      if (json != null) {
        bytes += json.settled(s, record).length;
      }
    }

    @Override public void reject(RejectReason reason, String detail) {
      rejects++;
    }

    @Override public void snapshotDue() { }
  }

  public static void main(String[] args) throws Exception {
    String[] variants = {"demo_no_forecast", "demo_forecast"};
    Path records = null;
    double seconds = 30;
    boolean encode = false;
    for (int i = 0; i < args.length; i++) {
      switch (args[i]) {
        case "--variants" -> variants = args[++i].split(",");
        case "--records" -> records = Path.of(args[++i]);
        case "--seconds" -> seconds = Double.parseDouble(args[++i]);
        case "--encode" -> encode = true;
        default -> throw new IllegalArgumentException("unknown option " + args[i]
            + "; allowed: --variants A,B, --records FILE, --seconds N, --encode");
      }
    }
    if (records == null) {
      throw new IllegalArgumentException("--records FILE is required (e.g. a year from dev.runnel.demo.DemoDataMain)");
    }
    byte[][] recs = Files.readAllLines(records).stream().filter(l -> !l.isBlank())
        .map(l -> l.getBytes(java.nio.charset.StandardCharsets.UTF_8)).toArray(byte[][]::new);
    int m = variants.length;
    Worker[] w = new Worker[m];
    for (int v = 0; v < m; v++) {
      PipelineConfig cfg = ConfigLoader.parse(yaml(variants[v]), variants[v]);
      w[v] = new Worker(variants[v], cfg, recs, new Sink(encode ? OutputJson.of(cfg) : null));
    }
    // each variant runs in a thread of its own (JFR names the thread in every sample), one at a
    // time, in turns of about 0.2 s of thread CPU time, so the machine's load falls on both alike
    long turnNanos = 200_000_000L;
    int warmTurns = Math.max(2, (int) (seconds * 0.2e9 / turnNanos));
    int turns = Math.max(2, (int) (seconds * 1e9 / turnNanos));
    for (int t = 0; t < warmTurns + turns; t++) {
      for (int v = 0; v < m; v++) {
        Worker x = w[(v + t) % m];
        if (t == warmTurns) {
          x.reset();
        }
        x.turn(turnNanos);
      }
    }
    for (Worker x : w) {
      x.report(encode);
      x.stop();
    }
  }

  /**
   * The YAML of a variant: a name {@link BenchData#demoYamlWith} knows, then optionally
   * {@code /reject} ({@code corrections: reject}: no rows or settled forecasts kept for corrections)
   * or {@code /no_memory} (that and {@code max_learned_actuals: 0}: no memory of learned actuals
   * either, only the pending forecasts, the settling and the errors by horizon).
   */
  static String yaml(String variant) {
    int slash = variant.indexOf('/');
    String y = BenchData.demoYamlWith(slash < 0 ? variant : variant.substring(0, slash));
    if (slash < 0) {
      return y;
    }
    String policy = "    corrections: replace";
    if (!y.contains(policy)) {
      throw new IllegalStateException("the demo configuration no longer says corrections: replace");
    }
    return switch (variant.substring(slash + 1)) {
      case "reject" -> y.replace(policy, "    corrections: reject");
      case "no_memory" -> y.replace(policy, "    corrections: reject\n    max_learned_actuals: 0");
      default -> throw new IllegalArgumentException("no variant " + variant + "; after / one of reject, no_memory");
    };
  }

  /** One variant's step in a thread of its own, run a turn at a time. */
  private static final class Worker {
    final String name;
    final PipelineConfig cfg;
    final byte[][] recs;
    final Sink sink;
    final java.util.concurrent.SynchronousQueue<Long> go = new java.util.concurrent.SynchronousQueue<>();
    final java.util.concurrent.SynchronousQueue<Boolean> done = new java.util.concurrent.SynchronousQueue<>();
    final Thread thread;
    PipelineStep step;
    int i;
    long n;
    long cpu;
    long settledAtReset;
    long predictionsAtReset;

    Worker(String name, PipelineConfig cfg, byte[][] recs, Sink sink) {
      this.name = name;
      this.cfg = cfg;
      this.recs = recs;
      this.sink = sink;
      this.step = new PipelineStep(cfg);
      thread = new Thread(this::loop, name);
      thread.setDaemon(true);
      thread.start();
    }

    void turn(long nanos) throws InterruptedException {
      go.put(nanos);
      done.take();
    }

    void stop() throws InterruptedException {
      go.put(-1L);
    }

    void reset() {
      n = 0;
      cpu = 0;
      settledAtReset = sink.settled;
      predictionsAtReset = sink.predictions;
    }

    void report(boolean encode) {
      double rate = n / (cpu / 1e9);
      System.out.printf(Locale.ROOT, "%s%s: %,.0f records/s of thread CPU (%.0f ns per record); per record %.3f predictions, %.3f settled; %d rejects%s%n",
          name, encode ? " (encoded)" : "", rate, 1e9 / rate, (sink.predictions - predictionsAtReset) / (double) n,
          (sink.settled - settledAtReset) / (double) n, sink.rejects, sink.acc == 0 ? " (no values)" : "");
    }

    private void loop() {
      ThreadMXBean mx = ManagementFactory.getThreadMXBean();
      try {
        while (true) {
          long nanos = go.take();
          if (nanos < 0) {
            return;
          }
          long start = mx.getCurrentThreadCpuTime();
          long now = start;
          while (now - start < nanos) {
            for (int k = 0; k < 1000; k++) {
              byte[] r = recs[i];
              step.process(r, 0, r.length, 0L, 0L, i, sink);
              if (++i == recs.length) {
                i = 0;
                step = new PipelineStep(cfg);
              }
            }
            n += 1000;
            now = mx.getCurrentThreadCpuTime();
          }
          cpu += now - start;
          done.put(Boolean.TRUE);
        }
      } catch (InterruptedException e) {
        Thread.currentThread().interrupt();
      }
    }
  }
}
