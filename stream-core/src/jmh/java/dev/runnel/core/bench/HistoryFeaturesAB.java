package dev.runnel.core.bench;

import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.PipelineStep;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.util.List;
import java.util.Locale;

/**
 * The cost per record of each history feature kind in the whole pipeline step, beside the demo
 * configuration, measured as {@link PairedSlices} does for two builds: the demo against the demo
 * with {@code input.forecast}, then that against itself with one history feature added
 * ({@link BenchData#demoConfigWith}); A and B run over the demo sample feed (cycled) in one JVM, in
 * alternating slices of thread CPU time, so the load of a shared machine cancels in each pair. An
 * A/A pair comes first and shows the spread. The extra cost per record is {@code 1/rateB − 1/rateA}
 * at the medians.
 *
 * <pre>{@code
 * java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.HistoryFeaturesAB --out docs/bench/history-step-ab.md
 * }</pre>
 */
public final class HistoryFeaturesAB {
  private HistoryFeaturesAB() { }

  /** Label, A's added features (null: the demo itself), B's added features ({@code |} between items). */
  static final String[][] VARIANTS = {
      {"demo (A/A)", null, null},
      {"demo → demo + input.forecast", null, ""},
      {"demo + input.forecast (A/A)", "", ""},
      {"+ lag P1D", "", "{kind: lag, offset: P1D}"},
      {"+ lag P7D, tolerance PT1H", "", "{kind: lag, offset: P7D, tolerance: PT1H}"},
      {"+ smoothed (half_life PT12H)", "", "{kind: smoothed, half_life: PT12H}"},
      {"+ smoothed hour_of_week (P14D)", "", "{kind: smoothed, half_life: P14D, season: hour_of_week}"},
  };

  private static PipelineConfig config(String added) {
    return added == null ? BenchData.demoConfig() : BenchData.demoForecastConfigWith(added.isEmpty() ? new String[0] : added.split("\\|"));
  }

  public static void main(String[] args) throws IOException {
    int slices = 16;
    Path out = Path.of("docs/bench/history-step-ab.md");
    for (int i = 0; i < args.length; i++) {
      switch (args[i]) {
        case "--slices" -> slices = Integer.parseInt(args[++i]);
        case "--out" -> out = Path.of(args[++i]);
        default -> throw new IllegalArgumentException("unknown option " + args[i] + "; allowed: --slices N, --out FILE");
      }
    }
    List<byte[]> lines = BenchData.demoRecords();
    StringBuilder md = new StringBuilder("<!-- written by dev.runnel.core.bench.HistoryFeaturesAB; do not edit by hand -->\n");
    md.append("Run ").append(Instant.now()).append(", demo sample feed (").append(lines.size())
        .append(" lines, cycled), ").append(slices).append(" paired slices of 0.5 s thread CPU time each. Rows starting with +:"
            + " A = the demo with input.forecast, B = that with the feature added.\n\n");
    md.append("| A → B | A median records/s | B median records/s | B/A paired median [quartiles] | extra per record |\n|---|---|---|---|---|\n");
    for (String[] v : VARIANTS) {
      Runnable[] run = {workload(config(v[1]), lines), workload(config(v[2]), lines)};
      PairedSlices.Result r = PairedSlices.measure(run, lines.size(), 20, slices);
      double extraNs = 1e9 / r.medianB() - 1e9 / r.medianA();
      String row = String.format(Locale.ROOT, "| %s | %,.0f | %,.0f | %.3f [%.3f, %.3f] | %+.0f ns |%n", v[0], r.medianA(), r.medianB(),
          r.medianRatio(), r.lowerQuartileRatio(), r.upperQuartileRatio(), extraNs);
      System.out.print(row);
      md.append(row);
    }
    Files.createDirectories(out.toAbsolutePath().getParent());
    Files.writeString(out, md.toString(), StandardCharsets.UTF_8);
  }

  /** One pass over the feed through a step of its own (state carries over between passes). */
  private static Runnable workload(PipelineConfig c, List<byte[]> lines) {
    PipelineStep step = new PipelineStep(c);
    PipelineStepBenchmark.CountingSink sink = new PipelineStepBenchmark.CountingSink();
    return new Runnable() {
      long time;

      @Override public void run() {
        for (int k = 0; k < lines.size(); k++) {
          byte[] b = lines.get(k);
          time += 60_000L;
          step.process(b, 0, b.length, time, 0, k, sink);
        }
      }
    };
  }
}
