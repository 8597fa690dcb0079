package dev.runnel.core.bench;

import java.nio.file.Files;
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
    PairedSlices.Options o = new PairedSlices.Options();
    for (int i = 0; i < args.length; i++) {
      int taken = o.take(args, i);
      if (taken < 0) {
        throw PairedSlices.Options.unknown(args[i], "");
      }
      i = taken;
    }
    o.requireBuilds();
    String yaml = Files.readString(o.config);
    byte[][] recs = o.recordLines();
    Runnable[] run = {driver(o.a, yaml, recs), driver(o.b, yaml, recs)};
    PairedSlices.Result r = PairedSlices.measure(run, 1000, 300, o.slices);
    String line = String.format(Locale.ROOT,
        "%s featurizer %s slices=%d: A median %,.0f records/s, B median %,.0f; B/A paired median %.3f [quartiles %.3f, %.3f] (A=%s, B=%s)",
        Instant.now(), o.label, o.slices, r.medianA(), r.medianB(), r.medianRatio(),
        r.lowerQuartileRatio(), r.upperQuartileRatio(), o.a, o.b);
    PairedSlices.report(line, o.append);
    System.out.println("rows written: A " + counts(run[0]) + "; B " + counts(run[1]));
  }

  /** A {@link FeaturizerLoop} defined in the build's own class loader, calling that build's featurizer. */
  private static Runnable driver(String path, String yaml, byte[][] lines) throws Exception {
    PairedSlices.ChildFirst cl = new PairedSlices.ChildFirst(path, FeaturizerBuildsAB.class.getClassLoader());
    Class<?> loop = cl.define(FeaturizerLoop.class);
    return (Runnable) loop.getConstructor(String.class, byte[][].class).newInstance(yaml, lines);
  }

  private static String counts(Runnable loop) throws Exception {
    Class<?> c = loop.getClass();
    return String.format(Locale.ROOT, "%,d trained, %,d scored, checksum %.6g",
        c.getField("trained").getLong(loop), c.getField("scored").getLong(loop), c.getField("sum").getDouble(loop));
  }
}
