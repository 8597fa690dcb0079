package dev.runnel.core.bench;

import java.io.IOException;
import java.io.InputStream;
import java.lang.management.ManagementFactory;
import java.lang.management.ThreadMXBean;
import java.net.URL;
import java.net.URLClassLoader;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardOpenOption;
import java.util.Arrays;

/**
 * The measurement the paired A/B tools share ({@link ModelBuildsAB}, {@link PipelineBuildsAB},
 * {@link DecodeBuildsAB}, {@link FeaturizerBuildsAB}): two builds' workloads run in one JVM, warmed
 * up together, then timed in alternating slices of {@value #SLICE_CPU_NANOS} ns of this thread's
 * CPU time (A first in even slices, B first in odd ones), and each slice's B/A rate ratio kept. The
 * median of the paired ratios is far steadier on a shared machine than two separate runs. Also
 * what the tools that load two builds of stream-core share: their common options ({@link Options}),
 * the child-first class loader ({@link ChildFirst}) and the result line ({@link #report}).
 */
final class PairedSlices {

  /** Thread CPU time per build per slice. */
  static final long SLICE_CPU_NANOS = 500_000_000L;

  /** Sorted rates of A and B and sorted paired ratios B/A, one per slice. */
  record Result(double[] rateA, double[] rateB, double[] ratio) {
    int slices() { return ratio.length; }

    double medianA() { return rateA[slices() / 2]; }

    double medianB() { return rateB[slices() / 2]; }

    double medianRatio() { return ratio[slices() / 2]; }

    double lowerQuartileRatio() { return ratio[slices() / 4]; }

    double upperQuartileRatio() { return ratio[(3 * slices()) / 4]; }
  }

  private PairedSlices() { }

  /**
   * @param run the two workloads, A then B; each call does {@code unitsPerCall} units of work
   * @param unitsPerCall records (or lines, or updates) one call handles
   * @param warmups calls of each workload before timing
   * @param slices timed slices
   */
  static Result measure(Runnable[] run, int unitsPerCall, int warmups, int slices) {
    for (int w = 0; w < warmups; w++) {
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
        while (threads.getCurrentThreadCpuTime() - c0 < SLICE_CPU_NANOS) {
          run[v].run();
          done += unitsPerCall;
        }
        rate[v][s] = done / ((threads.getCurrentThreadCpuTime() - c0) * 1e-9);
      }
      ratio[s] = rate[1][s] / rate[0][s];
    }
    Arrays.sort(rate[0]);
    Arrays.sort(rate[1]);
    Arrays.sort(ratio);
    return new Result(rate[0], rate[1], ratio);
  }

  /**
   * Prints the result line, and appends it to {@code append} too when that is given.
   *
   * @param append a file to append the line to, or null
   */
  static void report(String line, Path append) throws IOException {
    System.out.println(line);
    if (append != null) {
      Files.writeString(append, line + "\n", StandardCharsets.UTF_8, StandardOpenOption.CREATE, StandardOpenOption.APPEND);
    }
  }

  /**
   * The options of the tools that run the demo through two builds: {@code --a PATH}, {@code --b PATH}
   * (required), {@code --config FILE} (the demo configuration), {@code --records FILE} (the demo
   * sample), {@code --slices N} (16), {@code --label TEXT} ("demo"), {@code --append FILE}.
   */
  static final class Options {
    /** What {@link #unknown} lists as allowed, before a tool's own options. */
    static final String ALLOWED = "--a PATH, --b PATH, --config FILE, --records FILE, --slices N, --label TEXT, --append FILE";

    String a;
    String b;
    Path config = BenchData.root().resolve("demo-data/src/main/resources/dev/runnel/demo/quillmarsh.yaml");
    Path records = BenchData.root().resolve("demo-data/samples/quillmarsh-small.jsonl");
    int slices = 16;
    String label = "demo";
    Path append;

    /**
     * Takes {@code args[i]} (and its value) when it is one of these options.
     *
     * @return the index of the last argument taken, or -1 when {@code args[i]} is not one of these
     */
    int take(String[] args, int i) {
      switch (args[i]) {
        case "--a" -> a = args[++i];
        case "--b" -> b = args[++i];
        case "--config" -> config = Path.of(args[++i]);
        case "--records" -> records = Path.of(args[++i]);
        case "--slices" -> slices = Integer.parseInt(args[++i]);
        case "--label" -> label = args[++i];
        case "--append" -> append = Path.of(args[++i]);
        default -> {
          return -1;
        }
      }
      return i;
    }

    /** The error for an option neither these nor the tool's own ({@code more}, listed after these) know. */
    static IllegalArgumentException unknown(String option, String more) {
      return new IllegalArgumentException("unknown option " + option + "; allowed: " + ALLOWED + more);
    }

    /** Fails unless both builds were given. */
    void requireBuilds() {
      if (a == null || b == null) {
        throw new IllegalArgumentException("--a PATH and --b PATH are required (class folders or jars of the two builds)");
      }
    }

    /** The records file's non-blank lines as UTF-8 bytes. */
    byte[][] recordLines() throws IOException {
      return Files.readAllLines(records).stream().filter(l -> !l.isBlank())
          .map(l -> l.getBytes(StandardCharsets.UTF_8)).toArray(byte[][]::new);
    }
  }

  /** Loads {@code dev.runnel.core} (but the benchmarks) from its own path first, everything else from the parent. */
  static final class ChildFirst extends URLClassLoader {
    ChildFirst(String path, ClassLoader parent) throws IOException {
      super(new URL[] {Path.of(path).toUri().toURL()}, parent);
    }

    /** Defines a copy of {@code c} (a class of this jar) in this loader, so it links to this loader's classes. */
    Class<?> define(Class<?> c) throws IOException {
      String resource = c.getName().replace('.', '/') + ".class";
      try (InputStream in = c.getClassLoader().getResourceAsStream(resource)) {
        byte[] b = in.readAllBytes();
        return defineClass(c.getName(), b, 0, b.length);
      }
    }

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
}
