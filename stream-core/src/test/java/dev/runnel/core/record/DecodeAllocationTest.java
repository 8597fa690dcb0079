package dev.runnel.core.record;

import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.feature.Featurizer;
import java.io.IOException;
import java.nio.file.Files;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * Once warm, decoding a valid record and featurizing it with a stable layout allocate nothing.
 * Measured with the JVM's per-thread allocation counter (com.sun.management.ThreadMXBean); 0 bytes
 * measured here, the bound leaves room for the counter itself.
 */
class DecodeAllocationTest {

  private static com.sun.management.ThreadMXBean counter() {
    java.lang.management.ThreadMXBean tmx = java.lang.management.ManagementFactory.getThreadMXBean();
    if (tmx instanceof com.sun.management.ThreadMXBean sun && sun.isThreadAllocatedMemorySupported()) return sun;
    return null;
  }

  /** Valid sample lines, and the same with non-ASCII and escaped hub names. */
  private static List<byte[]> validLines(JsonRecordDecoder d, EventRecord r) throws IOException {
    List<byte[]> all = new ArrayList<>(DecoderAgreementTest.sampleLines());
    all.addAll(DecodePathsThroughPipelineTest.trickySample(DecoderAgreementTest.sampleLines()));
    List<byte[]> ok = new ArrayList<>();
    for (byte[] l : all) {
      if (d.decode(l, 0, l.length, r) == null && r.present(r.schema().slot("hub"))) ok.add(l);
    }
    return ok;
  }

  @Test void warmDecode_allocatesNothing() throws IOException {
    com.sun.management.ThreadMXBean sun = counter();
    if (sun == null) return;
    PipelineConfig c = ConfigLoader.load(DecodePathsThroughPipelineTest.DEMO_CONFIG);
    PipelineConfig.Input in = c.input();
    JsonRecordDecoder d = new JsonRecordDecoder(in.schema(), in.limits(), in.eventTime().get().field(), in.eventTime().get().format());
    EventRecord r = new EventRecord(in.schema());
    List<byte[]> lines = validLines(d, r);
    assertTrue(lines.size() > 9_000, lines.size() + " lines");   // the sample (4,951 lines) and its tricky variant
    byte[][] recs = lines.toArray(new byte[0][]);
    for (int pass = 0; pass < 20; pass++) {
      for (byte[] b : recs) d.decode(b, 0, b.length, r);
    }
    long tid = Thread.currentThread().getId();
    long least = Long.MAX_VALUE;
    for (int attempt = 0; attempt < ATTEMPTS; attempt++) {
      long before = sun.getThreadAllocatedBytes(tid);
      int bad = decodeAll(d, r, recs);
      least = Math.min(least, sun.getThreadAllocatedBytes(tid) - before);
      assertTrue(bad == 0, bad + " rejected");
    }
    assertTrue(least < 1024, "allocated " + least + " bytes over " + recs.length + " decodes");
  }

  /**
   * Measurements taken; the least counts. The JVM's own work (compiling, deoptimizing) can be
   * counted in one of them; an allocation per record would show in all.
   */
  private static final int ATTEMPTS = 5;

  private static int decodeAll(JsonRecordDecoder d, EventRecord r, byte[][] recs) {
    int bad = 0;
    for (byte[] b : recs) {
      if (d.decode(b, 0, b.length, r) != null) bad++;
    }
    return bad;
  }

  @Test void warmDecodeAndFeaturize_allocateNothingWithAStableLayout() throws IOException {
    com.sun.management.ThreadMXBean sun = counter();
    if (sun == null) return;
    // the demo configuration without hub expiry: every hub stays admitted, the layout is stable
    String yaml = Files.readString(DecodePathsThroughPipelineTest.DEMO_CONFIG).replace(", expire_after: PT12H", "");
    PipelineConfig c = ConfigLoader.parse(yaml, "stable.yaml");
    PipelineConfig.Input in = c.input();
    JsonRecordDecoder d = new JsonRecordDecoder(in.schema(), in.limits(), in.eventTime().get().field(), in.eventTime().get().format());
    EventRecord r = new EventRecord(in.schema());
    Featurizer f = new Featurizer(c);
    byte[][] recs = validLines(d, r).toArray(new byte[0][]);
    double[] row = new double[f.maxDimension()];
    for (int pass = 0; pass < 20; pass++) {
      for (byte[] b : recs) step(d, f, r, b, row);
    }
    long layout = f.layoutVersion();
    long tid = Thread.currentThread().getId();
    long least = Long.MAX_VALUE;
    for (int attempt = 0; attempt < ATTEMPTS; attempt++) {
      long before = sun.getThreadAllocatedBytes(tid);
      for (byte[] b : recs) step(d, f, r, b, row);
      least = Math.min(least, sun.getThreadAllocatedBytes(tid) - before);
    }
    assertTrue(f.layoutVersion() == layout, "the layout stayed stable");
    assertTrue(least < 1024, "allocated " + least + " bytes over " + recs.length + " records");
  }

  private static void step(JsonRecordDecoder d, Featurizer f, EventRecord r, byte[] b, double[] row) {
    assertNull(d.decode(b, 0, b.length, r));
    if (f.check(r) != null) return;
    if (f.hasTarget(r)) {
      f.learnAndEncode(r, r.eventTimeMillis(), r.eventTimeMillis(), row);
    } else {
      f.encode(r, r.eventTimeMillis(), row);
    }
  }
}
