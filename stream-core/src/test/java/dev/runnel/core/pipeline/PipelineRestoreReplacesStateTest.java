package dev.runnel.core.pipeline;

import static dev.runnel.core.pipeline.PipelineForecastTest.H;
import static dev.runnel.core.pipeline.PipelineForecastTest.T0;
import static dev.runnel.core.pipeline.PipelineForecastTest.line;
import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.PipelineForecastTest.Collector;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * {@link PipelineStep#restore} replaces every counter, also in a step that has already counted
 * rejects (restore needs a featurizer that has learned from nothing, so a step may only have
 * rejected records before it): a reject reason past the first fifteen that the checkpoint never
 * met (written as fifteen counters) is 0 after the restore, and the step continues exactly as a
 * new step restored from the same checkpoint (checkpoint bytes and outputs).
 */
class PipelineRestoreReplacesStateTest {

  private static PipelineConfig config() {
    return LateRepeatedCorrectedActualsTest.config("    corrections: replace\n",
        "  prior_variance: 10\n  target_transform: log1p\n");
  }

  @Test
  void aStepThatOnlyRejectedRecordsRestoresToExactlyTheCheckpointsCounters() {
    PipelineStep writer = new PipelineStep(config());
    Collector w = new Collector(writer);
    for (byte[] b : PipelineForecastTest.mixedFeed(41, 20)) {
      w.feed(b);
    }
    byte[] checkpoint = writer.checkpoint();
    assertEquals(0, writer.rejected(RejectReason.TARGET_OUT_OF_DOMAIN));

    PipelineStep used = new PipelineStep(config());
    Collector u = new Collector(used);
    u.feed(line("A", T0, T0, 10, -5.0)); // outside log1p's domain
    u.feed("{not json".getBytes(StandardCharsets.UTF_8));
    assertEquals(1, used.rejected(RejectReason.TARGET_OUT_OF_DOMAIN));
    assertEquals(2, used.rejected());

    PipelineStep fresh = new PipelineStep(config());
    used.restore(checkpoint);
    fresh.restore(checkpoint);
    assertEquals(0, used.rejected(RejectReason.TARGET_OUT_OF_DOMAIN), "the count of a reason the checkpoint never met");
    assertEquals(0, used.rejected(RejectReason.MALFORMED_JSON));
    assertEquals(writer.rejected(), used.rejected());
    assertEquals(writer.records(), used.records());
    assertArrayEquals(checkpoint, used.checkpoint(), "the restored state writes the checkpoint it read");
    long hour = T0 + 20 * H;
    Collector a = new Collector(used);
    Collector b = new Collector(fresh);
    for (byte[] l : List.of(line("B", hour, hour + 5 * H, 12, null), line("A", hour + H, hour, 10, 20.0),
        line("A", hour + 2 * H, hour, 10, 26.0), line("B", hour + 6 * H, hour + 5 * H, 12, 18.0))) {
      a.feed(l);
      b.feed(l);
    }
    assertTrue(b.rejects.isEmpty(), b.rejects.toString());
    assertEquals(b.settled, a.settled);
    assertArrayEquals(b.all.toByteArray(), a.all.toByteArray());
    assertArrayEquals(fresh.checkpoint(), used.checkpoint());
  }

  /**
   * A step that has learned is refused before anything is read, so the refused restore changes
   * nothing (it used to overwrite the counters, the clock and the metrics before the featurizer
   * refused, leaving the step half-replaced).
   */
  @Test
  void aRefusedRestoreLeavesTheStepAsItWas() {
    PipelineStep writer = new PipelineStep(config());
    Collector w = new Collector(writer);
    for (byte[] b : PipelineForecastTest.mixedFeed(41, 20)) {
      w.feed(b);
    }
    byte[] checkpoint = writer.checkpoint();

    PipelineStep learned = new PipelineStep(config());
    Collector l = new Collector(learned);
    List<byte[]> feed = PipelineForecastTest.mixedFeed(7, 6);
    for (byte[] b : feed) {
      l.feed(b);
    }
    assertTrue(learned.records() > 0 && learned.records() != writer.records());
    byte[] before = learned.checkpoint();
    IllegalStateException e = assertThrows(IllegalStateException.class, () -> learned.restore(checkpoint));
    assertTrue(e.getMessage().contains("fresh pipeline step"), e.getMessage());
    assertArrayEquals(before, learned.checkpoint(), "the refused restore changed nothing");
  }
}
