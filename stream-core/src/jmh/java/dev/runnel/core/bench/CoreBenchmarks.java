package dev.runnel.core.bench;

import java.io.IOException;
import java.lang.management.ManagementFactory;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.Collection;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import org.openjdk.jmh.profile.GCProfiler;
import org.openjdk.jmh.results.BenchmarkResult;
import org.openjdk.jmh.results.IterationResult;
import org.openjdk.jmh.results.Result;
import org.openjdk.jmh.results.RunResult;
import org.openjdk.jmh.runner.Runner;
import org.openjdk.jmh.runner.RunnerException;
import org.openjdk.jmh.runner.options.ChainedOptionsBuilder;
import org.openjdk.jmh.runner.options.OptionsBuilder;
import org.openjdk.jmh.runner.options.TimeValue;

/**
 * Runs benchmarks 1 to 4 and the checkpoint part of 6 in one JMH invocation (so every ratio is
 * between numbers measured in the same run, under the same machine load) and writes the result
 * tables as markdown with the targets beside them.
 *
 * <pre>{@code
 * mvn -o -q -Pbench -pl stream-core package -DskipTests
 * java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.CoreBenchmarks --out docs/bench/core-results.md
 * }</pre>
 * Options: {@code --quick} (fewer, shorter iterations), {@code --no-gc} (skip JMH's GC profiler),
 * {@code --include REGEX} (a subset; the tables then show what ran), {@code --forks N} (JVM forks
 * per benchmark instead of each one's own; medians are then over every fork's iterations).
 */
public final class CoreBenchmarks {
  private CoreBenchmarks() { }

  public static void main(String[] args) throws RunnerException, IOException {
    Path out = Path.of("docs/bench/core-results.md");
    boolean quick = false;
    boolean gc = true;
    int forks = 0; // 0: each benchmark's own @Fork
    String include = "RlsKernelBenchmark|AxpyBenchmark|EjmlReferenceBenchmark|PipelineStepBenchmark|RefitBenchmark|CheckpointBenchmark";
    for (int a = 0; a < args.length; a++) {
      switch (args[a]) {
        case "--out" -> out = Path.of(args[++a]);
        case "--quick" -> quick = true;
        case "--no-gc" -> gc = false;
        case "--include" -> include = args[++a];
        case "--forks" -> forks = Integer.parseInt(args[++a]);
        default -> throw new IllegalArgumentException("unknown option " + args[a]
            + "; allowed: --out FILE, --quick, --no-gc, --include REGEX, --forks N");
      }
    }
    ChainedOptionsBuilder o = new OptionsBuilder().include(include).shouldFailOnError(false);
    if (quick) {
      o.warmupIterations(2).warmupTime(TimeValue.seconds(1)).measurementIterations(3).measurementTime(TimeValue.seconds(1));
    }
    if (gc) {
      o.addProfiler(GCProfiler.class);
    }
    if (forks > 0) {
      o.forks(forks);
    }
    long t0 = System.nanoTime();
    Collection<RunResult> results = new Runner(o.build()).run();
    double minutes = (System.nanoTime() - t0) / 6e10;
    String md = render(results, quick, gc, minutes, forks);
    if (out.getParent() != null) {
      Files.createDirectories(out.getParent());
    }
    Files.writeString(out, md, StandardCharsets.UTF_8);
    System.out.println(md);
    System.out.println("written to " + out);
  }

  // ------------------------------------------------------------------ rendering

  /** Median of the measurement iterations' primary scores. */
  static double median(BenchmarkResult b) {
    double[] s = b.getIterationResults().stream().mapToDouble(i -> i.getPrimaryResult().getScore()).sorted().toArray();
    int n = s.length;
    return n == 0 ? Double.NaN : (n % 2 == 1 ? s[n / 2] : 0.5 * (s[n / 2 - 1] + s[n / 2]));
  }

  static double minIter(BenchmarkResult b) {
    return b.getIterationResults().stream().mapToDouble(i -> i.getPrimaryResult().getScore()).min().orElse(Double.NaN);
  }

  static double maxIter(BenchmarkResult b) {
    return b.getIterationResults().stream().mapToDouble(i -> i.getPrimaryResult().getScore()).max().orElse(Double.NaN);
  }

  static double allocPerOp(BenchmarkResult b) {
    Map<String, Result> sec = b.getSecondaryResults();
    Result r = sec.get("gc.alloc.rate.norm");
    return r == null ? Double.NaN : r.getScore();
  }

  private static final class Row {
    final String bench;
    final String method;
    final Map<String, String> params = new LinkedHashMap<>();
    final double median;
    final double min;
    final double max;
    final double alloc;
    final String unit;

    Row(RunResult r) {
      String label = r.getParams().getBenchmark();
      int dot = label.lastIndexOf('.');
      method = label.substring(dot + 1);
      String cls = label.substring(0, dot);
      bench = cls.substring(cls.lastIndexOf('.') + 1);
      for (String k : r.getParams().getParamsKeys()) {
        params.put(k, r.getParams().getParam(k));
      }
      BenchmarkResult b = r.getAggregatedResult();
      median = median(b);
      min = minIter(b);
      max = maxIter(b);
      alloc = allocPerOp(b);
      unit = b.getPrimaryResult().getScoreUnit();
    }
  }

  private static Row find(List<Row> rows, String bench, String method, String key, String value) {
    for (Row r : rows) {
      if (r.bench.equals(bench) && r.method.equals(method) && (key == null || value.equals(r.params.get(key)))) {
        return r;
      }
    }
    return null;
  }

  static String f(String fmt, double v) {
    return Double.isNaN(v) ? "–" : String.format(Locale.ROOT, fmt, v);
  }

  static String thousands(double v) {
    return Double.isNaN(v) ? "–" : String.format(Locale.ROOT, "%,.0f", v);
  }

  static String render(Collection<RunResult> results, boolean quick, boolean gc, double minutes, int forks) {
    List<Row> rows = new ArrayList<>();
    for (RunResult r : results) {
      rows.add(new Row(r));
    }
    StringBuilder s = new StringBuilder();
    s.append("<!-- written by dev.runnel.core.bench.CoreBenchmarks; do not edit by hand -->\n");
    s.append("Run ").append(Instant.now()).append(", ").append(quick ? "quick settings (2 warm-up + 3 measured 1 s iterations)" : "settings of each benchmark's annotations")
        .append(forks > 0 ? ", " + forks + " forks per benchmark (scores over all of them)" : "")
        .append(", ").append(f("%.1f", minutes)).append(" min, JVM ").append(System.getProperty("java.vm.version"))
        .append(", ").append(Runtime.getRuntime().availableProcessors()).append(" CPUs, load average at the end ")
        .append(f("%.2f", ManagementFactory.getOperatingSystemMXBean().getSystemLoadAverage()))
        .append(". Scores are medians of the measured iterations, [min, max] beside them.\n\n");

    Row axpy = find(rows, "AxpyBenchmark", "axpy", null, null);
    double axpyFlops = axpy == null ? Double.NaN : axpy.median * 2.0 * Integer.parseInt(axpy.params.get("n"));
    double axpyMin = axpy == null ? Double.NaN : axpy.min * 2.0 * Integer.parseInt(axpy.params.get("n"));
    double axpyMax = axpy == null ? Double.NaN : axpy.max * 2.0 * Integer.parseInt(axpy.params.get("n"));

    // 1. pipeline step
    List<Row> steps = rows.stream().filter(r -> r.bench.equals("PipelineStepBenchmark")).toList();
    if (!steps.isEmpty()) {
      s.append("### 1. Pipeline step over pre-encoded JSON (decode + featurize + predict with interval + update)\n\n");
      s.append("| configuration | p (after warm-up) | records/s (median) | [min, max] | target | met | allocated B/record |\n");
      s.append("|---|---|---|---|---|---|---|\n");
      for (Row r : steps) {
        String c = r.params.get("config");
        int p = dimensionOf(c);
        double target = c.equals("demo") ? 1_000_000 : (c.equals("p128") ? 100_000 : Double.NaN);
        s.append("| ").append(c.equals("demo") ? "demo (quillmarsh.yaml, sample feed)"
            : c.equals("demo_forecast") || c.equals("demo_lag") || c.equals("demo_smoothed") || c.equals("demo_seasonal")
            ? c + " (the demo with input.forecast and history features, PipelineStepBenchmark)"
            : c.startsWith("demo_") ? "demo + " + c.substring(5) : "synthetic " + c).append(" | ").append(p)
            .append(" | ").append(thousands(r.median)).append(" | [").append(thousands(r.min)).append(", ").append(thousands(r.max))
            .append("] | ").append(Double.isNaN(target) ? "–" : "≥ " + thousands(target))
            .append(" | ").append(Double.isNaN(target) ? "–" : (r.median >= target ? "yes" : "no"))
            .append(" | ").append(f("%.3f", r.alloc)).append(" |\n");
      }
      s.append('\n');
    }

    // 2. kernel
    List<Row> kernel = rows.stream().filter(r -> r.bench.equals("RlsKernelBenchmark") && r.method.equals("update")).toList();
    if (!kernel.isEmpty()) {
      s.append("### 2. RLS update kernel (Givens rotations, guard off) against axpy and EJML\n\n");
      s.append("axpy (y += a·x, n = ").append(axpy == null ? "–" : axpy.params.get("n")).append(", L1-resident) in the same run: ")
          .append(f("%.2f", axpyFlops / 1e9)).append(" GFLOP/s [").append(f("%.2f", axpyMin / 1e9)).append(", ")
          .append(f("%.2f", axpyMax / 1e9)).append("]. Nominal kernel work 3p² flops per update (the weights are not solved per update). "
          + "The EJML columns compare with `update` followed by `weights` (one back-substitution), which gives what the EJML code gives.\n\n");
      s.append("| p | update records/s | GFLOP/s | ÷ axpy | target ÷ axpy | guarded update records/s | prediction + leverage by separate solves + guarded update records/s | the same from the guarded update's rotations (pipeline path) records/s | update + weights records/s | EJML dense QR records/s | ours ÷ EJML QR | EJML covariance form records/s | ours ÷ EJML cov. | allocated B/update |\n");
      s.append("|---|---|---|---|---|---|---|---|---|---|---|---|---|---|\n");
      for (Row r : kernel) {
        String ps = r.params.get("p");
        int p = Integer.parseInt(ps);
        double flops = r.median * 3.0 * p * p;
        Row g = find(rows, "RlsKernelBenchmark", "updateGuarded", "p", ps);
        Row lu = find(rows, "RlsKernelBenchmark", "separateSolvesAndUpdate", "p", ps);
        Row ul = find(rows, "RlsKernelBenchmark", "updateWithAPriori", "p", ps);
        Row uw = find(rows, "RlsKernelBenchmark", "updateAndWeights", "p", ps);
        Row eq = find(rows, "EjmlReferenceBenchmark", "informationQr", "p", ps);
        Row ec = find(rows, "EjmlReferenceBenchmark", "covarianceForm", "p", ps);
        s.append("| ").append(p).append(" | ").append(thousands(r.median)).append(" | ").append(f("%.2f", flops / 1e9))
            .append(" | ").append(f("%.2f", flops / axpyFlops)).append(" | ").append(p >= 64 ? "≥ 0.40" : "–")
            .append(" | ").append(g == null ? "–" : thousands(g.median))
            .append(" | ").append(lu == null ? "–" : thousands(lu.median))
            .append(" | ").append(ul == null ? "–" : thousands(ul.median))
            .append(" | ").append(uw == null ? "–" : thousands(uw.median))
            .append(" | ").append(eq == null ? "–" : thousands(eq.median))
            .append(" | ").append(eq == null || uw == null ? "–" : f("%.1f", uw.median / eq.median))
            .append(" | ").append(ec == null ? "–" : thousands(ec.median))
            .append(" | ").append(ec == null || uw == null ? "–" : f("%.2f", uw.median / ec.median))
            .append(" | ").append(f("%.3f", r.alloc)).append(" |\n");
      }
      s.append('\n');
    }

    // 3. refit
    List<Row> refit = rows.stream().filter(r -> r.bench.equals("RefitBenchmark")).toList();
    if (!refit.isEmpty()) {
      s.append("### 3. Refit from scratch (EJML least-squares QR on all n rows) against one update\n\n");
      s.append("| p | n | refit µs (median) | update µs (from table 2) | refit ÷ update |\n|---|---|---|---|---|\n");
      for (Row r : refit) {
        Row u = find(rows, "RlsKernelBenchmark", "update", "p", r.params.get("p"));
        double uus = u == null ? Double.NaN : 1e6 / u.median;
        s.append("| ").append(r.params.get("p")).append(" | ").append(r.params.get("n")).append(" | ").append(f("%.1f", r.median))
            .append(" | ").append(f("%.3f", uus)).append(" | ").append(thousands(r.median / uus)).append(" |\n");
      }
      s.append('\n');
    }

    // 6. checkpoint
    Row cw = find(rows, "CheckpointBenchmark", "checkpoint", null, null);
    Row cr = find(rows, "CheckpointBenchmark", "restore", null, null);
    if (cw != null || cr != null) {
      int p = Integer.parseInt((cw != null ? cw : cr).params.get("p"));
      int size = CheckpointBenchmark.warm(p).checkpoint().length;
      s.append("### 6b. Checkpoint of a warm pipeline (synthetic p").append(p).append(")\n\n");
      s.append("| p | checkpoint bytes | write µs (median) | restore µs (median) |\n|---|---|---|---|\n");
      s.append("| ").append(p).append(" | ").append(thousands(size)).append(" | ").append(cw == null ? "–" : f("%.1f", cw.median))
          .append(" | ").append(cr == null ? "–" : f("%.1f", cr.median)).append(" |\n\n");
    }
    if (!gc) {
      s.append("(GC profiler off: allocation not measured.)\n");
    }
    return s.toString();
  }

  private static final Map<String, Integer> DIMS = new LinkedHashMap<>();

  static int dimensionOf(String config) {
    return DIMS.computeIfAbsent(config, c -> {
      PipelineStepBenchmark b = new PipelineStepBenchmark();
      b.config = c;
      b.setup();
      return b.dimension();
    });
  }

  /** Prints a few-line description of a result set; used when debugging a single benchmark. */
  static String brief(Collection<RunResult> results) {
    StringBuilder s = new StringBuilder();
    for (RunResult r : results) {
      Row row = new Row(r);
      s.append(row.bench).append('.').append(row.method).append(' ').append(row.params).append(' ')
          .append(f("%.1f", row.median)).append(' ').append(row.unit).append('\n');
    }
    return s.toString();
  }

  static List<IterationResult> iterations(BenchmarkResult b) {
    return new ArrayList<>(b.getIterationResults());
  }

  static String join(double[] v) {
    return Arrays.toString(v);
  }
}
