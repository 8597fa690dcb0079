package dev.runnel.connect.cli;

import dev.runnel.connect.launch.Progress;
import dev.runnel.connect.replay.FileReplay;
import dev.runnel.connect.text.TerminalText;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Snapshot;
import java.io.IOException;
import java.io.PrintStream;
import java.nio.file.Path;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Option;

/**
 * Runs one configuration over a JSON Lines file, exactly as the live pipeline would, and writes
 * the predictions, snapshots and rejects to files. No Kafka involved.
 */
@Command(name = "replay", mixinStandardHelpOptions = true,
    description = "Run one pipeline configuration over a JSON Lines or CSV file (no Kafka) and write its outputs to files.")
public final class ReplayCommand implements Callable<Integer> {

  @Mixin Options.PipelineFile pipeline;
  @Mixin Options.Quiet quiet;

  @Option(names = "--source", required = true, paramLabel = "FILE", description = "Input records: one JSON object per line, or a CSV file (*.csv) with a header row naming the fields.")
  Path source;

  @Option(names = "--out", paramLabel = "DIR", defaultValue = "target/replay",
      description = "Folder for predictions.jsonl, coefficients.jsonl, rejects.jsonl (.avro instead of .jsonl with outputs.encoding: avro; default: ${DEFAULT-VALUE}).")
  Path out;


  @Override
  public Integer call() throws IOException {
    PipelineConfig cfg = Launch.warn(ConfigLoader.load(pipeline.config), System.err);
    Progress progress = new Progress(System.err, "records", 0, quiet.quiet);
    PipelineStep step = FileReplay.run(cfg, source, out, (records, done, size) -> progress.update(records,
        () -> String.format("%.0f%% of the file", 100.0 * done / Math.max(1, size))));
    progress.finish(step.records(), "");
    Snapshot s = step.snapshot();
    PrintStream o = System.out;
    o.printf("replayed %,d records: %,d learned from, %,d without a target, %,d rejected; %,d snapshots%n",
        step.records(), step.trained(), step.forecasts(), step.rejected(), step.snapshotsTaken());
    o.printf("prequential MAE %.4g, RMSE %.4g, bias %.3g, interval coverage %.1f%% (level %.0f%%)%n",
        s.metrics().mae(), s.metrics().rmse(), s.metrics().bias(), 100 * s.metrics().coverage(),
        100 * cfg.model().intervalLevel());
    o.printf("outputs in %s%n", TerminalText.safe(out.toAbsolutePath().toString()));
    return 0;
  }
}
