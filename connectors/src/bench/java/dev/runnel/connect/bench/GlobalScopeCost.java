package dev.runnel.connect.bench;

import dev.runnel.connect.kafka.Emitter;
import dev.runnel.connect.pipeline.PipelineProcessor;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.model.GlobalModel;
import dev.runnel.core.model.ModelSettings;
import dev.runnel.core.model.ModelShare;
import dev.runnel.demo.QuillmarshGenerator;
import dev.runnel.demo.Settings;
import java.io.IOException;
import java.io.InputStream;
import java.io.UncheckedIOException;
import java.lang.management.ManagementFactory;
import java.lang.management.ThreadMXBean;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import java.util.Random;
import org.apache.kafka.common.TopicPartition;

/**
 * What {@code model.scope: global} costs one instance on 4 input partitions: the demo configuration
 * ({@code corrections: learn_as_new}, because {@code replace} cannot be shared) through 4
 * {@link PipelineProcessor}s (what {@code run} runs per partition, outputs encoded), the demo feed
 * split by hub ({@code QM-01} to {@code QM-12}, hub number mod 4), with {@code model.scope:
 * partition} (A) against {@code global} (B: every share handed to the other three processors'
 * {@code foldShare} right away, through its bytes, as the runner does after the commit). Paired in
 * one JVM: alternating slices of 2 s of this thread's CPU time, each slice's B/A rate ratio kept
 * (as {@code PairedSlices} in stream-core's benchmarks), with an A/A run first for the spread. Kafka
 * itself is left out: its work per record is the same for both; the shares add one record per
 * partition per period (the bytes are printed).
 *
 * <p>Also prints the bytes of one share at {@code p} = 32 and 128 (demo-like column names) and the
 * bytes written to {@code <name>.shares} per period with 4 partitions.
 *
 * <pre>{@code
 * mvn -o -q -pl connectors -am package -DskipTests
 * java -Xmx1g -cp 'connectors/target/test-classes:connectors/target/runnel.jar:connectors/target/lib/*' \
 *     dev.runnel.connect.bench.GlobalScopeCost --days 400 --slices 12
 * }</pre>
 */
public final class GlobalScopeCost {

  private GlobalScopeCost() { }

  static final int PARTITIONS = 4;
  static final int CALL = 1024;
  static final long SLICE_CPU_NANOS = 2_000_000_000L;

  static PipelineConfig config(String scope, long shareEvery) throws IOException {
    String yaml;
    try (InputStream in = GlobalScopeCost.class.getResourceAsStream("/dev/runnel/demo/quillmarsh.yaml")) {
      yaml = new String(in.readAllBytes(), StandardCharsets.UTF_8);
    }
    yaml = yaml.replace("corrections: replace", "corrections: learn_as_new")
        .replace("  noise_half_life_records: 500\n", "  noise_half_life_records: 500\n  scope: " + scope + "\n"
            + (scope.equals("global") ? "  share_every_records: " + shareEvery + "\n" : ""));
    return ConfigLoader.parse(yaml, "quillmarsh (" + scope + ")");
  }

  /** Emits nothing; keeps the shares. */
  static final class Sink implements Emitter {
    final List<byte[]> shares = new ArrayList<>();
    long bytes;
    @Override public void prediction(byte[] key, byte[] value) { bytes += value.length; }
    @Override public void snapshot(byte[] key, byte[] value) { bytes += value.length; }
    @Override public void reject(byte[] key, byte[] value) { bytes += value.length; }
    @Override public void settled(byte[] key, byte[] value) { bytes += value.length; }
    @Override public void share(byte[] key, byte[] value) { shares.add(value); }
  }

  /** One instance's 4 processors walking the feed; starts again from fresh processors at its end. */
  static final class Instance implements Runnable {
    final PipelineConfig cfg;
    final byte[][] lines;
    final int[] part;
    final boolean global;
    PipelineProcessor[] procs;
    final long[] offsets = new long[PARTITIONS];
    final long[] shareOffsets = new long[PARTITIONS];
    final Sink sink = new Sink();
    int next;
    long sharesMade;
    long shareBytes;

    Instance(PipelineConfig cfg, byte[][] lines, int[] part) {
      this.cfg = cfg;
      this.lines = lines;
      this.part = part;
      this.global = cfg.model().scope() == dev.runnel.core.config.ModelScope.GLOBAL;
      fresh();
    }

    void fresh() {
      procs = new PipelineProcessor[PARTITIONS];
      for (int p = 0; p < PARTITIONS; p++) {
        procs[p] = new PipelineProcessor(cfg, new TopicPartition("in", p));
        procs[p].restore(null);
      }
      Arrays.fill(offsets, 0);
      Arrays.fill(shareOffsets, 0);
      next = 0;
    }

    @Override public void run() {
      for (int i = 0; i < CALL; i++) {
        if (next == lines.length) {
          fresh();
        }
        int p = part[next];
        byte[] v = lines[next++];
        procs[p].process(offsets[p]++, 0L, null, v, sink);
        if (global && !sink.shares.isEmpty()) {
          for (byte[] s : sink.shares) {
            sharesMade++;
            shareBytes += s.length;
            long off = shareOffsets[p]++;
            for (int q = 0; q < PARTITIONS; q++) {
              if (!procs[q].foldShare(p, off, s)) {
                throw new IllegalStateException("a share waited: partition " + q + " has no clock yet");
              }
            }
          }
          sink.shares.clear();
        }
      }
    }
  }

  /** Paired slices: sorted ratios B/A, and the median rates. */
  static double[] paired(Runnable a, Runnable b, int warmups, int slices) {
    for (int w = 0; w < warmups; w++) {
      a.run();
      b.run();
    }
    ThreadMXBean threads = ManagementFactory.getThreadMXBean();
    double[][] rate = new double[2][slices];
    double[] ratio = new double[slices];
    Runnable[] run = {a, b};
    for (int s = 0; s < slices; s++) {
      for (int k = 0; k < 2; k++) {
        int v = s % 2 == 0 ? k : 1 - k;
        long c0 = threads.getCurrentThreadCpuTime();
        long done = 0;
        while (threads.getCurrentThreadCpuTime() - c0 < SLICE_CPU_NANOS) {
          run[v].run();
          done += CALL;
        }
        rate[v][s] = done / ((threads.getCurrentThreadCpuTime() - c0) * 1e-9);
      }
      ratio[s] = rate[1][s] / rate[0][s];
    }
    Arrays.sort(rate[0]);
    Arrays.sort(rate[1]);
    Arrays.sort(ratio);
    return new double[] {rate[0][slices / 2], rate[1][slices / 2], ratio[slices / 2], ratio[slices / 4], ratio[(3 * slices) / 4]};
  }

  /** The bytes of one share of a model with {@code p} demo-like columns (names of 8 to 14 characters). */
  static int shareBytes(int p) {
    String[] initial = new String[8];
    initial[0] = "constant";
    for (int j = 1; j < 8; j++) {
      initial[j] = "hour_of_day_" + j;
    }
    GlobalModel g = new GlobalModel(0, initial, ModelSettings.defaults().withPriorVariance(100), 3.456e8);
    for (int j = 8; j < p; j++) {
      g.columnAdded(j, String.format(Locale.ROOT, "hub=QM-%03d", j), true);
    }
    Random rnd = new Random(1);
    double[] x = new double[p];
    for (int n = 0; n < 4 * p; n++) {
      Arrays.fill(x, 0.0);
      x[0] = 1;
      for (int j = 1; j < 8; j++) {
        x[j] = rnd.nextGaussian();
      }
      x[8 + rnd.nextInt(p - 8)] = 1;
      g.update(x, rnd.nextGaussian(), 1.0, null);
    }
    ModelShare s = g.share(0);
    return s.toBytes().length;
  }

  public static void main(String[] args) throws IOException {
    int days = 400;
    int slices = 12;
    long shareEvery = 1000;
    for (int i = 0; i + 1 < args.length; i += 2) {
      switch (args[i]) {
        case "--days" -> days = Integer.parseInt(args[i + 1]);
        case "--slices" -> slices = Integer.parseInt(args[i + 1]);
        case "--share-every-records" -> shareEvery = Long.parseLong(args[i + 1]);
        default -> throw new IllegalArgumentException("unknown option " + args[i]
            + "; use --days N, --slices N, --share-every-records N");
      }
    }
    List<String> text = new QuillmarshGenerator(Settings.defaults().withDays(days)).lines().toList();
    byte[][] lines = new byte[text.size()][];
    int[] part = new int[text.size()];
    for (int i = 0; i < lines.length; i++) {
      String l = text.get(i);
      lines[i] = l.getBytes(StandardCharsets.UTF_8);
      int h = l.indexOf("\"hub\":\"QM-");
      part[i] = h < 0 ? 0 : (Integer.parseInt(l.substring(h + 10, h + 12)) - 1) % PARTITIONS;
    }
    PipelineConfig partition = config("partition", shareEvery);
    PipelineConfig global = config("global", shareEvery);
    System.out.printf(Locale.ROOT, "feed: %,d demo records (%d days), 4 partitions by hub; %d slices of %.0f s CPU per side%n",
        lines.length, days, slices, SLICE_CPU_NANOS * 1e-9);
    double[] aa = paired(new Instance(partition, lines, part), new Instance(partition, lines, part), 20, slices);
    System.out.printf(Locale.ROOT, "A/A (partition vs partition): %.0f vs %.0f records/s, ratio %.3f [%.3f, %.3f]%n",
        aa[0], aa[1], aa[2], aa[3], aa[4]);
    Instance b = new Instance(global, lines, part);
    double[] ab = paired(new Instance(partition, lines, part), b, 20, slices);
    System.out.printf(Locale.ROOT, "A/B (partition vs global, share_every_records %d): %.0f vs %.0f records/s, ratio %.3f [%.3f, %.3f]%n",
        shareEvery, ab[0], ab[1], ab[2], ab[3], ab[4]);
    System.out.printf(Locale.ROOT, "global: %d shares made, %.0f bytes each on average (demo, local p %d, view p %d)%n",
        b.sharesMade, b.sharesMade == 0 ? Double.NaN : (double) b.shareBytes / b.sharesMade,
        b.procs[0].step().featurizer().dimension(), b.procs[0].step().globalModel().view().dimension());
    for (int p : new int[] {32, 128}) {
      int bytes = shareBytes(p);
      System.out.printf(Locale.ROOT, "p %d: one share %,d bytes; per period with 4 partitions %,d bytes written to <name>.shares"
          + " and read by each instance%n", p, bytes, 4 * bytes);
    }
  }
}
