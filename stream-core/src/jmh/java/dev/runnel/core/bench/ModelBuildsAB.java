package dev.runnel.core.bench;

import java.lang.invoke.MethodHandle;
import java.lang.invoke.MethodHandles;
import java.lang.reflect.Constructor;
import java.lang.reflect.Method;
import java.net.URL;
import java.net.URLClassLoader;
import java.nio.file.Path;
import java.time.Instant;
import java.util.Locale;

/**
 * Paired A/B of {@code RlsModel.update} between two builds, in one JVM: each build's classes are
 * loaded by a class loader of their own (so each is compiled and profiled apart), and the two
 * run in alternating slices of 0.5 s of thread CPU time, the order flipped every slice. The
 * result is the median over slices of B's rate divided by A's rate in the same pair, with the
 * quartiles: on a shared machine that ratio is far steadier than two separate runs (an A/A run
 * is the check of that). Dense rows as in {@link RlsKernelBenchmark}, {@code lambda} 0.999, prior
 * variance 100, the four-argument update (the pipeline's call).
 *
 * <pre>{@code
 * git worktree add /tmp/base <commit> && (cd /tmp/base && mvn -o -q -pl stream-core -am compile)
 * mvn -o -q -pl stream-core compile && mvn -o -q -Pbench -pl stream-core package -DskipTests
 * java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.ModelBuildsAB \
 *     --a /tmp/base/stream-core/target/classes --b stream-core/target/classes --p 64 --guard false
 * }</pre>
 * Options: {@code --a PATH}, {@code --b PATH} (class folders or jars holding
 * {@code dev.runnel.core.model}), {@code --p N} (64), {@code --guard true|false} (false),
 * {@code --slices N} (16), {@code --append FILE} (also append the result line to FILE).
 */
public final class ModelBuildsAB {

  private ModelBuildsAB() { }

  private static final int N = 1024;

  public static void main(String[] args) throws Throwable {
    String a = null;
    String b = null;
    int p = 64;
    boolean guard = false;
    int slices = 16;
    Path append = null;
    for (int i = 0; i < args.length; i++) {
      switch (args[i]) {
        case "--a" -> a = args[++i];
        case "--b" -> b = args[++i];
        case "--p" -> p = Integer.parseInt(args[++i]);
        case "--guard" -> guard = Boolean.parseBoolean(args[++i]);
        case "--slices" -> slices = Integer.parseInt(args[++i]);
        case "--append" -> append = Path.of(args[++i]);
        default -> throw new IllegalArgumentException("unknown option " + args[i]
            + "; allowed: --a PATH, --b PATH, --p N, --guard true|false, --slices N, --append FILE");
      }
    }
    if (a == null || b == null) {
      throw new IllegalArgumentException("--a PATH and --b PATH are required (class folders or jars of the two builds)");
    }
    double[] ys = new double[N];
    double[][] rows = BenchData.denseRows(p, N, 7, ys);
    Runnable[] run = {driver(a, p, guard, rows, ys), driver(b, p, guard, rows, ys)};
    PairedSlices.Result r = PairedSlices.measure(run, 1000, 3000, slices);
    String line = String.format(Locale.ROOT,
        "%s p=%d guard=%b slices=%d: A median %,.0f updates/s, B median %,.0f; B/A paired median %.3f [quartiles %.3f, %.3f] (A=%s, B=%s)",
        Instant.now(), p, guard, slices, r.medianA(), r.medianB(), r.medianRatio(),
        r.lowerQuartileRatio(), r.upperQuartileRatio(), a, b);
    PairedSlices.report(line, append);
  }

  /** 1,000 updates of a model of one build per call. */
  private static Runnable driver(String path, int p, boolean guard, double[][] rows, double[] ys) throws Exception {
    ClassLoader cl = new URLClassLoader(new URL[] {Path.of(path).toUri().toURL()}, null);
    Class<?> settings = cl.loadClass("dev.runnel.core.model.ModelSettings");
    Object s = settings.getMethod("defaults").invoke(null);
    s = settings.getMethod("withPriorVariance", double.class).invoke(s, 100.0);
    s = settings.getMethod("withWindupGuard", boolean.class).invoke(s, guard);
    Class<?> model = cl.loadClass("dev.runnel.core.model.RlsModel");
    Constructor<?> make = model.getConstructor(int.class, settings);
    Object m = make.newInstance(p, s);
    Method update = model.getMethod("update", double[].class, double.class, double.class, double[].class);
    MethodHandle h = MethodHandles.publicLookup().unreflect(update).bindTo(m);
    double[] out = new double[2];
    return () -> {
      try {
        for (int k = 0; k < 1000; k++) {
          int q = k & (N - 1);
          boolean ok = (boolean) h.invokeExact(rows[q], ys[q], 0.999, out);
          if (!ok) {
            throw new IllegalStateException("update refused at row " + q);
          }
        }
      } catch (RuntimeException e) {
        throw e;
      } catch (Throwable e) {
        throw new IllegalStateException(e);
      }
    };
  }

}
