package dev.runnel.core.bench;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.SplittableRandom;

/**
 * Inputs for the benchmarks: the demo configuration with its recorded (invented) sample feed, and
 * synthetic configurations of a chosen width {@code p}. All seeded.
 *
 * <p>A synthetic configuration of width {@code p} has the constant, {@code k = p/4} numeric
 * columns (dense, standardized online), one one-hot feature with an "(other)" column and
 * {@code p - 2 - k} levels (one non-zero per record), no event-time field (the caller passes a
 * monotone time) and per-record forgetting 0.999.
 */
final class BenchData {
  private BenchData() { }

  /** Where the repository's files are; {@code -Drunnel.root=...} when not run from the root. */
  static Path root() {
    return Path.of(System.getProperty("runnel.root", "."));
  }

  static PipelineConfig demoConfig() {
    return ConfigLoader.load(root().resolve("demo-data/src/main/resources/dev/runnel/demo/quillmarsh.yaml"));
  }

  /**
   * The demo configuration with one of the feature kinds or target options of issue 16 added (the
   * demo's own features unchanged): {@code demo_hinge} (bends at 5 and 18 °C), {@code demo_spline}
   * (a natural spline with knots 0, 8, 16, 24 °C), {@code demo_holidays} (Dutch public holidays
   * with a day before and after), {@code demo_log1p} (the target learned as ln(1 + sessions), a count).
   */
  static PipelineConfig demoConfigWith(String variant) {
    return ConfigLoader.parse(demoYamlWith(variant), variant);
  }

  /** The YAML of {@link #demoConfigWith}. */
  static String demoYamlWith(String variant) {
    String yaml;
    try {
      yaml = Files.readString(root().resolve("demo-data/src/main/resources/dev/runnel/demo/quillmarsh.yaml"));
    } catch (IOException e) {
      throw new UncheckedIOException("run from the repository root or pass -Drunnel.root=<path>", e);
    }
    String feature;
    switch (variant) {
      case "demo_hinge": feature = "  - {kind: bends, name: temp_bends, field: temperature_c, knots: [5, 18]}\n"; break;
      case "demo_spline": feature = "  - {kind: bends, name: temp_spline, field: temperature_c, basis: natural_spline, knots: [0, 8, 16, 24]}\n"; break;
      case "demo_holidays": feature = "  - {kind: special_days, name: holiday, holiday_country: nl, days_before: 1, days_after: 1}\n"; break;
      case "demo_log1p": feature = ""; break;
      case "demo_forecast": return yaml.contains("\n  forecast:\n") ? yaml : forecastYaml(yaml);
      case "demo_no_forecast": return withoutForecast(yaml);
      default: throw new IllegalArgumentException("no demo variant " + variant);
    }
    String model = variant.equals("demo_log1p") ? "model:\n  target_transform: log1p\n  target_non_negative: true\n" : "model:\n";
    if (!yaml.contains("\nmodel:\n")) throw new IllegalStateException("the demo configuration no longer has a model section");
    return yaml.replace("\nmodel:\n", "\n" + feature + model);
  }

  /**
   * The demo YAML without its {@code input.forecast} block (the demo configuration carries one since
   * the demo issues forecasts): the same records, no pending forecasts, no settling, no join.
   */
  private static String withoutForecast(String y) {
    int start = y.indexOf("\n  forecast:\n");
    if (start < 0) {
      return y;
    }
    int end = start + "\n  forecast:\n".length();
    while (y.startsWith("    ", end)) {
      end = y.indexOf('\n', end) + 1;
    }
    return y.substring(0, start + 1) + y.substring(end);
  }

  /**
   * The demo configuration with {@code input.forecast} (entity: the hub; a target-time field the
   * sample records do not carry, so the target time is the event time) and these features added
   * to its list (YAML flow items, one a line); {@code ""} for the forecast alone.
   */
  static PipelineConfig demoForecastConfigWith(String... extraFeatures) {
    try {
      String y = forecastYaml(Files.readString(root().resolve("demo-data/src/main/resources/dev/runnel/demo/quillmarsh.yaml")));
      StringBuilder f = new StringBuilder();
      for (String e : extraFeatures) if (!e.isEmpty()) f.append("  - ").append(e).append('\n');
      y = y.replace("model:\n", f + "model:\n");
      return ConfigLoader.parse(y, "quillmarsh-history.yaml");
    } catch (IOException e) {
      throw new UncheckedIOException("run from the repository root or pass -Drunnel.root=<path>", e);
    }
  }

  /** The demo YAML with {@code input.forecast}: entity the hub, a target-time field the demo records do not carry. */
  private static String forecastYaml(String y) {
    if (!y.contains("    sessions: number\n") || !y.contains("  time_zone: Europe/Amsterdam\n")) {
      throw new IllegalStateException("the demo configuration no longer has the lines the forecast variant extends");
    }
    y = y.replace("    sessions: number\n", "    sessions: number\n    hour_start: time\n");
    return y.replace("  time_zone: Europe/Amsterdam\n",
        "  time_zone: Europe/Amsterdam\n  forecast: {entity_fields: [hub], target_time_field: hour_start}\n");
  }

  /** The invented demo sample feed, one JSON document per line. */
  static List<byte[]> demoRecords() {
    try {
      List<String> lines = Files.readAllLines(root().resolve("demo-data/samples/quillmarsh-small.jsonl"));
      return lines.stream().filter(l -> !l.isBlank()).map(l -> l.getBytes(StandardCharsets.UTF_8)).toList();
    } catch (IOException e) {
      throw new UncheckedIOException("run from the repository root or pass -Drunnel.root=<path>", e);
    }
  }

  static int numericCount(int p) {
    return Math.max(1, p / 4);
  }

  static int levelCount(int p) {
    return p - 2 - numericCount(p);
  }

  static String syntheticYaml(int p, int maxLevels) {
    int k = numericCount(p);
    StringBuilder y = new StringBuilder();
    y.append("name: bench").append(p).append('\n');
    y.append("input:\n  fields:\n    cat: text\n    y: number\n");
    for (int i = 0; i < k; i++) {
      y.append("    x").append(i).append(": number\n");
    }
    y.append("target: y\nfeatures:\n");
    y.append("  - {kind: onehot, field: cat, max_levels: ").append(maxLevels).append("}\n");
    for (int i = 0; i < k; i++) {
      y.append("  - {kind: numeric, field: x").append(i).append("}\n");
    }
    y.append("model:\n  prior_variance: 100\n  forgetting: {factor: 0.999}\n");
    y.append("outputs:\n  snapshot_every_records: 0\n");
    return y.toString();
  }

  static PipelineConfig syntheticConfig(int p) {
    return ConfigLoader.parse(syntheticYaml(p, levelCount(p)), "bench" + p + ".yaml");
  }

  /**
   * {@code n} records for the synthetic configuration of width {@code p}: a level drawn uniformly
   * from {@code levels} names, standard normal numerics, a linear target with noise.
   */
  static byte[][] syntheticRecords(int p, int n, int levels, long seed) {
    int k = numericCount(p);
    SplittableRandom r = new SplittableRandom(seed);
    double[] beta = new double[k];
    for (int i = 0; i < k; i++) {
      beta[i] = r.nextDouble(-2, 2);
    }
    byte[][] out = new byte[n][];
    StringBuilder s = new StringBuilder(256);
    for (int t = 0; t < n; t++) {
      s.setLength(0);
      int level = r.nextInt(levels);
      double y = 10.0 + 0.01 * level;
      s.append("{\"cat\":\"L").append(level).append('"');
      for (int i = 0; i < k; i++) {
        double x = gaussian(r);
        y += beta[i] * x;
        s.append(",\"x").append(i).append("\":").append(round(x));
      }
      y += 0.5 * gaussian(r);
      s.append(",\"y\":").append(round(y)).append('}');
      out[t] = s.toString().getBytes(StandardCharsets.UTF_8);
    }
    return out;
  }

  static double round(double x) {
    return Math.round(x * 1e4) / 1e4;
  }

  static double gaussian(SplittableRandom r) {
    double u = r.nextDouble();
    double v = r.nextDouble();
    return Math.sqrt(-2.0 * Math.log(1.0 - u)) * Math.cos(2.0 * Math.PI * v);
  }

  /** Dense rows with x0 = 1 and standard normal entries; targets linear plus noise. */
  static double[][] denseRows(int p, int n, long seed, double[] targets) {
    SplittableRandom r = new SplittableRandom(seed);
    double[][] rows = new double[n][p];
    for (int t = 0; t < n; t++) {
      rows[t][0] = 1.0;
      double y = 1.0;
      for (int j = 1; j < p; j++) {
        rows[t][j] = gaussian(r);
        y += rows[t][j] * (j % 3 - 1);
      }
      targets[t] = y + 0.1 * gaussian(r);
    }
    return rows;
  }
}
