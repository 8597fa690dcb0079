package dev.runnel.core.bench;

import dev.runnel.core.model.GlobalModel;
import dev.runnel.core.model.ModelSettings;
import dev.runnel.core.model.ModelShare;
import dev.runnel.core.model.RlsModel;
import java.util.Locale;
import java.util.Random;

/**
 * What one model across partitions costs per own record: {@code GlobalModel.update} (the view's
 * update plus the pending share's) against {@code RlsModel.update} on the same rows, paired in one
 * JVM ({@link PairedSlices}). Demo-like rows: the constant, {@code numeric} dense columns and
 * {@code p - 1 - numeric} one-hot levels, one level per row (levels first in the factor, as the
 * featurizer adds them), {@code lambda} 0.9999, prior variance 100, the windup guard on. With
 * {@code --foreign L} the view also holds {@code L} levels only other partitions have (folded
 * from a share), so its factor is longer than the pending share's. Also prints the bytes of one
 * share and the time to make one and fold it.
 *
 * <pre>{@code
 * mvn -o -q -Pbench -pl stream-core package -DskipTests
 * java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.GlobalModelCost --p 32 --foreign 24
 * }</pre>
 */
public final class GlobalModelCost {

  private GlobalModelCost() { }

  private static final int N = 1024;

  public static void main(String[] args) {
    int p = 32;
    int numeric = 8;
    int foreign = 0;
    int slices = 12;
    for (int i = 0; i + 1 < args.length; i += 2) {
      switch (args[i]) {
        case "--p" -> p = Integer.parseInt(args[i + 1]);
        case "--numeric" -> numeric = Integer.parseInt(args[i + 1]);
        case "--foreign" -> foreign = Integer.parseInt(args[i + 1]);
        case "--slices" -> slices = Integer.parseInt(args[i + 1]);
        default -> throw new IllegalArgumentException("unknown option " + args[i]);
      }
    }
    ModelSettings s = ModelSettings.defaults().withPriorVariance(100);
    String[] initial = new String[1 + numeric];
    initial[0] = "constant";
    for (int j = 1; j <= numeric; j++) {
      initial[j] = "x" + j;
    }
    int levels = p - 1 - numeric;
    RlsModel plain = new RlsModel(1 + numeric, s);
    GlobalModel global = new GlobalModel(0, initial, s, 1e9);
    for (int l = 0; l < levels; l++) {
      plain.columnAdded(1 + numeric + l, "lvl" + l, true);
      global.columnAdded(1 + numeric + l, "lvl" + l, true);
    }
    if (foreign > 0) {
      GlobalModel other = new GlobalModel(1, initial, s, 1e9);
      for (int l = 0; l < foreign; l++) {
        other.columnAdded(1 + numeric + l, "other" + l, true);
      }
      double[] x = new double[1 + numeric + foreign];
      x[0] = 1;
      x[1 + numeric] = 1;
      other.update(x, 1.0, 1.0, null);
      global.fold(other.share(0), 0);
    }
    Random rnd = new Random(7);
    double[][] rows = new double[N][p];
    double[] ys = new double[N];
    for (int n = 0; n < N; n++) {
      rows[n][0] = 1;
      for (int j = 1; j <= numeric; j++) {
        rows[n][j] = rnd.nextGaussian();
      }
      rows[n][1 + numeric + rnd.nextInt(Math.max(1, levels))] = levels > 0 ? 1 : 0;
      ys[n] = rnd.nextGaussian();
    }
    double[] out = new double[2];
    Runnable a = () -> {
      for (int n = 0; n < N; n++) {
        plain.update(rows[n], ys[n], 0.9999, out);
      }
    };
    Runnable b = () -> {
      for (int n = 0; n < N; n++) {
        global.update(rows[n], ys[n], 0.9999, out);
      }
    };
    PairedSlices.Result r = PairedSlices.measure(new Runnable[] {a, b}, N, 40, slices);
    long t0 = System.nanoTime();
    ModelShare share = global.share(0);
    long t1 = System.nanoTime();
    GlobalModel receiver = new GlobalModel(2, initial, s, 1e9);
    receiver.fold(share, 0);
    long t2 = System.nanoTime();
    System.out.println(String.format(Locale.ROOT,
        "p %d (numeric %d, levels %d, foreign %d): RlsModel.update %.0f/s, GlobalModel.update %.0f/s, ratio %.3f"
            + " [%.3f, %.3f]; share %d bytes, made in %.2f ms, folded in %.2f ms (one cold run each)",
        p, numeric, levels, foreign, r.medianA(), r.medianB(), r.medianRatio(), r.lowerQuartileRatio(),
        r.upperQuartileRatio(), share.toBytes().length, (t1 - t0) * 1e-6, (t2 - t1) * 1e-6));
  }
}
