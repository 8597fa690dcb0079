package dev.runnel.core.bench;

import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.feature.Featurizer;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.JsonRecordDecoder;
import java.util.List;
import java.util.concurrent.TimeUnit;
import org.openjdk.jmh.annotations.Benchmark;
import org.openjdk.jmh.annotations.BenchmarkMode;
import org.openjdk.jmh.annotations.Fork;
import org.openjdk.jmh.annotations.Level;
import org.openjdk.jmh.annotations.Measurement;
import org.openjdk.jmh.annotations.Mode;
import org.openjdk.jmh.annotations.OutputTimeUnit;
import org.openjdk.jmh.annotations.Scope;
import org.openjdk.jmh.annotations.Setup;
import org.openjdk.jmh.annotations.State;
import org.openjdk.jmh.annotations.Warmup;

/**
 * The parts of {@link dev.runnel.core.pipeline.PipelineStep#process} before the model, over the demo
 * configuration and its recorded (invented) sample feed, cycled: {@code decode} decodes one line;
 * {@code decodeAndFeaturize} also checks and featurizes it (learning when it carries the target,
 * scoring otherwise), without a model listening. Time per line; run from the repository root.
 *
 * <pre>{@code
 * java -jar stream-core/target/benchmarks.jar DecodeBenchmark -f 1 -wi 3 -i 5 -w 1 -r 1
 * }</pre>
 */
@State(Scope.Thread)
@BenchmarkMode(Mode.AverageTime)
@OutputTimeUnit(TimeUnit.NANOSECONDS)
@Warmup(iterations = 4, time = 1)
@Measurement(iterations = 5, time = 1)
@Fork(value = 1, jvmArgsAppend = {"-Xmx1g"})
public class DecodeBenchmark {

  private JsonRecordDecoder decoder;
  private EventRecord record;
  private Featurizer featurizer;
  private double[] row;
  private byte[][] records;
  private int i;

  @Setup(Level.Trial)
  public void setup() {
    PipelineConfig c = BenchData.demoConfig();
    PipelineConfig.Input in = c.input();
    decoder = new JsonRecordDecoder(in.schema(), in.limits(), in.eventTime().get().field(), in.eventTime().get().format());
    record = new EventRecord(in.schema());
    featurizer = new Featurizer(c);
    row = new double[featurizer.maxDimension()];
    List<byte[]> lines = BenchData.demoRecords();
    records = lines.toArray(new byte[0][]);
    for (int k = 0; k < 3 * records.length; k++) {
      decodeAndFeaturize();
    }
  }

  private byte[] nextLine() {
    byte[] b = records[i++];
    if (i == records.length) {
      i = 0;
    }
    return b;
  }

  @Benchmark
  public Object decode() {
    byte[] b = nextLine();
    return decoder.decode(b, 0, b.length, record);
  }

  @Benchmark
  public double decodeAndFeaturize() {
    byte[] b = nextLine();
    if (decoder.decode(b, 0, b.length, record) != null || featurizer.check(record) != null) {
      return 0.0;
    }
    long t = record.eventTimeMillis();
    if (featurizer.hasTarget(record)) {
      featurizer.learnAndEncode(record, t, t, row);
    } else {
      featurizer.encode(record, t, row);
    }
    return row[1];
  }
}
