package dev.runnel.core.bench;

import java.lang.reflect.Method;
import java.lang.reflect.Proxy;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.util.Locale;

/**
 * Paired A/B of the step with its output encoding ({@code PipelineStep.process}, then
 * {@code OutputJson.prediction}/{@code reject}/{@code snapshot} for what it emits, the bytes
 * counted) between two builds of stream-core in one JVM, as {@link PipelineBuildsAB} does for the
 * step alone (child-first class loaders, alternating slices of 0.5 s of thread CPU time, the
 * median of B's rate over A's in the same pair with the quartiles).
 *
 * <pre>{@code
 * java -cp stream-core/target/benchmarks.jar dev.runnel.core.bench.OutputBuildsAB \
 *     --a /tmp/base/stream-core.jar --a-writer two-arg --b stream-core/target/classes --b-writer config
 * }</pre>
 * Options: {@code --a PATH}, {@code --b PATH}, {@code --a-writer}/{@code --b-writer}
 * {@code two-arg} ({@code new OutputJson(name, level)}, in every build) or {@code config}
 * ({@code OutputJson.of(config)}, format 3 builds only), {@code --config FILE}, {@code --b-config FILE}
 * (B's, when it differs: e.g. with {@code outputs.significant_digits}), {@code --records FILE},
 * {@code --slices N} (16), {@code --label TEXT}, {@code --append FILE}.
 */
public final class OutputBuildsAB {

  private OutputBuildsAB() { }

  /** Output bytes written, per side. */
  static final long[] BYTES = new long[2];
  static final long[] RECORDS = new long[2];

  public static void main(String[] args) throws Throwable {
    PairedSlices.Options o = new PairedSlices.Options();
    String aw = "two-arg";
    String bw = "config";
    Path bConfig = null;
    for (int i = 0; i < args.length; i++) {
      int taken = o.take(args, i);
      if (taken >= 0) {
        i = taken;
        continue;
      }
      switch (args[i]) {
        case "--a-writer" -> aw = args[++i];
        case "--b-writer" -> bw = args[++i];
        case "--b-config" -> bConfig = Path.of(args[++i]);
        default -> throw PairedSlices.Options.unknown(args[i],
            ", --a-writer two-arg|config, --b-writer two-arg|config, --b-config FILE (B's configuration, default --config)");
      }
    }
    o.requireBuilds();
    String yaml = Files.readString(o.config);
    byte[][] recs = o.recordLines();
    String bYaml = bConfig == null ? yaml : Files.readString(bConfig);
    Runnable[] run = {driver(0, o.a, aw, yaml, recs), driver(1, o.b, bw, bYaml, recs)};
    PairedSlices.Result r = PairedSlices.measure(run, 1000, 300, o.slices);
    String line = String.format(Locale.ROOT,
        "%s %s slices=%d: A median %,.0f records/s, B median %,.0f; B/A paired median %.3f [quartiles %.3f, %.3f];"
            + " output bytes per record A %.1f, B %.1f (A=%s %s, B=%s %s)",
        Instant.now(), o.label, o.slices, r.medianA(), r.medianB(), r.medianRatio(), r.lowerQuartileRatio(), r.upperQuartileRatio(),
        (double) BYTES[0] / RECORDS[0], (double) BYTES[1] / RECORDS[1], o.a, aw, o.b, bw);
    PairedSlices.report(line, o.append);
  }

  /** 1,000 records through a pipeline step and the output writer of one build per call. */
  private static Runnable driver(int side, String path, String writer, String yaml, byte[][] recs) throws Exception {
    ClassLoader cl = new PairedSlices.ChildFirst(path, OutputBuildsAB.class.getClassLoader());
    Class<?> loader = cl.loadClass("dev.runnel.core.config.ConfigLoader");
    Object cfg = loader.getMethod("parse", String.class, String.class).invoke(null, yaml, "ab.yaml");
    Class<?> stepClass = cl.loadClass("dev.runnel.core.pipeline.PipelineStep");
    Object step = stepClass.getConstructor(cfg.getClass()).newInstance(cfg);
    Class<?> jsonClass = cl.loadClass("dev.runnel.core.pipeline.OutputJson");
    Object json;
    if (writer.equals("config")) {
      json = jsonClass.getMethod("of", cfg.getClass()).invoke(null, cfg);
    } else {
      Object model = cfg.getClass().getMethod("model").invoke(cfg);
      double level = (double) model.getClass().getMethod("intervalLevel").invoke(model);
      json = jsonClass.getConstructor(String.class, double.class).newInstance("quillmarsh", level);
    }
    Class<?> predClass = cl.loadClass("dev.runnel.core.pipeline.Prediction");
    Class<?> recClass = cl.loadClass("dev.runnel.core.record.EventRecord");
    Class<?> snapClass = cl.loadClass("dev.runnel.core.pipeline.Snapshot");
    Class<?> reasonClass = cl.loadClass("dev.runnel.core.record.RejectReason");
    var lookup = java.lang.invoke.MethodHandles.publicLookup();
    var prediction = lookup.unreflect(jsonClass.getMethod("prediction", predClass, recClass)).bindTo(json);
    var snapshot = lookup.unreflect(jsonClass.getMethod("snapshot", snapClass, long.class)).bindTo(json);
    var stepSnapshot = lookup.unreflect(stepClass.getMethod("snapshot")).bindTo(step);
    var reject = lookup.unreflect(jsonClass.getMethod("reject", reasonClass, String.class, long.class, long.class, byte[].class,
        int.class, int.class)).bindTo(json);
    int[] i = {0};
    Class<?> sinkClass = cl.loadClass("dev.runnel.core.pipeline.PipelineStep$Sink");
    Object sink = Proxy.newProxyInstance(cl, new Class<?>[] {sinkClass}, (proxy, m, margs) -> {
      byte[] out = switch (m.getName()) {
        case "prediction" -> (byte[]) prediction.invoke(margs[0], margs[1]);
        case "reject" -> (byte[]) reject.invoke(margs[0], margs[1], 0L, (long) i[0], recs[i[0]], 0, recs[i[0]].length);
        case "snapshotDue" -> (byte[]) snapshot.invoke(stepSnapshot.invoke(), 0L);
        default -> new byte[0];
      };
      BYTES[side] += out.length;
      return null;
    });
    Method process = stepClass.getMethod("process", byte[].class, int.class, int.class, long.class, long.class, long.class, sinkClass);
    java.lang.invoke.MethodHandle h = lookup.unreflect(process).bindTo(step)
        .asType(java.lang.invoke.MethodType.methodType(void.class, byte[].class, int.class, int.class, long.class, long.class, long.class, Object.class));
    Object s = sink;
    return () -> {
      try {
        for (int k = 0; k < 1000; k++) {
          byte[] r = recs[i[0]];
          h.invokeExact(r, 0, r.length, 0L, 0L, (long) i[0], s);
          RECORDS[side]++;
          if (++i[0] == recs.length) {
            i[0] = 0;
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
