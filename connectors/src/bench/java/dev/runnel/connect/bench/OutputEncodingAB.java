package dev.runnel.connect.bench;

import dev.runnel.connect.demo.DemoRun;
import dev.runnel.connect.output.OutputAvro;
import dev.runnel.connect.output.OutputEncoder;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.OutputJson;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.pipeline.SettledForecast;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.lang.management.ManagementFactory;
import java.lang.management.ThreadMXBean;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;

/**
 * CPU time of the output encoding per input record, JSON against Avro, paired in one JVM on one
 * thread: each round runs four slices in a rotating order, each slice a fresh demo-configuration
 * {@link PipelineStep} over the whole sample {@code --passes} times, its sink doing: nothing
 * ({@code none}), {@link OutputJson} ({@code json}), {@link OutputAvro} ({@code avro}), and
 * {@link OutputJson} again ({@code json2}, the A/A). Each slice's thread CPU time minus the
 * {@code none} slice of its round is that round's encoding cost (predictions, settled forecasts,
 * rejects; snapshots are JSON in both and not encoded here). Prints the median and quartiles over the
 * rounds of the cost per input record and of the within-round ratios.
 *
 * <pre>{@code
 * mvn -o -q -pl connectors -am package -DskipTests
 * java -cp 'connectors/target/test-classes:connectors/target/runnel.jar:connectors/target/lib/*' \
 *     dev.runnel.connect.bench.OutputEncodingAB demo-data/samples/quillmarsh-small.jsonl --rounds 30 --passes 4
 * }</pre>
 */
public final class OutputEncodingAB {
  private OutputEncodingAB() { }

  static final String[] MODES = {"none", "json", "avro", "json2"};

  public static void main(String[] args) throws Exception {
    Path source = Path.of(args.length > 0 && !args[0].startsWith("--") ? args[0] : "demo-data/samples/quillmarsh-small.jsonl");
    int rounds = intArg(args, "--rounds", 30);
    int passes = intArg(args, "--passes", 4);
    int warm = intArg(args, "--warm", 6);
    List<byte[]> lines = new ArrayList<>();
    for (String l : Files.readAllLines(source, StandardCharsets.UTF_8)) {
      lines.add(l.getBytes(StandardCharsets.UTF_8));
    }
    PipelineConfig cfg = DemoRun.demoConfig();
    ThreadMXBean mx = ManagementFactory.getThreadMXBean();
    long[] sink = new long[1];
    long[] outBytes = new long[MODES.length];
    double[][] perRecord = new double[MODES.length][rounds];
    long records = (long) lines.size() * passes;
    for (int r = -warm; r < rounds; r++) {
      long[] cpu = new long[MODES.length];
      for (int k = 0; k < MODES.length; k++) {
        int m = Math.floorMod(k + r, MODES.length); // rotate the order
        long t0 = mx.getCurrentThreadCpuTime();
        long b = 0;
        for (int p = 0; p < passes; p++) {
          b += slice(cfg, lines, m, sink);
        }
        cpu[m] = mx.getCurrentThreadCpuTime() - t0;
        outBytes[m] = b / passes;
      }
      if (r >= 0) {
        for (int m = 0; m < MODES.length; m++) {
          perRecord[m][r] = (cpu[m] - (m == 0 ? 0 : cpu[0])) / (double) records;
        }
      }
    }
    double[] jsonCost = perRecord[1];
    double[] avroCost = perRecord[2];
    double[] aa = new double[rounds];
    double[] ba = new double[rounds];
    for (int r = 0; r < rounds; r++) {
      aa[r] = perRecord[3][r] / jsonCost[r];
      ba[r] = avroCost[r] / jsonCost[r];
    }
    System.out.printf(Locale.ROOT, "%s: %,d records a slice (%d passes), %d rounds after %d warm-up rounds; %s, %d CPUs, load %.2f%n%n",
        source, records, passes, rounds, warm, System.getProperty("java.vm.name") + " " + Runtime.version(),
        Runtime.getRuntime().availableProcessors(), ManagementFactory.getOperatingSystemMXBean().getSystemLoadAverage());
    System.out.println("| slice | CPU µs per input record, median [quartiles] | output bytes per input record (predictions, settled, rejects; values only) |");
    System.out.println("|---|---|---|");
    System.out.printf(Locale.ROOT, "| step alone (`none`) | %s | – |%n", q(perRecord[0], 1e-3));
    for (int m = 1; m < MODES.length; m++) {
      System.out.printf(Locale.ROOT, "| encoding `%s` (slice − `none` of its round) | %s | %.1f |%n", MODES[m], q(perRecord[m], 1e-3),
          outBytes[m] / (double) lines.size());
    }
    System.out.println();
    System.out.printf(Locale.ROOT, "| ratio within rounds | median [quartiles] |%n|---|---|%n");
    System.out.printf(Locale.ROOT, "| json2 / json (A/A) | %s |%n", q(aa, 1));
    System.out.printf(Locale.ROOT, "| avro / json | %s |%n", q(ba, 1));
    if (sink[0] == 42) {
      System.out.println(); // keeps the outputs alive
    }
  }

  /** One fresh step over every line; returns the bytes the mode's encoder wrote. */
  private static long slice(PipelineConfig cfg, List<byte[]> lines, int mode, long[] keep) {
    PipelineStep step = new PipelineStep(cfg);
    OutputEncoder enc = mode == 0 ? null : mode == 2 ? OutputAvro.of(cfg) : new OutputEncoder.Json(OutputJson.of(cfg));
    long[] bytes = new long[1];
    long offset = 0;
    for (byte[] l : lines) {
      long off = ++offset;
      step.process(l, 0, l.length, 0L, 0, off, new PipelineStep.Sink() {
        @Override public void prediction(Prediction p, EventRecord r) {
          if (enc != null) bytes[0] += enc.prediction(p, r).length;
        }

        @Override public void reject(RejectReason reason, String detail) {
          if (enc != null) bytes[0] += enc.reject(reason, detail, 0, off, l, 0, l.length).length;
        }

        @Override public void snapshotDue() { }

        @Override public void settled(SettledForecast s, EventRecord r) {
          if (enc != null) bytes[0] += enc.settled(s, r).length;
        }
      });
    }
    keep[0] += bytes[0];
    return bytes[0];
  }

  private static String q(double[] v, double scale) {
    double[] s = v.clone();
    Arrays.sort(s);
    return String.format(Locale.ROOT, "%.3f [%.3f, %.3f]", at(s, 0.5) * scale, at(s, 0.25) * scale, at(s, 0.75) * scale);
  }

  private static double at(double[] sorted, double f) {
    double i = f * (sorted.length - 1);
    int lo = (int) Math.floor(i);
    int hi = Math.min(sorted.length - 1, lo + 1);
    return sorted[lo] + (i - lo) * (sorted[hi] - sorted[lo]);
  }

  private static int intArg(String[] a, String name, int def) {
    for (int i = 0; i + 1 < a.length; i++) {
      if (a[i].equals(name)) return Integer.parseInt(a[i + 1]);
    }
    return def;
  }
}
