package dev.runnel.connect.cli;

import dev.runnel.connect.file.JsonLinesReader;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.OutputJson;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.pipeline.Snapshot;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.io.BufferedOutputStream;
import java.io.IOException;
import java.io.OutputStream;
import java.io.PrintStream;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Option;

/**
 * Runs one configuration over a JSON Lines file, exactly as the live pipeline would, and writes
 * the predictions, snapshots and rejects to files. No Kafka involved.
 */
@Command(name = "replay", mixinStandardHelpOptions = true,
    description = "Run one pipeline configuration over a JSON Lines file (no Kafka) and write its outputs to files.")
public final class ReplayCommand implements Callable<Integer> {

  @Option(names = "--config", required = true, paramLabel = "FILE", description = "Pipeline configuration (YAML).")
  Path config;

  @Option(names = "--source", required = true, paramLabel = "FILE", description = "Input records, one JSON object per line.")
  Path source;

  @Option(names = "--out", paramLabel = "DIR", defaultValue = "target/replay",
      description = "Folder for predictions.jsonl, coefficients.jsonl, rejects.jsonl (default: ${DEFAULT-VALUE}).")
  Path out;

  @Option(names = "--quiet", description = "No progress line.")
  boolean quiet;

  @Override
  public Integer call() throws IOException {
    PipelineConfig cfg = ConfigLoader.load(config);
    if (!Files.isRegularFile(source)) {
      throw new IllegalArgumentException("--source " + source + ": no such file; give a JSON Lines file");
    }
    Files.createDirectories(out);
    PipelineStep step = new PipelineStep(cfg);
    OutputJson json = new OutputJson(cfg.name(), cfg.model().intervalLevel());
    long size = Files.size(source);
    PrintStream err = System.err;
    Progress progress = new Progress(err, "records", 0, quiet);
    try (OutputStream preds = new BufferedOutputStream(Files.newOutputStream(out.resolve("predictions.jsonl")), 1 << 16);
         OutputStream snaps = new BufferedOutputStream(Files.newOutputStream(out.resolve("coefficients.jsonl")), 1 << 16);
         OutputStream rejects = new BufferedOutputStream(Files.newOutputStream(out.resolve("rejects.jsonl")), 1 << 16)) {
      long[] bytesDone = {0};
      // a line longer than max_record_bytes is rejected from its first bytes; the rest is never held
      JsonLinesReader reader = new JsonLinesReader(cfg.input().limits().maxRecordBytes());
      reader.readAll(source, new JsonLinesReader.LineHandler() {
        @Override public void line(byte[] buf, int off, int len, long line) {
          bytesDone[0] += len + 1;
          step.process(buf, off, len, 0L, -1, line, sink(buf, off, len, line));
          progress.update(step.records(), () -> String.format("%.0f%% of the file", 100.0 * bytesDone[0] / Math.max(1, size)));
        }

        @Override public void tooLong(byte[] buf, int off, int prefixLen, long lineBytes, long line) {
          bytesDone[0] += lineBytes + 1;
          step.processTooLarge(lineBytes, sink(buf, off, prefixLen, line));
        }

        private PipelineStep.Sink sink(byte[] buf, int off, int len, long line) {
          return new PipelineStep.Sink() {
            @Override public void prediction(Prediction p, EventRecord r) { write(preds, json.prediction(p, r)); }
            @Override public void reject(RejectReason reason, String detail) {
              write(rejects, json.reject(reason, detail, -1, line, buf, off, len));
            }
            @Override public void snapshotDue() { write(snaps, json.snapshot(step.snapshot(), -1)); }
          };
        }
      });
      write(snaps, json.snapshot(step.snapshot(), -1));
    }
    progress.finish(step.records(), "");
    Snapshot s = step.snapshot();
    PrintStream o = System.out;
    o.printf("replayed %,d records: %,d learned from, %,d forecasts, %,d rejected%n",
        step.records(), step.trained(), step.forecasts(), step.rejected());
    o.printf("prequential MAE %.4g, RMSE %.4g, bias %.3g, interval coverage %.1f%% (level %.0f%%)%n",
        s.metrics().mae(), s.metrics().rmse(), s.metrics().bias(), 100 * s.metrics().coverage(),
        100 * cfg.model().intervalLevel());
    o.printf("outputs in %s%n", out.toAbsolutePath());
    return 0;
  }

  private static void write(OutputStream out, byte[] bytes) {
    try {
      out.write(bytes);
      out.write('\n');
    } catch (IOException e) {
      throw new java.io.UncheckedIOException(e);
    }
  }
}
