package dev.runnel.connect.cli;

import dev.runnel.connect.launch.Progress;
import dev.runnel.connect.replay.FileReplay;
import dev.runnel.connect.replay.MergedFeed;
import dev.runnel.connect.text.TerminalText;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Snapshot;
import java.io.IOException;
import java.io.PrintStream;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Option;

/**
 * Runs one configuration over a JSON Lines file, exactly as the live pipeline would, and writes
 * the predictions, snapshots and rejects to files. No Kafka involved. A recording made by
 * {@code runnel record} runs each partition through its own step, all partitions in one order
 * (Kafka timestamp, partition, offset), sharing with {@code model.scope: global}.
 */
@Command(name = "replay", mixinStandardHelpOptions = true,
    description = {"Run one pipeline configuration over a JSON Lines or CSV file (no Kafka) and write its outputs to files.",
        "A recording made by 'runnel record' runs each partition through its own step, all partitions in one order"
            + " (Kafka timestamp, then partition, then offset); with model.scope: global the partitions share on the"
            + " configured period and each share is folded by the others before their next record, so the same"
            + " recording gives the same bytes (live folds wait for commits: docs/backtesting.md, \"Global scope\")."})
public final class ReplayCommand implements Callable<Integer> {

  @Mixin Options.PipelineFile pipeline;
  @Mixin Options.Quiet quiet;

  @Option(names = "--source", required = true, paramLabel = "FILE", description = "Input records: one JSON object per line (a plain file is partition 0), a recording made by 'runnel record' (its partitions, offsets and timestamps kept), or a CSV file (*.csv) with a header row naming the fields.")
  Path source;

  @Option(names = "--out", paramLabel = "DIR", defaultValue = "target/replay",
      description = "Folder for predictions.jsonl, coefficients.jsonl, rejects.jsonl (.avro instead of .jsonl with outputs.encoding: avro; default: ${DEFAULT-VALUE}).")
  Path out;


  @Override
  public Integer call() throws IOException {
    PipelineConfig cfg = Launch.warn(ConfigLoader.load(pipeline.config), System.err);
    Progress[] progress = {new Progress(System.err, "records", 0, quiet.quiet)};
    SpillDisplay spill = new SpillDisplay(System.err, quiet.quiet, Files.isRegularFile(source) ? Files.size(source) : -1,
        () -> progress[0] = new Progress(System.err, "records", 0, quiet.quiet));
    List<PipelineStep> steps = FileReplay.runAny(cfg, source, out, new FileReplay.Listener() {
      @Override public void progress(long records, long done, long size) {
        progress[0].update(records, () -> ofTheFile(done, size));
      }

      @Override public void spill(MergedFeed.SpillProgress p, long done, long size) {
        spill.show(p, () -> ofTheFile(done, size));
      }
    });
    long records = 0;
    for (PipelineStep step : steps) {
      records += step.records();
    }
    progress[0].finish(records, "");
    PrintStream o = System.out;
    for (PipelineStep step : steps) {
      Snapshot s = step.snapshot();
      String part = steps.size() > 1 ? "partition " + step.partitionOfShares() + ": " : "";
      o.printf("%sreplayed %,d records: %,d learned from, %,d without a target, %,d rejected; %,d snapshots%n",
          part, step.records(), step.trained(), step.forecasts(), step.rejected(), step.snapshotsTaken());
      o.printf("%sprequential MAE %.4g, RMSE %.4g, bias %.3g, interval coverage %.1f%% (level %.0f%%)%n",
          part, s.metrics().mae(), s.metrics().rmse(), s.metrics().bias(), 100 * s.metrics().coverage(),
          100 * cfg.model().intervalLevel());
      if (step.globalModel() != null && steps.size() > 1) {
        o.printf("%smodel.scope: global: %,d shares made, %,d folded%n", part, step.sharesMade(), step.sharesFolded());
      }
    }
    o.printf("outputs in %s%n", TerminalText.safe(out.toAbsolutePath().toString()));
    return 0;
  }

  private static String ofTheFile(long done, long size) {
    return String.format(java.util.Locale.ROOT, "%.0f%% of the file", 100.0 * done / Math.max(1, size));
  }
}
