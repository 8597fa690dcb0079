package dev.runnel.core.bench;

import java.io.IOException;
import java.lang.management.ManagementFactory;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Collection;
import java.util.List;
import java.util.Locale;
import java.util.TreeSet;
import org.openjdk.jmh.results.BenchmarkResult;
import org.openjdk.jmh.results.RunResult;
import org.openjdk.jmh.runner.Runner;
import org.openjdk.jmh.runner.RunnerException;
import org.openjdk.jmh.runner.options.ChainedOptionsBuilder;
import org.openjdk.jmh.runner.options.OptionsBuilder;

/**
 * Runs {@link RowUpdateFormsBenchmark}, the shipped {@code RlsKernelBenchmark.update} and
 * {@link AxpyBenchmark} in one JMH invocation on the JVM that runs this class (JMH forks the
 * same JVM), and writes one markdown table: per form and p, the median rate, its nominal
 * floating-point rate ({@code 3 p^2} flops per update, the standard form's count, for every form),
 * that rate over the same run's axpy rate, and the rate over the {@code givens} form's.
 *
 * <pre>{@code
 * java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.RowUpdateForms --out docs/bench/row-update-forms-17.md
 * /path/to/another/jdk/bin/java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.RowUpdateForms --out FILE
 * }</pre>
 * Options: {@code --out FILE}, {@code --forks N} (default 2).
 */
public final class RowUpdateForms {

  private RowUpdateForms() { }

  public static void main(String[] args) throws RunnerException, IOException {
    Path out = Path.of("docs/bench/row-update-forms.md");
    int forks = 2;
    for (int a = 0; a < args.length; a++) {
      switch (args[a]) {
        case "--out" -> out = Path.of(args[++a]);
        case "--forks" -> forks = Integer.parseInt(args[++a]);
        default -> throw new IllegalArgumentException("unknown option " + args[a] + "; allowed: --out FILE, --forks N");
      }
    }
    ChainedOptionsBuilder o = new OptionsBuilder()
        .include("RowUpdateFormsBenchmark|AxpyBenchmark|RlsKernelBenchmark.update$")
        .param("p", "64", "128")
        .forks(forks)
        .shouldFailOnError(true);
    long t0 = System.nanoTime();
    Collection<RunResult> results = new Runner(o.build()).run();
    double minutes = (System.nanoTime() - t0) / 6e10;
    String md = render(results, forks, minutes);
    if (out.getParent() != null) {
      Files.createDirectories(out.getParent());
    }
    Files.writeString(out, md, StandardCharsets.UTF_8);
    System.out.println(md);
    System.out.println("written to " + out);
  }

  private record Score(String name, int p, double median, double min, double max) { }

  static String render(Collection<RunResult> results, int forks, double minutes) {
    List<Score> scores = new ArrayList<>();
    double axpy = Double.NaN;
    for (RunResult r : results) {
      String label = r.getParams().getBenchmark();
      String method = label.substring(label.lastIndexOf('.') + 1);
      String cls = label.substring(0, label.lastIndexOf('.'));
      BenchmarkResult b = r.getAggregatedResult();
      if (cls.endsWith("AxpyBenchmark")) {
        axpy = CoreBenchmarks.median(b) * 2.0 * Integer.parseInt(r.getParams().getParam("n"));
        continue;
      }
      String name = cls.endsWith("RlsKernelBenchmark") ? "RlsModel.update (shipped, with its checks)" : method;
      scores.add(new Score(name, Integer.parseInt(r.getParams().getParam("p")), CoreBenchmarks.median(b),
          CoreBenchmarks.minIter(b), CoreBenchmarks.maxIter(b)));
    }
    StringBuilder s = new StringBuilder();
    s.append("<!-- written by dev.runnel.core.bench.RowUpdateForms; do not edit by hand -->\n");
    s.append("Run ").append(Instant.now()).append(", JVM ").append(System.getProperty("java.vm.name")).append(' ')
        .append(System.getProperty("java.vm.version")).append(", ").append(forks)
        .append(" forks × (3 warm-up + 5 measured 1 s iterations), ").append(f("%.1f", minutes)).append(" min, ")
        .append(Runtime.getRuntime().availableProcessors()).append(" CPUs, load average at the end ")
        .append(f("%.2f", ManagementFactory.getOperatingSystemMXBean().getSystemLoadAverage()))
        .append(". axpy (n = 1024) in the same run: ").append(f("%.2f", axpy / 1e9))
        .append(" GFLOP/s. Rates are medians of the measured iterations, [min, max] beside them;")
        .append(" GFLOP/s counts 3p² flops per update for every form.\n\n");
    s.append("| form | p | updates/s | [min, max] | GFLOP/s (3p²) | ÷ axpy | ÷ givens |\n");
    s.append("|---|---|---|---|---|---|---|\n");
    for (int p : new TreeSet<>(scores.stream().map(Score::p).toList())) {
      double ref = scores.stream().filter(x -> x.p() == p && x.name().equals("givens")).mapToDouble(Score::median)
          .findFirst().orElse(Double.NaN);
      for (Score x : scores) {
        if (x.p() != p) {
          continue;
        }
        double flops = x.median() * 3.0 * p * p;
        s.append("| ").append(x.name()).append(" | ").append(p).append(" | ").append(CoreBenchmarks.thousands(x.median()))
            .append(" | [").append(CoreBenchmarks.thousands(x.min())).append(", ").append(CoreBenchmarks.thousands(x.max()))
            .append("] | ").append(f("%.2f", flops / 1e9)).append(" | ").append(f("%.2f", flops / axpy))
            .append(" | ").append(f("%.2f", x.median() / ref)).append(" |\n");
      }
    }
    return s.toString();
  }

  private static String f(String fmt, double v) {
    return String.format(Locale.ROOT, fmt, v);
  }
}
