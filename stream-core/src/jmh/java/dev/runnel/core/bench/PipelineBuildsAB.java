package dev.runnel.core.bench;

import java.lang.reflect.Method;
import java.lang.reflect.Proxy;
import java.nio.file.Files;
import java.time.Instant;
import java.util.List;
import java.util.Locale;

/**
 * Paired A/B of {@code PipelineStep.process} between two builds of stream-core, in one JVM, the
 * way {@link ModelBuildsAB} does it for the model: each build's {@code dev.runnel.core} classes
 * are loaded by a child-first class loader of their own (Jackson and the rest come from this
 * jar), and the two run in alternating slices of 0.5 s of thread CPU time, the order flipped
 * every slice. The result is the median over slices of B's rate divided by A's rate in the same
 * pair, with the quartiles. The feed is cycled (at each wrap the event time steps back, which
 * the step treats as late records); the sink counts callbacks through a proxy, the same cost for
 * both builds.
 *
 * <pre>{@code
 * java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.PipelineBuildsAB \
 *     --a /tmp/base/stream-core/target/classes --b stream-core/target/classes
 * }</pre>
 * Options: {@code --a PATH}, {@code --b PATH} (class folders or jars holding
 * {@code dev.runnel.core}), {@code --config FILE} (the demo configuration), {@code --records FILE}
 * (the demo sample), {@code --slices N} (16), {@code --label TEXT}, {@code --append FILE},
 * {@code --variant-b NAME} (B runs the demo configuration with one new kind added,
 * {@link BenchData#demoConfigWith}, e.g. {@code demo_hinge}; with {@code --a} and {@code --b} the
 * same build this is the kind's cost per record beside the demo's), {@code --variant-a NAME} (the
 * same for A; {@code demo_forecast} is the demo with {@code input.forecast}),
 * {@code --fresh-each-lap} (each build's step is made anew whenever the feed wraps, so no record
 * is ever seen twice by one step: no repeated or late actuals, no forecasts that never settle; use
 * it with a long generated feed, e.g. a year of the demo generator's records, so the fresh step's
 * warm-up is a small part of a lap).
 */
public final class PipelineBuildsAB {

  private PipelineBuildsAB() { }

  public static void main(String[] args) throws Throwable {
    PairedSlices.Options o = new PairedSlices.Options();
    String variantB = null;
    String variantA = null;
    boolean fresh = false;
    for (int i = 0; i < args.length; i++) {
      int taken = o.take(args, i);
      if (taken >= 0) {
        i = taken;
        continue;
      }
      switch (args[i]) {
        case "--variant-b" -> variantB = args[++i];
        case "--variant-a" -> variantA = args[++i];
        case "--fresh-each-lap" -> fresh = true;
        default -> throw PairedSlices.Options.unknown(args[i], ", --variant-b NAME, --variant-a NAME, --fresh-each-lap");
      }
    }
    o.requireBuilds();
    String yaml = Files.readString(o.config);
    byte[][] recs = o.recordLines();
    String yamlA = variantA == null ? yaml : BenchData.demoYamlWith(variantA);
    String yamlB = variantB == null ? yaml : BenchData.demoYamlWith(variantB);
    Runnable[] run = {driver(o.a, yamlA, recs, fresh), driver(o.b, yamlB, recs, fresh)};
    PairedSlices.Result r = PairedSlices.measure(run, 1000, 300, o.slices);
    String line = String.format(Locale.ROOT,
        "%s %s slices=%d: A median %,.0f records/s, B median %,.0f; B/A paired median %.3f [quartiles %.3f, %.3f] (A=%s, B=%s)",
        Instant.now(), o.label, o.slices, r.medianA(), r.medianB(), r.medianRatio(),
        r.lowerQuartileRatio(), r.upperQuartileRatio(), o.a, o.b);
    PairedSlices.report(line, o.append);
    System.out.printf(Locale.ROOT, "callbacks (both builds): %,d predictions, %,d rejects, %,d snapshots, %,d settled and other%n", CALLS[0], CALLS[1], CALLS[2], CALLS[3]);
  }

  /** 1,000 records through a pipeline step of one build per call. */
  private static Runnable driver(String path, String yaml, byte[][] recs, boolean fresh) throws Exception {
    ClassLoader cl = new PairedSlices.ChildFirst(path, PipelineBuildsAB.class.getClassLoader());
    Class<?> loader = cl.loadClass("dev.runnel.core.config.ConfigLoader");
    Object cfg = loader.getMethod("parse", String.class, String.class).invoke(null, yaml, "ab.yaml");
    Class<?> stepClass = cl.loadClass("dev.runnel.core.pipeline.PipelineStep");
    java.lang.reflect.Constructor<?> make = stepClass.getConstructor(cfg.getClass());
    Object[] step = {make.newInstance(cfg)};
    Class<?> sinkClass = cl.loadClass("dev.runnel.core.pipeline.PipelineStep$Sink");
    Object sink = Proxy.newProxyInstance(cl, new Class<?>[] {sinkClass}, (proxy, m, margs) -> {
      switch (m.getName()) {
        case "prediction" -> CALLS[0]++;
        case "reject" -> CALLS[1]++;
        case "snapshotDue" -> CALLS[2]++;
        default -> CALLS[3]++;
      }
      return null;
    });
    Method process = stepClass.getMethod("process", byte[].class, int.class, int.class, long.class, long.class, long.class, sinkClass);
    java.lang.invoke.MethodHandle h = java.lang.invoke.MethodHandles.publicLookup().unreflect(process)
        .asType(java.lang.invoke.MethodType.methodType(void.class, Object.class, byte[].class, int.class, int.class, long.class, long.class, long.class, Object.class));
    Object s = sink;
    int[] i = {0};
    return () -> {
      try {
        for (int k = 0; k < 1000; k++) {
          byte[] r = recs[i[0]];
          h.invokeExact(step[0], r, 0, r.length, 0L, 0L, (long) i[0], s);
          if (++i[0] == recs.length) {
            i[0] = 0;
            if (fresh) {
              step[0] = make.newInstance(cfg);
            }
          }
        }
      } catch (RuntimeException e) {
        throw e;
      } catch (Throwable e) {
        throw new IllegalStateException(e);
      }
    };
  }

  /** Callbacks seen, both builds together: predictions, rejects, snapshots, settled forecasts and any other (printed as a check). */
  static final long[] CALLS = new long[4];

}
