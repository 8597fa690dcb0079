package dev.runnel.core.bench;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.feature.Featurizer;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.JsonRecordDecoder;
import java.io.IOException;
import java.lang.management.ManagementFactory;
import java.lang.management.MemoryMXBean;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.util.Locale;
import java.util.SplittableRandom;

/**
 * Benchmark 6: heap in use with a one-hot feature ({@code max_levels = 1000}) fed {@code --records}
 * records (default 10^7) whose category is drawn from 10^6 distinct strings. Part A runs decode +
 * featurize with learning (every vocabulary admission and expiry) over all records; part B runs
 * the whole pipeline step (with the model, about 1,000 columns wide, {@code O(p^2)} per update)
 * over {@code --model-records} records (default 20,000). Heap in use is read after a full GC
 * every 10^6 records (A) or 5,000 records (B); run it with {@code -Xmx256m}, so exceeding the
 * bound fails the run.
 *
 * <pre>{@code
 * java -Xmx256m -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.MemoryBenchmark --out docs/bench/memory-results.md
 * }</pre>
 */
public final class MemoryBenchmark {
  private MemoryBenchmark() { }

  static final String YAML = """
      name: memory
      input:
        fields:
          cat: text
          x: number
          y: number
      target: y
      features:
        - {kind: onehot, field: cat, max_levels: 1000, expire_after_records: 20000}
        - {kind: numeric, field: x}
      model:
        prior_variance: 100
        forgetting: {factor: 0.999}
      outputs:
        snapshot_every_records: 0
      """;

  public static void main(String[] args) throws IOException {
    long records = 10_000_000L;
    long modelRecords = 20_000L;
    int distinct = 1_000_000;
    Path out = Path.of("docs/bench/memory-results.md");
    for (int a = 0; a < args.length; a++) {
      switch (args[a]) {
        case "--records" -> records = Long.parseLong(args[++a]);
        case "--model-records" -> modelRecords = Long.parseLong(args[++a]);
        case "--out" -> out = Path.of(args[++a]);
        default -> throw new IllegalArgumentException("unknown option " + args[a] + "; allowed: --records N, --model-records N, --out FILE");
      }
    }
    PipelineConfig cfg = ConfigLoader.parse(YAML, "memory.yaml");
    MemoryMXBean mem = ManagementFactory.getMemoryMXBean();
    long maxHeap = Runtime.getRuntime().maxMemory();

    // A: decode + featurize (learning) over every record
    JsonRecordDecoder decoder = new JsonRecordDecoder(cfg.input().schema(), cfg.input().limits());
    EventRecord rec = new EventRecord(cfg.input().schema());
    Featurizer f = new Featurizer(cfg);
    double[] row = new double[f.maxDimension() + 8];
    SplittableRandom r = new SplittableRandom(5);
    long peakA = 0;
    long t0 = System.nanoTime();
    byte[] buf = new byte[128];
    for (long i = 0; i < records; i++) {
      int len = encode(buf, r.nextInt(distinct), r.nextDouble(), r.nextDouble());
      if (decoder.decode(buf, 0, len, rec) == null && f.check(rec) == null) {
        if (row.length < f.maxDimension()) row = new double[f.maxDimension() + 8];
        f.learnAndEncode(rec, i, i, row);
      }
      if ((i + 1) % 1_000_000 == 0) {
        System.gc();
        peakA = Math.max(peakA, mem.getHeapMemoryUsage().getUsed());
      }
    }
    double secondsA = (System.nanoTime() - t0) / 1e9;

    // B: the whole step, model included
    PipelineStep step = new PipelineStep(cfg);
    PipelineStepBenchmark.CountingSink sink = new PipelineStepBenchmark.CountingSink();
    long peakB = 0;
    long t1 = System.nanoTime();
    for (long i = 0; i < modelRecords; i++) {
      int len = encode(buf, r.nextInt(distinct), r.nextDouble(), r.nextDouble());
      step.process(buf, 0, len, i, 0, i, sink);
      if ((i + 1) % 5_000 == 0) {
        System.gc();
        peakB = Math.max(peakB, mem.getHeapMemoryUsage().getUsed());
      }
    }
    double secondsB = (System.nanoTime() - t1) / 1e9;
    int p = step.model().dimension();
    int cp = step.checkpoint().length;

    String md = "<!-- written by dev.runnel.core.bench.MemoryBenchmark; do not edit by hand -->\n"
        + "Run " + Instant.now() + ", max heap (-Xmx) " + mb(maxHeap) + ", categories drawn uniformly from "
        + String.format(Locale.ROOT, "%,d", distinct) + " distinct strings, max_levels 1000, expire_after_records 20000.\n\n"
        + "| part | records | peak heap in use after GC | target | time |\n|---|---|---|---|---|\n"
        + String.format(Locale.ROOT, "| A: decode + featurize with learning | %,d | %s | < 256 MB (%s) | %.1f s |%n", records, mb(peakA),
            peakA < 256L << 20 ? "met" : "not met", secondsA)
        + String.format(Locale.ROOT, "| B: whole step with the model (p = %d after the run, checkpoint %,d bytes) | %,d | %s | < 256 MB (%s) | %.1f s |%n",
            p, cp, modelRecords, mb(peakB), peakB < 256L << 20 ? "met" : "not met", secondsB);
    Files.createDirectories(out.toAbsolutePath().getParent());
    Files.writeString(out, md, StandardCharsets.UTF_8);
    System.out.println(md);
  }

  static String mb(long bytes) {
    return String.format(Locale.ROOT, "%.1f MB", bytes / 1048576.0);
  }

  /** {"cat":"c<k>","x":<x>,"y":<y>} into buf without allocating; returns the length. */
  static int encode(byte[] buf, int k, double x, double y) {
    int i = 0;
    i = put(buf, i, "{\"cat\":\"c");
    i = putInt(buf, i, k);
    i = put(buf, i, "\",\"x\":0.");
    i = putInt4(buf, i, (int) (x * 10000));
    i = put(buf, i, ",\"y\":");
    i = putInt(buf, i, (int) (y * 100) + k % 7);
    buf[i++] = '}';
    return i;
  }

  private static int put(byte[] b, int i, String s) {
    for (int k = 0; k < s.length(); k++) {
      b[i++] = (byte) s.charAt(k);
    }
    return i;
  }

  private static int putInt(byte[] b, int i, int v) {
    if (v >= 10) i = putInt(b, i, v / 10);
    b[i++] = (byte) ('0' + v % 10);
    return i;
  }

  private static int putInt4(byte[] b, int i, int v) {
    b[i++] = (byte) ('0' + v / 1000 % 10);
    b[i++] = (byte) ('0' + v / 100 % 10);
    b[i++] = (byte) ('0' + v / 10 % 10);
    b[i++] = (byte) ('0' + v % 10);
    return i;
  }
}
