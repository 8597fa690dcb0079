package dev.runnel.connect.bench;

import dev.runnel.connect.replay.ReplayDriver;
import dev.runnel.connect.replay.TopicRange;
import dev.runnel.connect.replay.TopicSource;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.evaluate.Backtest;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import java.util.Map;

/**
 * Replay speed in one warm JVM: the same three runs as {@code docs/bench/replay-speed.sh} (read the
 * topic only; two configurations with {@code --threads 1}; two configurations with the default
 * threads), repeated round after round, the first {@code --warmup} rounds not counted. A fresh JVM
 * per run (the script's first table) includes about 3–4 s of JIT compilation per 10⁶ records on a
 * 2-core machine, which competes with the worker threads; this table shows the replay without it.
 * Each run is timed like the {@code backtest} verb: from opening the topic to the last record done.
 *
 * <p>Usage: {@code java -cp 'connectors/target/runnel.jar:connectors/target/lib/*'
 * dev.runnel.connect.bench.ReplayBenchmark --bootstrap-servers HOST:PORT --topic T --config A.yaml
 * --config B.yaml [--warmup 2] [--rounds 3]}. Prints a Markdown table.
 */
public final class ReplayBenchmark {

  private ReplayBenchmark() { }

  /** Entry point; see the class comment for the arguments. */
  public static void main(String[] args) throws Exception {
    String servers = null;
    String topic = null;
    List<Path> configs = new ArrayList<>();
    int warmup = 2;
    int rounds = 3;
    for (int i = 0; i < args.length; i++) {
      String a = args[i];
      String v = i + 1 < args.length ? args[i + 1] : null;
      switch (a) {
        case "--bootstrap-servers" -> servers = v;
        case "--topic" -> topic = v;
        case "--config" -> configs.add(Path.of(v));
        case "--warmup" -> warmup = Integer.parseInt(v);
        case "--rounds" -> rounds = Integer.parseInt(v);
        default -> throw new IllegalArgumentException(a + ": unknown; use --bootstrap-servers, --topic, --config, "
            + "--warmup, --rounds");
      }
      i++;
    }
    if (servers == null || topic == null || configs.isEmpty() || warmup < 0 || rounds < 1) {
      throw new IllegalArgumentException("give --bootstrap-servers, --topic and at least one --config; "
          + "--warmup at least 0, --rounds at least 1");
    }
    List<Backtest.Variant> variants = new ArrayList<>();
    for (Path c : configs) {
      variants.add(new Backtest.Variant(c.getFileName().toString().replaceFirst("\\.ya?ml$", ""), ConfigLoader.load(c)));
    }
    int defaultThreads = ReplayDriver.defaultThreads(variants.size());
    String[] modes = {"read-only", "threads-1", "default"};
    double[][] rates = new double[modes.length][rounds];
    long records = 0;
    for (int r = 0; r < warmup + rounds; r++) {
      for (int m = 0; m < modes.length; m++) {
        long t0 = System.nanoTime();
        long n;
        try (TopicSource src = new TopicSource(servers, Map.of(), topic, TopicRange.ALL)) {
          if (m == 0) {
            n = src.read((b, o, l, ts, p, off) -> { }, null);
          } else {
            Backtest bt = new Backtest(variants, Backtest.Options.defaults());
            n = ReplayDriver.run(bt, src, m == 1 ? 1 : defaultThreads, null);
          }
        }
        double rate = n / ((System.nanoTime() - t0) / 1e9);
        records = n;
        System.err.printf(Locale.ROOT, "replay-benchmark: round %d%s, %s: %,.0f records/s%n", r + 1,
            r < warmup ? " (warm-up)" : "", modes[m], rate);
        if (r >= warmup) {
          rates[m][r - warmup] = rate;
        }
      }
    }
    String[] labels = {
        "read the topic, no configuration",
        "two configurations, `--threads 1` (sequential)",
        "two configurations, default threads (" + defaultThreads + " workers)"};
    System.out.printf(Locale.ROOT, "In one JVM (`ReplayBenchmark`, %d warm-up rounds not counted), %,d records:%n%n",
        warmup, records);
    System.out.printf("| run | records/s (%d rounds) | median | share of the reading rate |%n", rounds);
    System.out.println("|---|---|---|---|");
    double read = median(rates[0]);
    for (int m = 0; m < modes.length; m++) {
      StringBuilder list = new StringBuilder();
      for (double x : rates[m]) {
        list.append(list.length() == 0 ? "" : " · ").append(String.format(Locale.ROOT, "%,.0f", x));
      }
      double med = median(rates[m]);
      System.out.printf(Locale.ROOT, "| %s | %s | %,.0f | %.2f |%n", labels[m], list, med, med / read);
    }
  }

  private static double median(double[] xs) {
    double[] s = xs.clone();
    Arrays.sort(s);
    int n = s.length;
    return n % 2 == 1 ? s[n / 2] : (s[n / 2 - 1] + s[n / 2]) / 2;
  }
}
