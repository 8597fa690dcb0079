package dev.runnel.connect.cli;

import dev.runnel.connect.broker.EmbeddedBroker;
import dev.runnel.connect.launch.Progress;
import dev.runnel.connect.replay.MergedFeed;
import dev.runnel.connect.replay.ReplayDriver;
import dev.runnel.connect.replay.ReplaySource;
import dev.runnel.connect.replay.TopicRange;
import dev.runnel.connect.replay.TopicSource;
import dev.runnel.connect.report.HtmlReport;
import dev.runnel.connect.report.JsonReport;
import dev.runnel.connect.report.TextReport;
import dev.runnel.connect.text.TerminalText;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.evaluate.Backtest;
import dev.runnel.core.evaluate.BacktestResult;
import dev.runnel.core.evaluate.BreakdownPeriod;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.time.Instant;
import java.time.OffsetDateTime;
import java.time.format.DateTimeParseException;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Option;

/** Replays a recorded topic or a JSON Lines file through several configurations side by side. */
@Command(name = "backtest", mixinStandardHelpOptions = true,
    description = {"Replay a recorded topic (all partitions, over a range) or a JSON Lines file through every "
        + "configuration in one pass, with the same code that runs live, and compare their prequential errors.",
        "Uses its own consumer without a group and commits nothing: a live pipeline is never disturbed.",
        "With model.scope: global the partitions' records run in one order (Kafka timestamp, then partition, then "
            + "offset; the source is first copied to temporary files under java.io.tmpdir, about its size) and each share is folded by the other partitions "
            + "before their next record, so a topic and its recording give the same bits (docs/backtesting.md, \"Global scope\").",
        "Writes a table to the terminal, backtest.json and backtest.html (self-contained, SVG plots) to --out."})
public final class BacktestCommand implements Callable<Integer> {

  @picocli.CommandLine.Spec
  picocli.CommandLine.Model.CommandSpec spec;

  @Option(names = "--source", required = true, paramLabel = "TOPIC|FILE",
      description = "A topic name, a JSON Lines file (plain, or a recording made by `runnel record`), or a CSV file (*.csv, a header row naming the fields).")
  String source;

  @Option(names = "--config", required = true, paramLabel = "FILE",
      description = "A pipeline configuration (YAML); repeat for each configuration to compare. Labels are the file names.")
  List<Path> configs;

  @Mixin Options.Cluster cluster;
  @Mixin Options.BrokerData brokerData;
  @Mixin Options.Quiet quiet;

  @Option(names = "--start-offset", paramLabel = "N", description = "First offset to read in every partition.")
  Long startOffset;

  @Option(names = "--start-time", paramLabel = "ISO", description = "First Kafka timestamp to read, ISO 8601 with offset, e.g. 2026-02-01T00:00Z.")
  String startTime;

  @Option(names = "--end-offset", paramLabel = "N", description = "Stop before this offset in every partition (default: the end of the topic).")
  Long endOffset;

  @Option(names = "--end-time", paramLabel = "ISO", description = "Stop before this Kafka timestamp.")
  String endTime;

  @Option(names = "--segment-by", paramLabel = "FIELD", description = "A text field: metrics per level (e.g. hub).")
  String segmentBy;

  @Option(names = "--period", paramLabel = "DURATION", defaultValue = "P1D",
      description = "Length of the over-time buckets, ISO 8601 duration (default: ${DEFAULT-VALUE}).")
  String period;

  @Option(names = "--weights", paramLabel = "COLUMN", split = ",",
      description = "Columns whose coefficient paths to plot, e.g. price_per_kwh,temperature_c.")
  List<String> weights = new ArrayList<>();

  @Option(names = "--dm-lag", paramLabel = "L", defaultValue = "-1",
      description = "HAC lag of the Diebold–Mariano test; -1 = floor(4(n/100)^(2/9)) (default: ${DEFAULT-VALUE}).")
  int lag;

  @Option(names = "--dm-steps", paramLabel = "H", defaultValue = "1",
      description = "How many steps ahead the compared errors are, h: sets the test's small-sample correction and its "
          + "least HAC lag, h - 1 (default: ${DEFAULT-VALUE}: one-step prequential errors).")
  int dmSteps;

  /** The old name of --dm-steps: it set only the test, never a forecast horizon. */
  @Option(names = "--horizon", paramLabel = "H", hidden = true)
  Integer oldHorizon;

  @Option(names = "--horizons", paramLabel = "DURATION", split = ",",
      description = "Simulate forecasts issued this long before each actual's target time, with only what was known "
          + "then, and report every metric and the Diebold-Mariano tests per horizon, and each horizon's errors by entity, "
          + "hour of day and period of the target time: ISO 8601 durations, e.g. PT1H,P1D (docs/backtesting.md, \"Horizons\").")
  List<String> horizons = new ArrayList<>();

  @Option(names = "--breakdown-entities", paramLabel = "N", defaultValue = "10",
      description = "With --horizons, each horizon's errors are also shown by entity, by hour of day and by period of "
          + "the target time: the N entities (input.forecast.entity_fields) with the most settled forecasts get a row "
          + "each, the rest share one row, (other) (default: ${DEFAULT-VALUE}).")
  int breakdownEntities;

  @Option(names = "--breakdown-period", paramLabel = "week|month", defaultValue = "week",
      description = "With --horizons: the period of that breakdown, week (ISO 8601 weeks, e.g. 2026-W22) or month "
          + "(e.g. 2026-05), of the target time in each configuration's input.time_zone (default: ${DEFAULT-VALUE}).")
  String breakdownPeriod;

  @Option(names = "--alpha", paramLabel = "A", defaultValue = "0.05", description = "Significance level of the verdicts (default: ${DEFAULT-VALUE}).")
  double alpha;

  @Option(names = "--out", paramLabel = "DIR", defaultValue = "target/backtest",
      description = "Folder for backtest.json and backtest.html (default: ${DEFAULT-VALUE}).")
  Path out;


  @Option(names = "--threads", paramLabel = "N",
      description = "Worker threads that run the configurations while the source is read: 1 = none (read and run "
          + "every configuration on one thread); more = that many, configurations spread over them, at most one "
          + "per configuration. Results are the same bits whatever N (default: one per configuration, at most the "
          + "number of processors and at most 8).")
  Integer threads;

  @Option(names = "--reading-speed", description = "Measure the reading speed: read the source once without running "
      + "any configuration, and print the reading rate (the ceiling a backtest can reach).")
  boolean readOnly;

  /** The old name of --reading-speed. */
  @Option(names = "--read-only", hidden = true)
  boolean oldReadOnly;

  @Override
  public Integer call() throws Exception {
    if (oldHorizon != null) {
      spec.commandLine().getErr().println("runnel backtest: --horizon is deprecated and will get another meaning; it only "
          + "ever set the Diebold-Mariano test's steps: use --dm-steps " + oldHorizon);
      dmSteps = oldHorizon;
    }
    if (oldReadOnly) {
      spec.commandLine().getErr().println("runnel backtest: --read-only is deprecated; use --reading-speed");
      readOnly = true;
    }
    if (horizons.isEmpty()) {
      for (String o : List.of("--breakdown-entities", "--breakdown-period")) {
        if (spec.commandLine().getParseResult().hasMatchedOption(o)) {
          spec.commandLine().getErr().println("runnel backtest: " + o + " breaks down each horizon's errors; it does nothing"
              + " without --horizons (e.g. --horizons PT1H,P1D)");
        }
      }
    }
    List<Backtest.Variant> variants = new ArrayList<>();
    for (Path c : configs) {
      PipelineConfig cfg = Launch.warn(ConfigLoader.load(c), System.err);
      String label = c.getFileName().toString().replaceFirst("\\.ya?ml$", "");
      variants.add(new Backtest.Variant(label, cfg));
    }
    long periodMillis;
    try {
      periodMillis = Duration.parse(period).toMillis();
    } catch (DateTimeParseException e) {
      throw new IllegalArgumentException("--period " + period + ": not an ISO 8601 duration; use e.g. P1D or PT6H");
    }
    Backtest bt = new Backtest(variants, new Backtest.Options(segmentBy, periodMillis, weights, lag, dmSteps, alpha,
        horizonsMillis(horizons), breakdownEntities, BreakdownPeriod.of(breakdownPeriod)));
    if (threads != null && threads < 1) {
      throw new IllegalArgumentException("--threads " + threads + ": must be at least 1 (1 = no worker threads)");
    }
    int workers = Math.min(variants.size(), threads != null ? threads : ReplayDriver.defaultThreads(variants.size()));
    Progress[] progress = {new Progress(System.err, "records", 0, quiet.quiet)};
    long t0 = System.nanoTime();
    long[] passStart = {t0}; // after a global scope's copy to temporary files, the pass's own start
    Map<String, Object> run = new LinkedHashMap<>();
    run.put("source", source);
    List<String> names = new ArrayList<>();
    for (Path c : configs) {
      names.add(c.toString());
    }
    run.put("configurations", names);
    TopicRange range = new TopicRange(startOffset, instant("--start-time", startTime), endOffset,
        instant("--end-time", endTime));
    PipelineConfig first = variants.get(0).config();
    Map<String, Map<String, dev.runnel.core.record.FieldType>> fieldsByConfig = new LinkedHashMap<>();
    for (Backtest.Variant v : variants) {
      fieldsByConfig.put(v.label(), v.config().input().schema().fields());
    }
    EmbeddedBroker[] broker = {null};
    long n;
    try (ReplaySource src = ReplaySource.resolve(source, range, topic -> {
      String servers = cluster.bootstrapServers;
      if (servers == null || servers.isBlank()) {
        broker[0] = Launch.brokerIfNeeded(first, brokerData.dataDir, System.err);
        servers = broker[0] != null ? broker[0].bootstrapServers() : first.kafka().bootstrapServers();
      }
      run.put("bootstrap_servers", servers);
      return new TopicSource(servers, first.kafka().clientProperties(), topic, range);
    }, dev.runnel.connect.file.CsvLines.union(fieldsByConfig))) {
      long sourceBytes = Files.isRegularFile(Path.of(source)) ? Files.size(Path.of(source)) : -1;
      SpillDisplay spill = new SpillDisplay(System.err, quiet.quiet, sourceBytes, () -> {
        progress[0] = new Progress(System.err, "records", 0, quiet.quiet);
        passStart[0] = System.nanoTime();
      });
      n = readOnly ? src.readOnly() : src.replay(bt, workers, new ReplayDriver.ProgressListener() {
        @Override public void progress(long recs, long done, long total) {
          progress[0].update(recs, () -> src.progress(done, total) + left(done, total, passStart[0]));
        }

        @Override public void spill(MergedFeed.SpillProgress p, long done, long total) {
          spill.show(p, () -> src.progress(done, total));
        }
      });
      src.describe(run);
    } finally {
      if (broker[0] != null) {
        broker[0].stop();
      }
    }
    double secs = (System.nanoTime() - t0) / 1e9;
    progress[0].finish(n, String.format("%.1f s", secs));
    if (readOnly) {
      System.out.printf("read %,d records in %.2f s (%,.0f records/s), no configuration run%n", n, secs, n / Math.max(1e-9, secs));
      return 0;
    }
    BacktestResult r = bt.result();
    Files.createDirectories(out);
    JsonReport.write(r, run, out.resolve("backtest.json"));
    HtmlReport.write(r, run, out.resolve("backtest.html"));
    System.out.print(TextReport.render(r));
    System.out.printf("%nreplayed %,d records through %d configuration(s) %s in %.1f s (%,.0f records/s)%n", n,
        variants.size(), workers == 1 ? "on one thread" : "on " + workers + " worker threads", secs, n / Math.max(1e-9, secs));
    System.out.printf("report: %s and %s%n", TerminalText.safe(out.resolve("backtest.json").toAbsolutePath().toString()),
        TerminalText.safe(out.resolve("backtest.html").toAbsolutePath().toString()));
    return 0;
  }

  /**
   * The --horizons values in milliseconds.
   *
   * @throws IllegalArgumentException naming the option, the bad value and the fix
   */
  static List<Long> horizonsMillis(List<String> texts) {
    List<Long> out = new ArrayList<>();
    for (String t : texts) {
      String v = t.strip();
      long ms;
      try {
        ms = Duration.parse(v).toMillis();
      } catch (DateTimeParseException | ArithmeticException e) {
        throw new IllegalArgumentException("--horizons " + t + ": not an ISO 8601 duration; use days, hours, minutes or"
            + " seconds, e.g. --horizons PT1H,PT6H,P1D");
      }
      if (ms <= 0) {
        throw new IllegalArgumentException("--horizons " + t + ": a horizon must be positive (a forecast is issued before"
            + " its target time); use e.g. PT1H or P1D");
      }
      if (out.contains(ms)) {
        throw new IllegalArgumentException("--horizons " + t + ": given twice (as " + ms + " ms); give each horizon once");
      }
      out.add(ms);
    }
    return out;
  }

  /** "  m:ss left" from the share done so far, or nothing before there is a rate. */
  private static String left(long done, long total, long t0) {
    double secs = (System.nanoTime() - t0) / 1e9;
    if (done <= 0 || secs <= 0 || done >= total) {
      return "";
    }
    long left = (long) ((total - done) / (done / secs));
    return String.format(java.util.Locale.ROOT, "  %d:%02d left", left / 60, left % 60);
  }

  static Instant instant(String option, String text) {
    if (text == null) {
      return null;
    }
    try {
      return OffsetDateTime.parse(text).toInstant();
    } catch (DateTimeParseException e) {
      try {
        return Instant.parse(text);
      } catch (DateTimeParseException e2) {
        throw new IllegalArgumentException(option + " " + text + ": not an ISO 8601 time with offset; use e.g. 2026-02-01T00:00Z");
      }
    }
  }
}
