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
 * input's value bytes per record. One line per variant of {@code outputs.echo_fields} and
 * {@code outputs.significant_digits}.
 *
 * <pre>{@code
 * mvn -o -q -pl connectors -am package -DskipTests
 * java -cp 'connectors/target/test-classes:connectors/target/runnel.jar:connectors/target/lib/*' \
 *     dev.runnel.connect.bench.OutputBytes demo-data/samples/quillmarsh-small.jsonl
 * }</pre>
 */
public final class OutputBytes {
  private OutputBytes() { }

  /** Counts what an emitter is given. */
  static final class Counting implements Emitter {
    final long[] bytes = new long[4];
    final long[] count = new long[4];
    final long headerBytes;

    Counting(Header[] headers) {
      long h = 0;
      for (Header x : headers) {
        h += x.key().getBytes(StandardCharsets.UTF_8).length + x.value().length;
      }
      headerBytes = h;
    }

    private void add(int i, byte[] key, byte[] value) {
      bytes[i] += (key == null ? 0 : key.length) + value.length + headerBytes;
      count[i]++;
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
    System.out.println("| echo_fields | significant_digits | prediction B | snapshot B/input | reject B/input | all B/input | ÷ input |");
    System.out.println("|---|---|---|---|---|---|---|");
    List<String> all = List.of("kind", "hub", "weather");
    for (List<String> echo : List.<List<String>>of(all, List.of())) {
      for (int digits : new int[] {0, 6, 4}) {
        PipelineConfig.Outputs o = demo.outputs();
        PipelineConfig.Outputs v = new PipelineConfig.Outputs(o.snapshotEveryRecords(), o.snapshotEveryMillis(),
            o.metricsHalfLifeRecords(), echo, digits);
        PipelineConfig c = new PipelineConfig(demo.name(), demo.input(), demo.target(), demo.features(), demo.model(), v,
            demo.kafka(), demo.web(), demo.sourceName());
        PipelineProcessor p = new PipelineProcessor(c, new TopicPartition("quillmarsh.sessions", 0));
        Counting out = new Counting(p.outputHeaders());
        long off = 0;
        for (String l : lines) {
          p.process(off++, 0L, null, l.getBytes(StandardCharsets.UTF_8), out);
        }
        long total = out.bytes[0] + out.bytes[1] + out.bytes[2] + out.bytes[3];
        double n = lines.size();
        System.out.printf(Locale.ROOT, "| %s | %d | %.1f | %.1f | %.1f | %.1f | %.2f |%n", echo.isEmpty() ? "[]" : echo.toString(),
            digits, (double) out.bytes[0] / out.count[0], out.bytes[1] / n, out.bytes[2] / n, total / n, total / n / inPer);
      }
    }
  }
}
