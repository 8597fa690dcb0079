package dev.runnel.core.bench;

import java.lang.invoke.MethodHandle;
import java.lang.invoke.MethodHandles;
import java.lang.invoke.MethodType;
import java.lang.management.ManagementFactory;
import java.lang.management.ThreadMXBean;
import java.lang.reflect.Constructor;
import java.net.URL;
import java.net.URLClassLoader;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardOpenOption;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;

/**
 * Paired A/B of the featurizer alone ({@code Featurizer.check}, then {@code learnAndEncode} for a
 * record with the target or {@code encode} without), between two builds of stream-core in one JVM,
 * as {@link PipelineBuildsAB} does for the whole step: each build's {@code dev.runnel.core} classes
 * in a child-first class loader of their own, alternating slices of 0.5 s of thread CPU time with
 * the order flipped every slice; the result is the median over slices of B's rate divided by A's
 * in the same pair, with the quartiles. The records are decoded once, before timing, by each
 * build's own decoder (the decoder is not measured); the feed is cycled and the stream clock is the
 * record's own time, as in {@link DecodeBenchmark}. No model listens.
 *
 * <pre>{@code
 * java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.FeaturizerBuildsAB \
 *     --a /tmp/base/stream-core/target/classes --b stream-core/target/classes
 * }</pre>
 * Options: {@code --a PATH}, {@code --b PATH}, {@code --config FILE} (the demo configuration),
 * {@code --records FILE} (the demo sample), {@code --slices N} (16), {@code --label TEXT},
 * {@code --append FILE}.
 */
public final class FeaturizerBuildsAB {

  private FeaturizerBuildsAB() { }

  public static void main(String[] args) throws Throwable {
    String a = null;
    String b = null;
    Path config = BenchData.root().resolve("demo-data/src/main/resources/dev/runnel/demo/quillmarsh.yaml");
    Path records = BenchData.root().resolve("demo-data/samples/quillmarsh-small.jsonl");
    int slices = 16;
    String label = "demo";
    Path append = null;
    for (int i = 0; i < args.length; i++) {
      switch (args[i]) {
        case "--a" -> a = args[++i];
        case "--b" -> b = args[++i];
        case "--config" -> config = Path.of(args[++i]);
        case "--records" -> records = Path.of(args[++i]);
        case "--slices" -> slices = Integer.parseInt(args[++i]);
        case "--label" -> label = args[++i];
        case "--append" -> append = Path.of(args[++i]);
        default -> throw new IllegalArgumentException("unknown option " + args[i]
            + "; allowed: --a PATH, --b PATH, --config FILE, --records FILE, --slices N, --label TEXT, --append FILE");
      }
    }
    if (a == null || b == null) {
      throw new IllegalArgumentException("--a PATH and --b PATH are required (class folders or jars of the two builds)");
    }
    String yaml = Files.readString(config);
    byte[][] recs = Files.readAllLines(records).stream().filter(l -> !l.isBlank())
        .map(l -> l.getBytes(StandardCharsets.UTF_8)).toArray(byte[][]::new);
    Runnable[] run = {driver(a, yaml, recs), driver(b, yaml, recs)};
    for (int w = 0; w < 300; w++) { // warm-up: both compiled, 300,000 records each
      run[0].run();
      run[1].run();
    }
    ThreadMXBean threads = ManagementFactory.getThreadMXBean();
    double[][] rate = new double[2][slices];
    double[] ratio = new double[slices];
    for (int s = 0; s < slices; s++) {
      for (int k = 0; k < 2; k++) {
        int v = s % 2 == 0 ? k : 1 - k;
        long c0 = threads.getCurrentThreadCpuTime();
        long done = 0;
        while (threads.getCurrentThreadCpuTime() - c0 < 500_000_000L) {
          run[v].run();
          done += 1000;
        }
        rate[v][s] = done / ((threads.getCurrentThreadCpuTime() - c0) * 1e-9);
      }
      ratio[s] = rate[1][s] / rate[0][s];
    }
    Arrays.sort(rate[0]);
    Arrays.sort(rate[1]);
    Arrays.sort(ratio);
    String line = String.format(Locale.ROOT,
        "%s featurizer %s slices=%d: A median %,.0f records/s, B median %,.0f; B/A paired median %.3f [quartiles %.3f, %.3f] (A=%s, B=%s)",
        Instant.now(), label, slices, rate[0][slices / 2], rate[1][slices / 2], ratio[slices / 2],
        ratio[slices / 4], ratio[(3 * slices) / 4], a, b);
    System.out.println(line);
    System.out.printf(Locale.ROOT, "rows written (both builds): %,d trained, %,d scored; checksum %.6g%n", CALLS[0], CALLS[1], SUM[0]);
    if (append != null) {
      Files.writeString(append, line + "\n", StandardCharsets.UTF_8, StandardOpenOption.CREATE, StandardOpenOption.APPEND);
    }
  }

  /** Rows written, both builds together: trained, scored (printed as a check). */
  static final long[] CALLS = new long[2];
  /** A sum of the rows' first entries, so that no build's work is dead. */
  static final double[] SUM = new double[1];

  /** Loads {@code dev.runnel.core} from its own path first, everything else from the parent. */
  private static final class ChildFirst extends URLClassLoader {
    ChildFirst(URL url, ClassLoader parent) { super(new URL[] {url}, parent); }

    @Override protected Class<?> loadClass(String name, boolean resolve) throws ClassNotFoundException {
      if (!name.startsWith("dev.runnel.core.") || name.startsWith("dev.runnel.core.bench.")) {
        return super.loadClass(name, resolve);
      }
      synchronized (getClassLoadingLock(name)) {
        Class<?> c = findLoadedClass(name);
        if (c == null) {
          c = findClass(name);
        }
        if (resolve) {
          resolveClass(c);
        }
        return c;
      }
    }
  }

  private static MethodHandle virtual(Class<?> c, String name, Object receiver, Class<?> ret, Class<?>... params) throws Exception {
    MethodHandle h = MethodHandles.publicLookup().unreflect(c.getMethod(name, params)).bindTo(receiver);
    Class<?>[] erased = params.clone();
    for (int i = 0; i < erased.length; i++) {
      if (!erased[i].isPrimitive() && !erased[i].isArray()) {
        erased[i] = Object.class;
      }
    }
    return h.asType(MethodType.methodType(ret.isPrimitive() ? ret : Object.class, erased));
  }

  /** 1,000 records through a featurizer of one build per call. */
  private static Runnable driver(String path, String yaml, byte[][] lines) throws Throwable {
    ClassLoader cl = new ChildFirst(Path.of(path).toUri().toURL(), FeaturizerBuildsAB.class.getClassLoader());
    Object cfg = cl.loadClass("dev.runnel.core.config.ConfigLoader").getMethod("parse", String.class, String.class).invoke(null, yaml, "ab.yaml");
    Object input = cfg.getClass().getMethod("input").invoke(cfg);
    Object schema = input.getClass().getMethod("schema").invoke(input);
    Object limits = input.getClass().getMethod("limits").invoke(input);
    Object eventTime = ((java.util.Optional<?>) input.getClass().getMethod("eventTime").invoke(input)).orElseThrow();
    Object field = eventTime.getClass().getMethod("field").invoke(eventTime);
    Object format = eventTime.getClass().getMethod("format").invoke(eventTime);
    Class<?> decoderClass = cl.loadClass("dev.runnel.core.record.JsonRecordDecoder");
    Object decoder = null;
    for (Constructor<?> k : decoderClass.getConstructors()) {
      if (k.getParameterCount() == 4) {
        decoder = k.newInstance(schema, limits, field, format);
      }
    }
    Class<?> recordClass = cl.loadClass("dev.runnel.core.record.EventRecord");
    Constructor<?> newRecord = recordClass.getConstructor(schema.getClass());
    MethodHandle decode = virtual(decoderClass, "decode", decoder, Object.class, byte[].class, int.class, int.class, recordClass);
    List<Object> decoded = new ArrayList<>();
    for (byte[] b : lines) {
      Object r = newRecord.newInstance(schema);
      if ((Object) decode.invokeExact(b, 0, b.length, r) == null) {
        decoded.add(r);
      }
    }
    Object[] recs = decoded.toArray();
    Class<?> featurizerClass = cl.loadClass("dev.runnel.core.feature.Featurizer");
    Object f = featurizerClass.getConstructor(cfg.getClass()).newInstance(cfg);
    MethodHandle check = virtual(featurizerClass, "check", f, Object.class, recordClass);
    MethodHandle hasTarget = virtual(featurizerClass, "hasTarget", f, boolean.class, recordClass);
    MethodHandle learn = virtual(featurizerClass, "learnAndEncode", f, void.class, recordClass, long.class, long.class, double[].class);
    MethodHandle encode = virtual(featurizerClass, "encode", f, void.class, recordClass, long.class, double[].class);
    MethodHandle time = MethodHandles.publicLookup().unreflect(recordClass.getMethod("eventTimeMillis"))
        .asType(MethodType.methodType(long.class, Object.class));
    double[] row = new double[(int) featurizerClass.getMethod("maxDimension").invoke(f)];
    int[] i = {0};
    return () -> {
      try {
        double sum = 0;
        for (int k = 0; k < 1000; k++) {
          Object r = recs[i[0]];
          if (++i[0] == recs.length) {
            i[0] = 0;
          }
          if ((Object) check.invokeExact(r) != null) {
            continue;
          }
          long t = (long) time.invokeExact(r);
          if ((boolean) hasTarget.invokeExact(r)) {
            learn.invokeExact(r, t, t, row);
            CALLS[0]++;
          } else {
            encode.invokeExact(r, t, row);
            CALLS[1]++;
          }
          for (int j = 0; j < 8; j++) {
            sum += row[j];
          }
        }
        SUM[0] += sum;
      } catch (RuntimeException e) {
        throw e;
      } catch (Throwable e) {
        throw new IllegalStateException(e);
      }
    };
  }
}
