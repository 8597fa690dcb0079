package dev.runnel.core.pipeline;

import static dev.runnel.core.pipeline.PipelineForecastTest.H;
import static dev.runnel.core.pipeline.PipelineForecastTest.T0;
import static dev.runnel.core.pipeline.PipelineForecastTest.line;
import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.pipeline.PipelineForecastTest.Collector;
import dev.runnel.core.record.RejectReason;
import java.nio.ByteBuffer;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * Edges of the step that its other tests leave open (survivors of mutation testing in
 * {@link PipelineStep}): a too-late actual's detail names how far behind it is; entity texts longer
 * than the key buffer's first 64 chars stay apart, an empty one is an entity, and an entity field
 * need not be the schema's first; a request whose target time is exactly the clock has passed; the
 * first key the memory of learned actuals holds (its entry 0) is corrected in place (its new value
 * is then a repeat) and replaced under {@code replace}; a step without the memory restores its
 * checkpoint; the prequential metrics are those of the scored predictions' errors; a checkpoint
 * holds the reject counters up to the last reason counted (fifteen when none after them was,
 * sixteen when only {@code repeated_actual}, the sixteenth, was) and a restore reads them back.
 * Counts are worked by hand from the records fed.
 */
class PipelineStepEdgesTest {

  private static PipelineStep step() {
    return new PipelineStep(LateRepeatedCorrectedActualsTest.config("    corrections: learn_as_new\n", null));
  }

  @Test
  void theFirstKeyLearnedIsCorrectedInPlaceAndItsNewValueIsThenARepeat() {
    PipelineStep s = step();
    Collector c = new Collector(s);
    c.feed(line("A", T0 + H, T0, 9, 20.0)); // the first key learned: entry 0 of the memory
    c.feed(line("A", T0 + H, T0, 9, 23.0)); // a correction, learned as new
    assertEquals(2, s.trained());
    assertEquals(1, s.learnedActuals(), "one key, its value replaced");
    c.feed(line("A", T0 + H, T0, 9, 23.0));
    assertEquals(1, c.rejects.size());
    assertTrue(c.rejects.get(0).startsWith("repeated_actual: "), c.rejects.toString());
    c.feed(line("A", T0 + H, T0, 9, 20.0)); // the first value is now a correction
    assertEquals(3, s.trained());
    assertEquals(1, c.rejects.size());
  }

  @Test
  void entitiesLongerThanTheFirstKeyBufferAreKeptApartAndSettledWhole() {
    PipelineStep s = step();
    Collector c = new Collector(s);
    PipelineForecastTest.warm(c, new java.util.Random(5), 12);
    long target = T0 + 20 * H;
    String edge = "e".repeat(63); // with its two length chars, one more than the first 64
    c.feed(line(edge, T0 + 12 * H, target, 9, null));
    c.feed(line(edge, target + H, target, 9, 14.0));
    assertEquals(1, c.settled.size());
    assertEquals(edge, c.settled.get(0).hub());
    c.settled.clear();
    String a = "hub-" + "x".repeat(200); // the entity text starts with room for 64 chars
    String b = "hub-" + "x".repeat(199) + "y"; // differs in its last char only
    c.feed(line(a, T0 + 12 * H, target, 9, null));
    c.feed(line(b, T0 + 12 * H, target, 9, null));
    assertEquals(2, s.pendingForecasts());
    c.feed(line(b, target + H, target, 9, 15.0));
    assertEquals(1, c.settled.size(), "the actual of one entity settles only its own forecast");
    assertEquals(b, c.settled.get(0).hub());
    assertEquals(1, s.pendingForecasts());
    c.feed(line(a, target + H, target, 9, 16.0));
    assertEquals(2, c.settled.size());
    assertEquals(a, c.settled.get(1).hub());
    assertEquals(16.0, c.settled.get(1).actual());
    assertEquals(0, s.pendingForecasts());
  }

  @Test
  void aTooLateActualsDetailNamesHowFarBehindTheClockItsTargetIs() {
    PipelineStep s = new PipelineStep(LateRepeatedCorrectedActualsTest.config("    max_actual_lag: P3D\n", null));
    Collector c = new Collector(s);
    PipelineForecastTest.warm(c, new java.util.Random(6), 10);
    long now = s.clock().nowMillis();
    long target = now - 80 * H - 1_500; // 80 hours and 1.5 s behind
    c.feed(line("Q", now, target, 8, 25.0));
    assertEquals(List.of("actual_too_late: target time " + java.time.Instant.ofEpochMilli(target) + " is PT80H1.5S behind the stream clock "
        + java.time.Instant.ofEpochMilli(now) + ", more than input.forecast.max_actual_lag (PT72H)"), c.rejects);
  }

  @Test
  void aRequestWhoseTargetIsExactlyTheClockHasPassedAndOneMillisecondLaterHasNot() {
    PipelineStep s = step();
    Collector c = new Collector(s);
    PipelineForecastTest.warm(c, new java.util.Random(7), 10);
    long now = s.clock().nowMillis();
    c.feed(line("A", now, now, 9, null));
    c.feed(line("A", now, now + 1, 9, null));
    assertEquals(1.0, c.predictionAt(c.offset - 2)[4], "target at the clock: passed");
    assertEquals(0.0, c.predictionAt(c.offset - 1)[4]);
  }

  @Test
  void anEntityFieldThatIsNotTheSchemasFirstIsTheOneRead() {
    // hub declared after temperature_c: the entity is read from its own slot
    String yaml = PipelineForecastTest.CONFIG.replace("MAX", "100")
        .replace("    hub: text\n    temperature_c: number\n", "    temperature_c: number\n    hub: text\n");
    assertTrue(!yaml.equals(PipelineForecastTest.CONFIG.replace("MAX", "100")), "the fields were reordered");
    PipelineStep s = new PipelineStep(dev.runnel.core.config.ConfigLoader.parse(yaml, "order.yaml"));
    Collector c = new Collector(s);
    PipelineForecastTest.warm(c, new java.util.Random(8), 10);
    long target = T0 + 20 * H;
    c.feed(line("A", T0 + 10 * H, target, 9, null));
    c.feed(line("B", T0 + 10 * H, target, 9, null));
    assertTrue(c.rejects.isEmpty(), c.rejects.toString());
    c.feed(line("B", target + H, target, 9, 15.0));
    assertEquals(1, c.settled.size());
    assertEquals("B", c.settled.get(0).hub());
  }

  @Test
  void theFirstKeyLearnedIsReplacedUnderReplace() {
    PipelineStep s = new PipelineStep(LateRepeatedCorrectedActualsTest.config("    corrections: replace\n", null));
    Collector c = new Collector(s);
    c.feed(line("A", T0 + H, T0, 9, 20.0)); // entry 0 of the memory
    c.feed(line("B", T0 + H, T0, 9, 21.0));
    c.feed(line("A", T0 + H, T0, 9, 23.0));
    assertEquals(1, s.replacedActuals());
    assertEquals(2, s.learnedActuals());
    assertEquals(3, s.trained());
  }

  @Test
  void aStepWithoutAMemoryOfLearnedActualsRestoresItsCheckpoint() {
    PipelineStep s = new PipelineStep(LateRepeatedCorrectedActualsTest.config("    max_learned_actuals: 0\n", null));
    Collector c = new Collector(s);
    PipelineForecastTest.warm(c, new java.util.Random(9), 6);
    c.feed(line("A", T0 + 6 * H, T0 + 9 * H, 9, null));
    byte[] checkpoint = s.checkpoint();
    PipelineStep back = new PipelineStep(LateRepeatedCorrectedActualsTest.config("    max_learned_actuals: 0\n", null));
    back.restore(checkpoint);
    assertEquals(1, back.pendingForecasts());
    assertEquals(0, back.learnedActuals());
    assertArrayEquals(checkpoint, back.checkpoint());
  }

  @Test
  void theMetricsAreThoseOfTheScoredPredictionsErrors() {
    PipelineStep s = step();
    Collector c = new Collector(s);
    double[] sums = new double[3];
    long[] n = new long[2];
    PipelineStep.Sink sink = new PipelineStep.Sink() {
      @Override public void prediction(Prediction p, dev.runnel.core.record.EventRecord r) {
        if (p.status() == Prediction.Status.SCORED) {
          double e = p.actual() - p.predicted();
          sums[0] += Math.abs(e);
          sums[1] += e * e;
          sums[2] += e;
          n[0]++;
          n[1] += p.covered() ? 1 : 0;
        }
      }
      @Override public void reject(RejectReason reason, String detail) { }
      @Override public void snapshotDue() { }
    };
    java.util.Random rnd = new java.util.Random(10);
    for (int k = 0; k < 60; k++) {
      for (String hub : new String[] {"A", "B"}) {
        double temp = 10 + 5 * rnd.nextGaussian();
        byte[] b = line(hub, T0 + k * H + H, T0 + k * H, temp, PipelineForecastTest.sessions(rnd, hub, T0 + k * H, temp));
        s.process(b, 0, b.length, 0L, 0, k, sink);
      }
    }
    // mean absolute error, root mean squared error, mean error and coverage of actual − predicted (common practice)
    assertTrue(n[0] > 100);
    assertEquals(n[0], s.metrics().count());
    assertEquals(sums[0] / n[0], s.metrics().mae(), 1e-12 * sums[0] / n[0]);
    assertEquals(Math.sqrt(sums[1] / n[0]), s.metrics().rmse(), 1e-12 * Math.sqrt(sums[1] / n[0]));
    assertEquals(sums[2] / n[0], s.metrics().bias(), 1e-9 * sums[0] / n[0]);
    assertEquals((double) n[1] / n[0], s.metrics().coverage(), 1e-15);
  }

  @Test
  void anEntityOfEmptyTextIsAnEntity() {
    PipelineStep s = step();
    Collector c = new Collector(s);
    PipelineForecastTest.warm(c, new java.util.Random(11), 10);
    long target = T0 + 20 * H;
    c.feed(line("", T0 + 10 * H, target, 9, null));
    c.feed(line("", target + H, target, 9, 15.0));
    assertTrue(c.rejects.isEmpty(), c.rejects.toString());
    assertEquals(1, c.settled.size());
    assertEquals("", c.settled.get(0).hub());
  }

  /** The number of reject counters a checkpoint holds: after magic, version, fingerprint and five counts. */
  private static int counters(byte[] checkpoint) {
    return ByteBuffer.wrap(checkpoint).getInt(4 + 4 + 8 + 5 * 8);
  }

  @Test
  void aCheckpointHoldsTheRejectCountersUpToTheLastReasonCounted() {
    assertEquals(15, RejectReason.REPEATED_ACTUAL.ordinal(), "the reason after the fifteen every checkpoint holds");
    PipelineStep s = step();
    Collector c = new Collector(s);
    c.feed(line("A", T0 + H, T0, 9, 20.0));
    c.feed("{\"hub\":".getBytes(java.nio.charset.StandardCharsets.UTF_8)); // malformed_json, among the first fifteen
    assertEquals(15, counters(s.checkpoint()));
    c.feed(line("A", T0 + H, T0, 9, 20.0)); // repeated_actual
    byte[] checkpoint = s.checkpoint();
    assertEquals(16, counters(checkpoint));
    PipelineStep back = step();
    back.restore(checkpoint);
    assertEquals(1, back.rejected(RejectReason.REPEATED_ACTUAL));
    assertEquals(1, back.rejected(RejectReason.MALFORMED_JSON));
    assertEquals(2, back.rejected());
    assertArrayEquals(checkpoint, back.checkpoint());
  }
}
