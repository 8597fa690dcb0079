package dev.runnel.connect.bench;

import dev.runnel.connect.demo.DemoRun;
import dev.runnel.connect.kafka.Emitter;
import dev.runnel.connect.pipeline.PipelineProcessor;
import dev.runnel.core.config.PipelineConfig;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.Locale;
import org.apache.kafka.common.TopicPartition;
import org.apache.kafka.common.header.Header;

/**
 * Bytes out per input record, uncompressed: the demo configuration's {@link PipelineProcessor} (what
 * {@code run} runs) over a JSON Lines file, every output record counted as key + value + its headers'
 * names and values (the state records are not counted: one per partition per commit). Against the
 * input's value bytes per record. One line per variant of {@code outputs.encoding},
 * {@code outputs.echo_fields} and {@code outputs.significant_digits}; each topic's records counted with
 * that topic's headers (Avro outputs carry only the schema fingerprint).
 *
 * <pre>{@code
 * mvn -o -q -pl connectors -am package -DskipTests
 * java -cp 'connectors/target/test-classes:connectors/target/runnel.jar:connectors/target/lib/*' \
 *     dev.runnel.connect.bench.OutputBytes demo-data/samples/quillmarsh-small.jsonl
 * }</pre>
 */
public final class OutputBytes {
  private OutputBytes() { }

  /** Records per simulated batch (about what the runner's 5 ms linger gathers at 20,000 records/s). */
  static final int BATCH = 100;

  /** Counts what an emitter is given. */
  static final class Counting implements Emitter {
    final long[] bytes = new long[4];
    final long[] count = new long[4];
    final long[] headerBytes = new long[4];
    final byte[][] headerText = new byte[4][];
    /** lz4 frame bytes of the records grouped as batches of {@link #BATCH} per topic. */
    final long[] compressed = new long[4];
    final java.io.ByteArrayOutputStream[] pending = new java.io.ByteArrayOutputStream[4];
    final int[] inBatch = new int[4];

    /** @param p the processor whose headers per output topic are counted with each record */
    Counting(PipelineProcessor p) {
      PipelineProcessor.OutputTopic[] order = {PipelineProcessor.OutputTopic.PREDICTIONS, PipelineProcessor.OutputTopic.COEFFICIENTS,
          PipelineProcessor.OutputTopic.REJECTS, PipelineProcessor.OutputTopic.SETTLED};
      for (int i = 0; i < 4; i++) {
        Header[] headers = p.outputHeaders(order[i]);
        long h = 0;
        java.io.ByteArrayOutputStream t = new java.io.ByteArrayOutputStream();
        for (Header x : headers) {
          h += x.key().getBytes(StandardCharsets.UTF_8).length + x.value().length;
          t.writeBytes(x.key().getBytes(StandardCharsets.UTF_8));
          t.writeBytes(x.value());
        }
        headerBytes[i] = h;
        headerText[i] = t.toByteArray();
      }
      for (int i = 0; i < 4; i++) pending[i] = new java.io.ByteArrayOutputStream();
    }

    private void add(int i, byte[] key, byte[] value) {
      bytes[i] += (key == null ? 0 : key.length) + value.length + headerBytes[i];
      count[i]++;
      if (key != null) pending[i].writeBytes(key);
      pending[i].writeBytes(value);
      pending[i].writeBytes(headerText[i]);
      if (++inBatch[i] == BATCH) flush(i);
    }

    void flush(int i) {
      if (inBatch[i] == 0) return;
      java.io.ByteArrayOutputStream c = new java.io.ByteArrayOutputStream();
      try (net.jpountz.lz4.LZ4FrameOutputStream z = new net.jpountz.lz4.LZ4FrameOutputStream(c,
          net.jpountz.lz4.LZ4FrameOutputStream.BLOCKSIZE.SIZE_64KB)) {
        pending[i].writeTo(z);
      } catch (IOException e) {
        throw new java.io.UncheckedIOException(e);
      }
      compressed[i] += c.size();
      pending[i].reset();
      inBatch[i] = 0;
    }

    @Override public void prediction(byte[] key, byte[] value) { add(0, key, value); }
    @Override public void snapshot(byte[] key, byte[] value) { add(1, key, value); }
    @Override public void reject(byte[] key, byte[] value) { add(2, key, value); }
    @Override public void settled(byte[] key, byte[] value) { add(3, key, value); }
  }

  public static void main(String[] args) throws IOException {
    Path source = Path.of(args.length > 0 ? args[0] : "demo-data/samples/quillmarsh-small.jsonl");
    List<String> lines = Files.readAllLines(source, StandardCharsets.UTF_8);
    long inBytes = 0;
    for (String l : lines) inBytes += l.getBytes(StandardCharsets.UTF_8).length;
    double inPer = (double) inBytes / lines.size();
    PipelineConfig demo = DemoRun.demoConfig();
    System.out.printf(Locale.ROOT, "%s: %,d records, input %.1f bytes a record (values, no key)%n%n", source, lines.size(), inPer);
    long inLz4 = 0;
    {
      java.io.ByteArrayOutputStream batch = new java.io.ByteArrayOutputStream();
      int k = 0;
      for (String l : lines) {
        batch.writeBytes(l.getBytes(StandardCharsets.UTF_8));
        if (++k % BATCH == 0 || k == lines.size()) {
          java.io.ByteArrayOutputStream c = new java.io.ByteArrayOutputStream();
          try (net.jpountz.lz4.LZ4FrameOutputStream z = new net.jpountz.lz4.LZ4FrameOutputStream(c,
              net.jpountz.lz4.LZ4FrameOutputStream.BLOCKSIZE.SIZE_64KB)) {
            batch.writeTo(z);
          }
          inLz4 += c.size();
          batch.reset();
        }
      }
    }
    double inLz4Per = (double) inLz4 / lines.size();
    System.out.printf(Locale.ROOT, "input lz4 in batches of %d records: %.1f bytes a record%n%n", BATCH, inLz4Per);
    System.out.println("| encoding | echo_fields | significant_digits (snapshot_every) | prediction B | settled B | settled per input | prediction B/input | settled B/input | snapshot B/input | reject B/input | all B/input | ÷ input | lz4 all B/input | lz4 ÷ input lz4 |");
    System.out.println("|---|---|---|---|---|---|---|---|---|---|---|---|---|---|");
    List<String> all = List.of("kind", "hub", "weather");
    for (PipelineConfig.OutputEncoding enc : PipelineConfig.OutputEncoding.values())
    for (List<String> echo : List.<List<String>>of(demo.outputs().echoFields(), List.of(), all)) {
      // the last: the demo's outputs with a snapshot a day (P1D) instead of every six hours
      for (int digits : enc == PipelineConfig.OutputEncoding.AVRO ? new int[] {0, -1} : new int[] {0, 6, -1}) {
        if (digits < 0 && echo != demo.outputs().echoFields()) {
          continue;
        }
        PipelineConfig.Outputs o = demo.outputs();
        PipelineConfig.Outputs v = new PipelineConfig.Outputs(o.snapshotEveryRecords(),
            digits < 0 ? 86_400_000L : o.snapshotEveryMillis(), o.metricsHalfLifeRecords(), echo, Math.max(0, digits), enc);
        PipelineConfig c = new PipelineConfig(demo.name(), demo.input(), demo.target(), demo.features(), demo.model(), v,
            demo.kafka(), demo.web(), demo.sourceName());
        PipelineProcessor p = new PipelineProcessor(c, new TopicPartition("quillmarsh.sessions", 0));
        Counting out = new Counting(p);
        long off = 0;
        for (String l : lines) {
          p.process(off++, 0L, null, l.getBytes(StandardCharsets.UTF_8), out);
        }
        long total = out.bytes[0] + out.bytes[1] + out.bytes[2] + out.bytes[3];
        for (int i = 0; i < 4; i++) out.flush(i);
        long lz = out.compressed[0] + out.compressed[1] + out.compressed[2] + out.compressed[3];
        double n = lines.size();
        System.out.printf(Locale.ROOT, "| %s | %s | %s | %.1f | %.1f | %.2f | %.1f | %.1f | %.1f | %.1f | %.1f | %.2f | %.1f | %.2f |%n",
            enc.word(), echo.toString(), digits < 0 ? "0 (P1D)" : Integer.toString(digits), (double) out.bytes[0] / out.count[0],
            out.count[3] == 0 ? 0.0 : (double) out.bytes[3] / out.count[3], out.count[3] / n,
            out.bytes[0] / n, out.bytes[3] / n, out.bytes[1] / n, out.bytes[2] / n, total / n, total / n / inPer,
            lz / n, lz / n / inLz4Per);
      }
    }
  }
}
