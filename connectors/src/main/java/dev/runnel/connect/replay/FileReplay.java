package dev.runnel.connect.replay;

import dev.runnel.connect.file.CsvLines;
import dev.runnel.connect.file.FileFormat;
import dev.runnel.connect.file.JsonLinesReader;
import dev.runnel.connect.output.OutputEncoder;
import dev.runnel.connect.output.OutputSchemas;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.OutputJson;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.pipeline.SettledForecast;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.io.BufferedOutputStream;
import java.io.IOException;
import java.io.OutputStream;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import dev.runnel.connect.file.Recording;
import dev.runnel.core.config.ModelScope;
import dev.runnel.core.pipeline.ShareExchange;

/**
 * One configuration over one JSON Lines or CSV file ({@link FileFormat}), exactly as the live pipeline would run it on one
 * input partition, with the outputs written to files: {@code predictions.jsonl},
 * {@code coefficients.jsonl} and {@code rejects.jsonl}, each record in the layout of the topic of
 * the same name (docs/formats.md), and, with {@code input.forecast}, {@code settled.jsonl}: one
 * settled forecast a line (docs/forecasting.md). The file is partition {@value #PARTITION}; a record's offset is
 * its line number. No Kafka.
 *
 * <p>With {@code outputs.encoding: avro} predictions, rejects and settled forecasts go to
 * {@code predictions.avro}, {@code rejects.avro} and {@code settled.avro} instead: Avro object
 * container files (no compression) of the writer schemas in {@link OutputSchemas}, each datum the
 * very bytes {@code run} publishes for it (appended pre-encoded), and a sync marker made from the
 * schema (the first 16 bytes of the MD5 of its Parsing Canonical Form) rather than at random, so the
 * same input gives the same file bytes.
 *
 * <p>Snapshots: every snapshot that becomes due is written as it does; when records came after
 * the last due one (or none became due), one more is taken at the end of the file with the next
 * index, so the last snapshot of {@code coefficients.jsonl} ({@code .avro}) is the final state and indices only rise.
 */
public final class FileReplay {

  /** The partition a file stands for (as in {@link FileSource} and docs/formats.md). */
  public static final int PARTITION = 0;

  private FileReplay() { }

  /** Told how far the pass is: records handed in so far, bytes read of the file's size. */
  @FunctionalInterface
  public interface Listener {
    void progress(long records, long bytesDone, long bytesTotal);

    /**
     * A recording, before its run: how the copy to one temporary file per partition goes
     * ({@link MergedFeed}), with the bytes of the recording read so far of its size. Default: nothing.
     */
    default void spill(MergedFeed.SpillProgress p, long bytesDone, long bytesTotal) { }
  }

  /**
   * Runs the file through a new pipeline step.
   *
   * @param config the configuration. Not modified.
   * @param source the JSON Lines or CSV file
   * @param out the folder for the output files (created if missing): {@code format.json} (the format
   *     version and pipeline name, docs/formats.md), three JSON Lines files, and {@code settled.jsonl}
   *     with {@code input.forecast}
   * @param listener told after each record; may be null
   * @return the step at the end of the file (counters, metrics, model)
   * @throws IllegalArgumentException if {@code source} is not a file, is neither JSON Lines nor CSV, or is a CSV
   *     file whose header names none of the configuration's fields
   */
  public static PipelineStep run(PipelineConfig config, Path source, Path out, Listener listener) throws IOException {
    if (!Files.isRegularFile(source)) {
      throw new IllegalArgumentException("--source " + source + ": no such file; give a JSON Lines or CSV file");
    }
    FileFormat format = FileFormat.of(source, "--source");
    PipelineStep step = new PipelineStep(config);
    long size = Files.size(source);
    try (Outputs outputs = new Outputs(config, out)) {
      OutputJson json = outputs.json;
      OutputEncoder encoder = outputs.encoder;
      Output preds = outputs.preds;
      Output snaps = outputs.snaps;
      Output rejects = outputs.rejects;
      Output settled = outputs.settled;
      long[] bytesDone = {0};
      long[] recordsAtLastSnapshot = {-1};
      // a line longer than max_record_bytes is rejected from its first bytes; the rest is never held
      JsonLinesReader.LineHandler handler = new JsonLinesReader.LineHandler() {
        @Override public void line(byte[] buf, int off, int len, long line) {
          bytesDone[0] += len + 1;
          step.process(buf, off, len, 0L, PARTITION, line, sink(buf, off, len, line));
          progress();
        }

        @Override public void tooLong(byte[] buf, int off, int prefixLen, long lineBytes, long line) {
          bytesDone[0] += lineBytes + 1;
          step.processTooLarge(lineBytes, sink(buf, off, prefixLen, line));
          progress();
        }

        private void progress() {
          if (listener != null) {
            listener.progress(step.records(), bytesDone[0], size);
          }
        }

        private PipelineStep.Sink sink(byte[] buf, int off, int len, long line) {
          return new PipelineStep.Sink() {
            @Override public void prediction(Prediction p, EventRecord r) {
              preds.write(encoder.prediction(p, r));
            }

            @Override public void reject(RejectReason reason, String detail) {
              rejects.write(encoder.reject(reason, detail, PARTITION, line, buf, off, len));
            }

            @Override public void snapshotDue() {
              snaps.write(encoder.snapshot(json, step.snapshot(), PARTITION));
              recordsAtLastSnapshot[0] = step.records();
            }

            @Override public void settled(SettledForecast s, EventRecord r) {
              settled.write(encoder.settled(s, r));
            }
          };
        }
      };
      int limit = config.input().limits().maxRecordBytes();
      if (format == FileFormat.CSV) {
        new CsvLines(source, config.input().schema().fields(), limit).read(handler);
      } else {
        new JsonLinesReader(limit).readAll(source, handler);
      }
      if (step.records() != recordsAtLastSnapshot[0]) {
        step.takeSnapshotNow();
        snaps.write(encoder.snapshot(json, step.snapshot(), PARTITION));
      }
    }
    return step;
  }

  /**
   * Runs a file: a recording made by {@code runnel record} (told by its header line) through one step
   * per partition ({@link #runRecording}); any other JSON Lines or CSV file as one partition
   * ({@link #run}).
   *
   * @return the steps at the end, by ascending partition (one for a plain file)
   */
  public static List<PipelineStep> runAny(PipelineConfig config, Path source, Path out, Listener listener) throws IOException {
    if (isRecording(source)) {
      return runRecording(config, source, out, listener);
    }
    return List.of(run(config, source, out, listener));
  }

  /** Whether the file's first line is a recording's header. */
  static boolean isRecording(Path file) throws IOException {
    if (!Files.isRegularFile(file) || FileFormat.of(file, "--source") == FileFormat.CSV) {
      return false;
    }
    byte[] head;
    try (java.io.InputStream in = Files.newInputStream(file)) {
      head = in.readNBytes(4096);
    }
    int end = 0;
    while (end < head.length && head[end] != '\n') {
      end++;
    }
    return Recording.isHeader(head, 0, end);
  }

  /**
   * A recording made by {@code runnel record} (docs/formats.md, "Recorded topics"): each partition
   * through its own step, as the live pipeline runs it, the outputs of all partitions in the same
   * files, each record with its recorded partition and offset. The records of all partitions run in
   * one order, by Kafka timestamp, then partition, then offset ({@link MergedFeed}); with
   * {@code model.scope: global} each partition's shares are made on the live period rule and folded
   * by the others before their next record ({@link ShareExchange}), so the same recording gives the
   * same bytes, whatever order it holds the partitions in (docs/backtesting.md, "Global scope").
   * A snapshot per partition closes the run when records came after its last due one.
   *
   * @return the steps at the end, by ascending partition
   * @throws IllegalArgumentException (naming {@code model.scope}) with a global configuration and a
   *     recording of several partitions whose records lack timestamps (a partition-scope one is replayed)
   */
  public static List<PipelineStep> runRecording(PipelineConfig config, Path source, Path out, Listener listener)
      throws IOException {
    FileSource src = new FileSource(source);
    long size = Files.size(source);
    long[] read = {0};
    MergedFeed.SpillListener spill = listener == null ? null : p -> listener.spill(p, read[0], size);
    try (MergedFeed feed = MergedFeed.spill(h -> src.read(h, read), "--source " + source, MergedFeed.temporaryRoot(), spill,
        config.model().scope() == ModelScope.GLOBAL);
         Outputs outputs = new Outputs(config, out)) {
      int[] parts = feed.partitions();
      PipelineStep[] steps = new PipelineStep[parts.length == 0 ? 0 : parts[parts.length - 1] + 1];
      long[] recordsAtLastSnapshot = new long[steps.length];
      for (int p : parts) {
        steps[p] = new PipelineStep(config, p);
        recordsAtLastSnapshot[p] = -1;
      }
      ShareExchange exchange = config.model().scope() == ModelScope.GLOBAL ? new ShareExchange(parts) : null;
      long[] n = {0};
      feed.read((buf, off, len, ts, p, o) -> {
        PipelineStep step = steps[p];
        if (exchange != null) {
          exchange.before(p, step);
        }
        step.process(buf, off, len, ts, p, o, new PipelineStep.Sink() {
          @Override public void prediction(Prediction pr, EventRecord r) {
            outputs.preds.write(outputs.encoder.prediction(pr, r));
          }

          @Override public void reject(RejectReason reason, String detail) {
            outputs.rejects.write(outputs.encoder.reject(reason, detail, p, o, buf, off, len));
          }

          @Override public void snapshotDue() {
            outputs.snaps.write(outputs.encoder.snapshot(outputs.json, step.snapshot(), p));
            recordsAtLastSnapshot[p] = step.records();
          }

          @Override public void settled(SettledForecast s, EventRecord r) {
            outputs.settled.write(outputs.encoder.settled(s, r));
          }
        });
        if (exchange != null) {
          exchange.after(p, step);
        }
        n[0]++;
        if (listener != null && (n[0] & 1023) == 0) {
          listener.progress(n[0], size * n[0] / Math.max(1, feed.records()), size);
        }
      });
      List<PipelineStep> done = new ArrayList<>();
      for (int p : parts) {
        PipelineStep step = steps[p];
        if (step.records() != recordsAtLastSnapshot[p]) {
          step.takeSnapshotNow();
          outputs.snaps.write(outputs.encoder.snapshot(outputs.json, step.snapshot(), p));
        }
        done.add(step);
      }
      if (listener != null) {
        listener.progress(n[0], size, size);
      }
      return done;
    }
  }

  /** The output files of one run: created at once, closed together. */
  private static final class Outputs implements java.io.Closeable {
    final OutputJson json;
    final OutputEncoder encoder;
    final Output preds;
    final Output snaps;
    final Output rejects;
    final Output settled;

    Outputs(PipelineConfig config, Path out) throws IOException {
      Files.createDirectories(out);
      json = OutputJson.of(config);
      encoder = OutputEncoder.of(config, json);
      boolean avro = encoder.encoding() == PipelineConfig.OutputEncoding.AVRO;
      // format 3 keeps the format version and pipeline name out of each line; the folder holds them once
      Files.write(out.resolve("format.json"), json.formatFile());
      boolean forecast = config.input().forecast().enabled();
      preds = avro ? new AvroFile(out.resolve("predictions.avro"), OutputSchemas.Kind.PREDICTION)
          : new Lines(open(out.resolve("predictions.jsonl")));
      snaps = avro ? new AvroFile(out.resolve("coefficients.avro"), OutputSchemas.Kind.SNAPSHOT)
          : new Lines(open(out.resolve("coefficients.jsonl")));
      rejects = avro ? new AvroFile(out.resolve("rejects.avro"), OutputSchemas.Kind.REJECT)
          : new Lines(open(out.resolve("rejects.jsonl")));
      settled = !forecast ? new Lines(OutputStream.nullOutputStream())
          : avro ? new AvroFile(out.resolve("settled.avro"), OutputSchemas.Kind.SETTLED)
          : new Lines(open(out.resolve("settled.jsonl")));
    }

    @Override public void close() throws IOException {
      IOException first = null;
      for (Output o : new Output[] {preds, snaps, rejects, settled}) {
        try {
          o.close();
        } catch (IOException e) {
          if (first == null) {
            first = e;
          }
        }
      }
      if (first != null) {
        throw first;
      }
    }
  }

  /** One output file of predictions, rejects or settled forecasts. */
  private interface Output extends java.io.Closeable {
    void write(byte[] record);
  }

  /** JSON Lines: the record and a newline. */
  private record Lines(OutputStream out) implements Output {
    @Override public void write(byte[] record) {
      FileReplay.write(out, record);
    }

    @Override public void close() throws IOException {
      out.close();
    }
  }

  /** An Avro object container file of one output schema, its datums appended as encoded. */
  private static final class AvroFile implements Output {
    private final org.apache.avro.file.DataFileWriter<Object> writer;

    AvroFile(Path p, OutputSchemas.Kind kind) throws IOException {
      byte[] sync;
      try {
        sync = java.util.Arrays.copyOf(org.apache.avro.SchemaNormalization.parsingFingerprint("MD5", kind.schema()), 16);
      } catch (java.security.NoSuchAlgorithmException e) {
        throw new IllegalStateException("MD5 is missing from this Java runtime", e); // every Java SE runtime has it
      }
      writer = new org.apache.avro.file.DataFileWriter<>(new org.apache.avro.generic.GenericDatumWriter<>(kind.schema()));
      writer.create(kind.schema(), open(p), sync);
    }

    @Override public void write(byte[] record) {
      try {
        writer.appendEncoded(java.nio.ByteBuffer.wrap(record));
      } catch (IOException e) {
        throw new UncheckedIOException(e);
      }
    }

    @Override public void close() throws IOException {
      writer.close();
    }
  }

  private static OutputStream open(Path p) throws IOException {
    return new BufferedOutputStream(Files.newOutputStream(p), 1 << 16);
  }

  private static void write(OutputStream out, byte[] bytes) {
    try {
      out.write(bytes);
      out.write('\n');
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }
}
