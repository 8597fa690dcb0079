package dev.runnel.core.pipeline;

import static dev.runnel.core.pipeline.PipelineForecastTest.CONFIG;
import static dev.runnel.core.pipeline.PipelineForecastTest.H;
import static dev.runnel.core.pipeline.PipelineForecastTest.T0;
import static dev.runnel.core.pipeline.PipelineForecastTest.line;
import static dev.runnel.core.pipeline.PipelineForecastTest.warm;
import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigException;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.PipelineForecastTest.Collector;
import java.io.ByteArrayOutputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Late, repeated and corrected actuals with {@code input.forecast} (docs/forecasting.md): an actual
 * past {@code max_actual_lag} is rejected and changes nothing; one within it is learned without
 * moving the clock or forgetting; a repeat is rejected by the memory of learned keys (bounded by
 * count and by event time) and a replayed feed never counts twice; a correction is rejected, learned
 * as new, or replaced (the old observation removed exactly, its forecasts settled again), per
 * {@code corrections}; and the memory survives a checkpoint bit for bit.
 */
class LateRepeatedCorrectedActualsTest {

  /** The test configuration with extra {@code input.forecast} keys and a model section of its own. */
  static PipelineConfig config(String forecastKeys, String model) {
    String yaml = CONFIG.replace("MAX", "1000")
        .replace("    max_actual_delay: P2D\n", "    max_actual_delay: P2D\n" + forecastKeys);
    if (model != null) {
      yaml = yaml.replace("  prior_variance: 10\n", model);
    }
    return ConfigLoader.parse(yaml, "late-test.yaml");
  }

  /** The state a rejected record must not change: featurizer, model, metrics, drift, clock. */
  static byte[] learnedState(PipelineStep step) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    DataOutputStream out = new DataOutputStream(b);
    step.featurizer().writeTo(out);
    step.model().writeTo(out);
    step.metrics().writeTo(out);
    step.drift().writeTo(out);
    step.clock().writeTo(out);
    out.writeInt(step.learnedActuals());
    out.writeInt(step.pendingForecasts());
    out.flush();
    return b.toByteArray();
  }

  static String lastReject(Collector c) {
    return c.rejects.isEmpty() ? "" : c.rejects.get(c.rejects.size() - 1);
  }

  @Test
  void anActualPastTheAllowanceIsRejectedAndChangesNothing_oneAtTheAllowanceIsLearned() throws IOException {
    PipelineStep step = new PipelineStep(config("    max_actual_lag: P3D\n", null));
    Collector c = new Collector(step);
    warm(c, new Random(31), 100);
    long now = step.clock().nowMillis();
    long target = now - 3 * 24 * H - 1; // one millisecond past three days behind the clock
    c.feed(line("A", now, target + 1 + 2 * H, 8, null)); // a forecast for another hour: stays pending
    byte[] before = learnedState(step);
    long trained = step.trained();
    c.feed(line("Q", now, target, 8, 25.0));
    assertTrue(lastReject(c).startsWith("actual_too_late: "), lastReject(c));
    assertTrue(lastReject(c).contains("input.forecast.max_actual_lag (PT72H)"), lastReject(c));
    assertArrayEquals(before, learnedState(step), "nothing learned, nothing settled, the clock where it was");
    assertEquals(trained, step.trained());
    assertEquals(1, step.rejected(dev.runnel.core.record.RejectReason.ACTUAL_TOO_LATE));
    // exactly at the allowance: learned
    c.feed(line("Q", now, target + 1, 8, 25.0));
    assertEquals(trained + 1, step.trained());
    assertEquals(1, c.rejects.size());
  }

  @Test
  void aLateActualWithinTheAllowanceIsLearnedAtFullWeightWithoutMovingTheClockOrForgetting() throws IOException {
    // forgetting by event time: a record at the clock's time or behind it forgets nothing (lambda = 1)
    PipelineStep step = new PipelineStep(config("", "  prior_variance: 10\n  forgetting: {half_life: P1D}\n"));
    Collector c = new Collector(step);
    warm(c, new Random(32), 60);
    long now = step.clock().nowMillis();
    double nEff = step.model().effectiveSampleSize();
    byte[] scalersBefore = featurizerBytes(step);
    // the actual for an hour 30 hours back arrives now, then one dated 20 hours back arrives (out of order)
    c.feed(line("B", now, now - 30 * H + H / 2, 4, 22.0));
    c.feed(line("C", now - 20 * H, now - 21 * H + H / 2, 4, 21.0));
    assertTrue(c.rejects.isEmpty(), c.rejects.toString());
    assertEquals(now, step.clock().nowMillis(), "the clock stays: neither record is ahead of it");
    assertEquals(nEff + 2.0, step.model().effectiveSampleSize(), 1e-12, "each learned at full weight, nothing forgotten");
    assertFalse(java.util.Arrays.equals(scalersBefore, featurizerBytes(step)), "the scalers learned from them");
  }

  static byte[] featurizerBytes(PipelineStep step) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    step.featurizer().writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  @Test
  void aReplayedFeedNeverCountsTwice() throws IOException {
    List<byte[]> feed = PipelineForecastTest.mixedFeed(41, 40);
    PipelineStep step = new PipelineStep(config("", null));
    Collector c = new Collector(step);
    for (byte[] b : feed) {
      c.feed(b);
    }
    long trained = step.trained();
    long settled = step.settledForecasts();
    byte[] model = learnedModel(step);
    int rejectsBefore = c.rejects.size();
    for (byte[] b : feed) { // the same feed again (a replay, a duplicated topic)
      if (new String(b, StandardCharsets.UTF_8).contains("sessions")) {
        c.feed(b);
      }
    }
    assertEquals(trained, step.trained(), "no actual learned twice");
    assertEquals(settled, step.settledForecasts());
    assertArrayEquals(model, learnedModel(step), "the model is as after the first pass");
    long repeats = step.rejected(dev.runnel.core.record.RejectReason.REPEATED_ACTUAL);
    long late = step.rejected(dev.runnel.core.record.RejectReason.ACTUAL_TOO_LATE);
    assertEquals(c.rejects.size() - rejectsBefore, repeats + late);
    assertTrue(repeats > 50, "repeats rejected: " + repeats);
    // without the memory (max_learned_actuals: 0) the same replay is learned again
    PipelineStep plain = new PipelineStep(config("    max_learned_actuals: 0\n", null));
    Collector d = new Collector(plain);
    for (byte[] b : feed) {
      d.feed(b);
    }
    long once = plain.trained();
    for (byte[] b : feed) {
      if (new String(b, StandardCharsets.UTF_8).contains("sessions")) {
        d.feed(b);
      }
    }
    assertTrue(plain.trained() > once + 50, "learned again without the memory: " + (plain.trained() - once));
  }

  static byte[] learnedModel(PipelineStep step) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    step.model().writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  @Test
  void theMemoryIsBoundedByCountAndByEventTime() {
    PipelineStep step = new PipelineStep(config("    max_learned_actuals: 3\n    max_actual_lag: P3D\n", null));
    Collector c = new Collector(step);
    long t = T0;
    for (int i = 0; i < 5; i++) {
      c.feed(line("H" + i, t + H, t, 10, 20.0 + i));
    }
    assertEquals(3, step.learnedActuals());
    assertEquals(2, step.learnedActualsForgottenEarly(), "H0 and H1 forgotten by the count bound, within the allowance");
    long trained = step.trained();
    c.feed(line("H4", t + H, t, 10, 24.0)); // remembered: rejected
    assertTrue(lastReject(c).startsWith("repeated_actual: "), lastReject(c));
    c.feed(line("H0", t + H, t, 10, 20.0)); // forgotten early: learned again, and it pushes H2 out
    assertEquals(trained + 1, step.trained());
    assertEquals(3, step.learnedActualsForgottenEarly());
    // by event time: a key whose hour is more than max_actual_lag behind the clock is forgotten
    PipelineStep timed = new PipelineStep(config("    max_actual_lag: P3D\n", null));
    Collector d = new Collector(timed);
    for (int i = 0; i < 5; i++) {
      d.feed(line("H" + i, t + H, t, 10, 20.0 + i));
    }
    for (int k = 1; k <= 80; k++) {
      d.feed(line("Z", t + (k + 1) * H, t + k * H, 10, 20.0));
    }
    // the clock is at t + 81 h: H0..H4 (hour t) and Z at t + 1 h .. t + 8 h are more than 72 h behind it
    assertEquals(72, timed.learnedActuals());
    assertEquals(0, timed.learnedActualsForgottenEarly());
  }

  @Test
  void correctionsFollowThePolicy() {
    long target = T0 + 30 * H;
    // reject (the default)
    PipelineStep rej = new PipelineStep(config("", null));
    Collector a = new Collector(rej);
    warm(a, new Random(51), 30);
    a.feed(line("A", target + H, target, 9, 20.0));
    long trained = rej.trained();
    a.feed(line("A", target + 2 * H, target, 9, 23.0));
    assertTrue(lastReject(a).startsWith("corrected_actual: "), lastReject(a));
    assertTrue(lastReject(a).contains("value 20.0, not 23.0"), lastReject(a));
    assertEquals(trained, rej.trained());
    // learn_as_new: learned as one more record; the corrected value is then the one remembered
    PipelineStep asNew = new PipelineStep(config("    corrections: learn_as_new\n", null));
    Collector b = new Collector(asNew);
    warm(b, new Random(51), 30);
    b.feed(line("A", target + H, target, 9, 20.0));
    b.feed(line("A", target + 2 * H, target, 9, 23.0));
    assertEquals(trained + 1, asNew.trained());
    b.feed(line("A", target + 2 * H, target, 9, 23.0));
    assertTrue(lastReject(b).startsWith("repeated_actual: "), lastReject(b));
    // a configuration mistake names the key
    ConfigException e = assertThrows(ConfigException.class,
        () -> config("    max_learned_actuals: 0\n    corrections: replace\n", null));
    assertTrue(e.getMessage().startsWith("input.forecast.corrections: "), e.getMessage());
    e = assertThrows(ConfigException.class, () -> config("    max_actual_lag: P1D\n", null));
    assertTrue(e.getMessage().startsWith("input.forecast.max_actual_lag: ") && e.getMessage().contains("max_actual_delay"), e.getMessage());
  }

  /**
   * Replace removes the first value exactly: with a prior too weak to matter (variance 1e8, so the
   * solution does not depend on the scalers' basis, which differs by the extra record) and
   * forgetting by event time, a stream with an actual and, later, its correction
   * predicts as the same stream in which the first actual never came and the corrected one arrives
   * where the correction did. The old actual arrives at the clock's time (it forgets nothing), so
   * the two streams' clocks and forgetting agree; between it and its correction the scalers re-base
   * many times and forgetting decays it. Learning the correction as new does not pass this check.
   */
  @Test
  void replaceEqualsTheStreamThatNeverHadTheFirstValue_andSettlesItsForecastsAgain() {
    String model = "  prior_variance: 1e8\n  forgetting: {half_life: P2D}\n";
    PipelineConfig replace = config("    corrections: replace\n", model);
    PipelineConfig asNew = config("    corrections: learn_as_new\n", model);
    long target = T0 + 40 * H;
    List<byte[]> head = new ArrayList<>();
    List<byte[]> tail = new ArrayList<>();
    Random rnd = new Random(61);
    for (int k = 0; k < 40; k++) {
      long hour = T0 + k * H;
      for (String hub : new String[] {"A", "B", "C"}) {
        double temp = 10 + 5 * rnd.nextGaussian();
        head.add(line(hub, hour + H, hour, temp, PipelineForecastTest.sessions(rnd, hub, hour, temp)));
      }
    }
    head.add(line("A", T0 + 20 * H, target, 7, null)); // a forecast for (A, target), issued ahead
    byte[] first = line("A", T0 + 40 * H, target, 7, 50.0); // at the clock's time: forgets nothing
    for (int k = 41; k < 70; k++) {
      long hour = T0 + k * H;
      for (String hub : new String[] {"A", "B", "C"}) {
        double temp = 10 + 8 * rnd.nextGaussian() + k; // the temperature scaler re-bases as it drifts
        tail.add(line(hub, hour + H, hour, temp, PipelineForecastTest.sessions(rnd, hub, hour, temp)));
      }
    }
    byte[] correction = line("A", T0 + 70 * H, target, 7, 21.0);
    byte[] probe = line("B", T0 + 70 * H, T0 + 75 * H, 12, null);

    Collector withReplace = run(replace, head, first, tail, correction, probe);
    Collector without = run(replace, head, null, tail, correction, probe);
    Collector withAsNew = run(asNew, head, first, tail, correction, probe);
    double[] got = last(withReplace);
    double[] want = last(without);
    double[] asNewGot = last(withAsNew);
    assertEquals(want[1], got[1], 1e-8 * (1 + Math.abs(want[1])), "the probe's forecast after replace");
    assertTrue(Math.abs(asNewGot[1] - want[1]) > 1e-4, "learning as new keeps the first value's pull: " + asNewGot[1] + " vs " + want[1]);
    assertEquals(1, withReplace.step.replacedActuals());
    // the forecast settled by the first value is settled again against the correction
    List<PipelineForecastTest.Settled> s = withReplace.settled;
    assertEquals(2, s.size());
    assertEquals(50.0, s.get(0).actual());
    assertEquals(21.0, s.get(1).actual());
    assertEquals(s.get(0).forecast(), s.get(1).forecast(), "the forecast as issued");
    assertEquals(1, withReplace.step.resettledForecasts());
    String json = new String(withReplace.all.toByteArray(), StandardCharsets.UTF_8);
    assertTrue(json.contains("\"correction\":true,\"replaced_actual\":50.0,"), "a settled record marked as a correction");
    assertEquals(1, json.split("\"correction\":true", -1).length - 1);
  }

  static Collector run(PipelineConfig cfg, List<byte[]> head, byte[] first, List<byte[]> tail, byte[] correction, byte[] probe) {
    PipelineStep step = new PipelineStep(cfg);
    Collector c = new Collector(step);
    head.forEach(c::feed);
    if (first != null) {
      c.feed(first);
    }
    tail.forEach(c::feed);
    c.feed(correction);
    c.feed(probe);
    assertTrue(c.rejects.isEmpty(), c.rejects.toString());
    return c;
  }

  static double[] last(Collector c) {
    return c.predictions.get(c.predictions.size() - 1);
  }

  /** A feed with repeats, corrections and late actuals mixed in, split at random points: the memory is part of the checkpoint. */
  @Test
  void theMemorySurvivesACheckpointBitForBit() {
    for (String policy : new String[] {"reject", "learn_as_new", "replace"}) {
      PipelineConfig cfg = config("    max_learned_actuals: 150\n    corrections: " + policy + "\n    max_actual_lag: P3D\n", null);
      List<byte[]> base = PipelineForecastTest.mixedFeed(71, 100);
      Random rnd = new Random(72);
      List<byte[]> feed = new ArrayList<>();
      for (byte[] b : base) {
        feed.add(b);
        String text = new String(b, StandardCharsets.UTF_8);
        if (text.contains("sessions") && rnd.nextInt(6) == 0) {
          int back = Math.max(0, feed.size() - 1 - rnd.nextInt(60));
          byte[] earlier = feed.get(back);
          String e = new String(earlier, StandardCharsets.UTF_8);
          if (e.contains("sessions")) {
            // a repeat, or a correction of an earlier actual (the value changed by one)
            feed.add(rnd.nextBoolean() ? earlier : e.replace("\"sessions\":", "\"sessions\":1").getBytes(StandardCharsets.UTF_8));
          }
        }
      }
      PipelineStep whole = new PipelineStep(cfg);
      byte[] expected = PipelineForecastTest.run(whole, feed, 0, feed.size());
      assertTrue(whole.rejected(dev.runnel.core.record.RejectReason.REPEATED_ACTUAL) > 10, policy);
      assertTrue(whole.learnedActualsForgottenEarly() > 0, policy + ": the count bound was reached");
      if (policy.equals("replace")) {
        assertTrue(whole.replacedActuals() > 10 && whole.resettledForecasts() > 0,
            "replaced " + whole.replacedActuals() + ", settled again " + whole.resettledForecasts());
      }
      for (int trial = 0; trial < 3; trial++) {
        int split = 1 + rnd.nextInt(feed.size() - 2);
        PipelineStep first = new PipelineStep(cfg);
        ByteArrayOutputStream got = new ByteArrayOutputStream();
        got.writeBytes(PipelineForecastTest.run(first, feed, 0, split));
        byte[] checkpoint = first.checkpoint();
        assertEquals(6, java.nio.ByteBuffer.wrap(checkpoint, 4, 4).getInt());
        PipelineStep second = new PipelineStep(cfg);
        second.restore(checkpoint);
        assertArrayEquals(checkpoint, second.checkpoint(), policy + ": a restored step writes the checkpoint it read");
        got.writeBytes(PipelineForecastTest.run(second, feed, split, feed.size()));
        assertArrayEquals(expected, got.toByteArray(), policy + ": split at " + split);
        assertArrayEquals(whole.checkpoint(), second.checkpoint(), policy + ": final checkpoint, split at " + split);
      }
      // a checkpoint with the memory is refused by a configuration with another kind of memory
      if (policy.equals("replace")) {
        PipelineStep other = new PipelineStep(config("    max_actual_lag: P3D\n", null));
        IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> other.restore(whole.checkpoint()));
        assertTrue(e.getMessage().contains("corrections"), e.getMessage());
      }
    }
  }

  /**
   * A version 4 checkpoint (pending forecasts, no memory) restores with an empty memory. Made from a
   * version 6 one without the memory: its horizon tables cut gives version 5, whose trailer is then
   * two bytes (no memory, no replace state): cut them and write version 4, the layout version 4 had.
   */
  @Test
  void aVersion4CheckpointRestoresWithAnEmptyMemory() throws java.io.IOException {
    PipelineStep without = new PipelineStep(config("    max_learned_actuals: 0\n", null));
    Collector c = new Collector(without);
    warm(c, new Random(81), 30);
    c.feed(line("A", T0 + 30 * H, T0 + 40 * H, 9, null)); // a pending forecast
    byte[] v6 = without.checkpoint();
    // version 6 adds the horizon tables at the end: without them it is version 5
    byte[] v5 = java.util.Arrays.copyOf(v6, v6.length - HorizonMetricsTest.bytes(without.horizonMetrics()).length);
    assertEquals(0, v5[v5.length - 1]);
    assertEquals(0, v5[v5.length - 2]);
    byte[] v4 = java.util.Arrays.copyOf(v5, v5.length - 2);
    java.nio.ByteBuffer.wrap(v4).putInt(4, 4);
    PipelineStep step = new PipelineStep(config("", null));
    step.restore(v4);
    assertEquals(without.trained(), step.trained());
    assertEquals(1, step.pendingForecasts());
    assertEquals(0, step.learnedActuals());
    // the memory starts from here: an actual learned before the checkpoint is learned again, once
    Collector d = new Collector(step);
    d.feed(line("A", T0 + 30 * H, T0 + 29 * H, 9, 20.0));
    d.feed(line("A", T0 + 30 * H, T0 + 29 * H, 9, 20.0));
    assertEquals(without.trained() + 1, step.trained());
    assertTrue(lastReject(d).startsWith("repeated_actual: "), lastReject(d));
  }
}
