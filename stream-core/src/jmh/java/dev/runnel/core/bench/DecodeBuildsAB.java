package dev.runnel.core.bench;

import java.lang.reflect.Method;
import java.net.URL;
import java.net.URLClassLoader;
import java.nio.file.Path;
import java.util.List;
import java.util.Locale;
import java.util.Optional;

/**
 * Paired A/B of {@code JsonRecordDecoder.decode} between two builds in one JVM, as
 * {@link ModelBuildsAB} does for the model: each build's benchmarks jar (its own stream-core and
 * Jackson) in a class loader of its own, the two decoding the demo sample (the lines of
 * {@link DecodeBenchmark}) in alternating slices of 0.5 s of thread CPU time, order flipped every
 * slice. Prints the median of B's rate over A's in the same pair, with quartiles. Run from the
 * repository root.
 *
 * <pre>{@code
 * java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.DecodeBuildsAB --a OLD/benchmarks.jar --b stream-core/target/benchmarks.jar
 * }</pre>
 * Options: {@code --a JAR}, {@code --b JAR}, {@code --slices N} (16).
 */
public final class DecodeBuildsAB {

  private DecodeBuildsAB() { }

  public static void main(String[] args) throws Exception {
    String a = null;
    String b = null;
    int slices = 16;
    for (int i = 0; i < args.length; i++) {
      switch (args[i]) {
        case "--a" -> a = args[++i];
        case "--b" -> b = args[++i];
        case "--slices" -> slices = Integer.parseInt(args[++i]);
        default -> throw new IllegalArgumentException("unknown option " + args[i] + "; allowed: --a JAR, --b JAR, --slices N");
      }
    }
    if (a == null || b == null) throw new IllegalArgumentException("--a JAR and --b JAR are required (benchmarks jars of the two builds)");
    Runnable[] run = {driver(a), driver(b)};
    PairedSlices.Result r = PairedSlices.measure(run, LINES, 400, slices);
    System.out.println(String.format(Locale.ROOT,
        "decode, demo sample, slices=%d: A median %.1f ns/line, B median %.1f ns/line; B/A rate paired median %.3f [quartiles %.3f, %.3f] (A=%s, B=%s)",
        slices, 1e9 / r.medianA(), 1e9 / r.medianB(), r.medianRatio(), r.lowerQuartileRatio(), r.upperQuartileRatio(), a, b));
  }

  /** Lines decoded per call. */
  private static final int LINES = 1000;

  /** {@link #LINES} decodes of demo lines by one build's decoder per call. */
  private static Runnable driver(String jar) throws Exception {
    ClassLoader cl = new URLClassLoader(new URL[] {Path.of(jar).toUri().toURL()}, ClassLoader.getPlatformClassLoader());
    Class<?> data = cl.loadClass("dev.runnel.core.bench.BenchData");
    Method config = data.getDeclaredMethod("demoConfig");
    config.setAccessible(true);
    Object cfg = config.invoke(null);
    Method records = data.getDeclaredMethod("demoRecords");
    records.setAccessible(true);
    @SuppressWarnings("unchecked")
    byte[][] lines = ((List<byte[]>) records.invoke(null)).toArray(new byte[0][]);
    Object in = cfg.getClass().getMethod("input").invoke(cfg);
    Object schema = in.getClass().getMethod("schema").invoke(in);
    Object limits = in.getClass().getMethod("limits").invoke(in);
    Object et = ((Optional<?>) in.getClass().getMethod("eventTime").invoke(in)).orElseThrow();
    Object field = et.getClass().getMethod("field").invoke(et);
    Object format = et.getClass().getMethod("format").invoke(et);
    Class<?> dec = cl.loadClass("dev.runnel.core.record.JsonRecordDecoder");
    Class<?> rec = cl.loadClass("dev.runnel.core.record.EventRecord");
    Object decoder = dec.getConstructor(schema.getClass(), limits.getClass(), String.class, format.getClass())
        .newInstance(schema, limits, field, format);
    Object record = rec.getConstructor(schema.getClass()).newInstance(schema);
    java.lang.invoke.MethodHandle h = java.lang.invoke.MethodHandles.publicLookup()
        .unreflect(dec.getMethod("decode", byte[].class, int.class, int.class, rec)).bindTo(decoder);
    h = h.asType(java.lang.invoke.MethodType.methodType(Object.class, byte[].class, int.class, int.class, Object.class));
    java.lang.invoke.MethodHandle call = h;
    int[] at = {0};
    return () -> {
      try {
        int i = at[0];
        for (int k = 0; k < LINES; k++) {
          byte[] l = lines[i];
          if (++i == lines.length) i = 0;
          Object r = call.invokeExact(l, 0, l.length, record);
          if (r != null && k < 0) throw new IllegalStateException();
        }
        at[0] = i;
      } catch (RuntimeException e) {
        throw e;
      } catch (Throwable e) {
        throw new IllegalStateException(e);
      }
    };
  }
}
