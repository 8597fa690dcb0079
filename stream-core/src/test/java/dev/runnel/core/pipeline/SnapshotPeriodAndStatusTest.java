package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.io.DataInputStream;
import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * Snapshot periods are half-open: the snapshot stamped T holds every training record before T
 * and none at or after it. The first record of a stream is warming up, not scored. A version 2
 * checkpoint (before the one clock) is restored and continues like the current build's run.
 */
class SnapshotPeriodAndStatusTest {

  @Test
  void periodSnapshotStampedTHoldsExactlyTheRecordsBeforeT() {
    PipelineConfig cfg = StreamClockPolicyTest.demoConfig(); // snapshot_every: PT6H, no record count
    List<String> lines = StreamClockPolicyTest.demoLines();
    long every = cfg.outputs().snapshotEveryMillis();
    List<Long> trainedTimes = new ArrayList<>();
    List<long[]> snaps = new ArrayList<>(); // stamp, trained in the snapshot, training records seen before it
    PipelineStep step = new PipelineStep(cfg);
    PipelineStep.Sink sink = new PipelineStep.Sink() {
      @Override public void prediction(Prediction p, EventRecord r) {
        if (!Double.isNaN(p.actual())) trainedTimes.add(p.eventTimeMillis());
      }
      @Override public void reject(RejectReason reason, String detail) { }
      @Override public void snapshotDue() {
        Snapshot s = step.snapshot();
        snaps.add(new long[] {s.eventTimeMillis(), s.trained(), trainedTimes.size()});
      }
    };
    for (String l : lines) {
      byte[] b = l.getBytes(StandardCharsets.UTF_8);
      step.process(b, 0, b.length, 0L, 0, 0, sink);
    }
    assertTrue(snaps.size() > 20, snaps.size() + " snapshots");
    long clock = Long.MIN_VALUE;
    int seen = 0;
    for (long[] s : snaps) {
      long stamp = s[0];
      assertEquals(0, Math.floorMod(stamp, every), "stamped on a period boundary");
      assertEquals(s[2], s[1], "the snapshot holds the records learned before it was published, not the one that opened the next period");
      // the clock's records: every accepted training record published before the snapshot is
      // before its stamp unless it is late (then the clock was already past it)
      for (; seen < s[2]; seen++) clock = Math.max(clock, trainedTimes.get(seen));
      assertTrue(clock < stamp, "clock " + clock + " before the stamp " + stamp);
      // and the record that triggered it is at or after the stamp
      assertTrue(trainedTimes.get((int) s[2]) >= stamp, "the next record opens the period at " + stamp);
    }
  }

  @Test
  void firstRecordIsWarmingUpWithNoValueAndIsNotCountedAsScored() {
    // the default prior: before this change the first record was "scored" with a prediction of 0
    PipelineConfig cfg = ConfigLoader.parse(StreamClockPolicyTest.readConfig().replace("  prior_variance: 100\n", ""), "q.yaml");
    List<String> lines = StreamClockPolicyTest.demoLines();
    PipelineStep step = new PipelineStep(cfg);
    List<String> statuses = new ArrayList<>();
    List<Double> predicted = new ArrayList<>();
    List<Double> low = new ArrayList<>();
    PipelineStep.Sink sink = new PipelineStep.Sink() {
      @Override public void prediction(Prediction p, EventRecord r) {
        statuses.add(p.status().id());
        predicted.add(p.predicted());
        low.add(p.low());
      }
      @Override public void reject(RejectReason reason, String detail) { }
      @Override public void snapshotDue() { }
    };
    int first = 0;
    while (!lines.get(first).contains("\"sessions\"")) first++;   // the sample starts with forecast requests: begin at its first actual
    for (int i = first; i < first + 30; i++) {
      byte[] b = lines.get(i).getBytes(StandardCharsets.UTF_8);
      step.process(b, 0, b.length, 0L, 0, i, sink);
    }
    assertEquals("warming_up", statuses.get(0));
    assertTrue(Double.isNaN(predicted.get(0)) && Double.isNaN(low.get(0)), "no value and no interval while warming up");
    assertEquals(1, step.warmingUp());
    for (int i = 1; i < statuses.size(); i++) {
      assertTrue(statuses.get(i).equals("scored") || statuses.get(i).equals("no_target"), i + ": " + statuses.get(i));
      assertTrue(!Double.isNaN(low.get(i)), "an interval from the second record on");
    }
    long scored = statuses.stream().filter("scored"::equals).count();
    assertEquals(scored, step.metrics().count(), "metrics count the scored records only");
  }

  @Test
  void versionTwoCheckpointIsRestoredAndContinuesLikeThisBuild() throws IOException {
    // pipeline-v2-after-3000.bin: written by the build before the one clock (commit 1407763),
    // after PipelineCheckpointTest.feed(11, 6000)'s first 3000 records under its CONFIG
    byte[] v2;
    try (InputStream in = getClass().getResourceAsStream("/checkpoints/pipeline-v2-after-3000.bin")) {
      v2 = new DataInputStream(in).readAllBytes();
    }
    assertEquals(2, java.nio.ByteBuffer.wrap(v2).getInt(4), "the file is a version 2 checkpoint");
    PipelineConfig cfg = ConfigLoader.parse(PipelineCheckpointTest.CONFIG, "checkpoint-test.yaml");
    List<byte[]> feed = PipelineCheckpointTest.feed(11, 6000);
    PipelineStep whole = new PipelineStep(cfg);
    PipelineCheckpointTest.run(whole, feed, 0, 3000);
    String expected = predictionsOnly(PipelineCheckpointTest.run(whole, feed, 3000, 6000));
    PipelineStep restored = new PipelineStep(cfg);
    restored.restore(v2);
    assertEquals(whole.clock().nowMillis() == Long.MIN_VALUE ? 0 : 1, restored.clock().nowMillis() == Long.MIN_VALUE ? 0 : 1);
    String got = predictionsOnly(PipelineCheckpointTest.run(restored, feed, 3000, 6000));
    assertTrue(expected.split("\n").length > 2500, "compared " + expected.split("\n").length + " predictions");
    // the old build computed the sines, cosines and powers of its 3000 records with Math, this
    // one with StrictMath, which differ in last bits on this JVM: the same records, statuses and
    // layouts, and the same numbers to 1e-9
    String[] e = expected.split("\n");
    String[] g = got.split("\n");
    assertEquals(e.length, g.length);
    com.fasterxml.jackson.databind.ObjectMapper json = new com.fasterxml.jackson.databind.ObjectMapper();
    for (int i = 0; i < e.length; i++) {
      com.fasterxml.jackson.databind.JsonNode a = json.readTree(e[i]);
      com.fasterxml.jackson.databind.JsonNode b = json.readTree(g[i]);
      for (String f : List.of("status", "source", "event_time", "fields", "layout_version")) {
        assertEquals(a.get(f), b.get(f), "prediction " + i + " " + f);
      }
      for (String f : List.of("predicted", "low", "high")) {
        double x = a.get(f).asDouble();
        double y = b.get(f).asDouble();
        assertEquals(x, y, 1e-9 * (1 + Math.abs(x)), "prediction " + i + " " + f);
      }
    }
    assertEquals(whole.model().effectiveSampleSize(), restored.model().effectiveSampleSize(), 1e-9);
  }

  private static String predictionsOnly(byte[] outputs) {
    StringBuilder b = new StringBuilder();
    for (String line : new String(outputs, StandardCharsets.UTF_8).split("(?<=\\})(?=\\{\"(format|status|reason)\")")) {
      if (line.contains("\"status\":")) b.append(line).append('\n');
    }
    return b.toString();
  }
}
