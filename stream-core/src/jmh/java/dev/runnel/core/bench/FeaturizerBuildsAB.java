package dev.runnel.core.bench;

import java.net.URL;
import java.net.URLClassLoader;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardOpenOption;
import java.time.Instant;
import java.util.Locale;

/**
 * Paired A/B of the featurizer alone ({@code Featurizer.check}, then {@code learnAndEncode} for a
 * record with the target or {@code encode} without), between two builds of stream-core in one JVM,
 * as {@link PipelineBuildsAB} does for the whole step: each build's {@code dev.runnel.core} classes
 * in a child-first class loader of their own, alternating slices of 0.5 s of thread CPU time with
 * the order flipped every slice; the result is the median over slices of B's rate divided by A's
 * in the same pair, with the quartiles. The loop is {@link FeaturizerLoop}, of which each build's
 * loader defines its own copy: each build runs its own compiled loop with direct calls into its own
 * featurizer, so neither shares a call site (or its profile) with the other. The records are
 * decoded once, before timing, by each build's own decoder (the decoder is not measured); the feed
 * is cycled and the stream clock is the record's own time, as in {@link DecodeBenchmark}. No model
 * listens.
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
    PairedSlices.Result r = PairedSlices.measure(run, 1000, 300, slices);
    String line = String.format(Locale.ROOT,
        "%s featurizer %s slices=%d: A median %,.0f records/s, B median %,.0f; B/A paired median %.3f [quartiles %.3f, %.3f] (A=%s, B=%s)",
        Instant.now(), label, slices, r.medianA(), r.medianB(), r.medianRatio(),
        r.lowerQuartileRatio(), r.upperQuartileRatio(), a, b);
    System.out.println(line);
    System.out.println("rows written: A " + counts(run[0]) + "; B " + counts(run[1]));
    if (append != null) {
      Files.writeString(append, line + "\n", StandardCharsets.UTF_8, StandardOpenOption.CREATE, StandardOpenOption.APPEND);
    }
  }

  /** Loads {@code dev.runnel.core} from its own path first, everything else from the parent. */
  private static final class ChildFirst extends URLClassLoader {
    ChildFirst(URL url, ClassLoader parent) { super(new URL[] {url}, parent); }

    /** Defines a copy of {@code c} (a class of this jar) in this loader, so it links to this loader's classes. */
    Class<?> define(Class<?> c) throws java.io.IOException {
      String resource = c.getName().replace('.', '/') + ".class";
      try (java.io.InputStream in = c.getClassLoader().getResourceAsStream(resource)) {
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

  /** A {@link FeaturizerLoop} defined in the build's own class loader, calling that build's featurizer. */
  private static Runnable driver(String path, String yaml, byte[][] lines) throws Exception {
    ChildFirst cl = new ChildFirst(Path.of(path).toUri().toURL(), FeaturizerBuildsAB.class.getClassLoader());
    Class<?> loop = cl.define(FeaturizerLoop.class);
    return (Runnable) loop.getConstructor(String.class, byte[][].class).newInstance(yaml, lines);
  }

  private static String counts(Runnable loop) throws Exception {
    Class<?> c = loop.getClass();
    return String.format(Locale.ROOT, "%,d trained, %,d scored, checksum %.6g",
        c.getField("trained").getLong(loop), c.getField("scored").getLong(loop), c.getField("sum").getDouble(loop));
  }
}
