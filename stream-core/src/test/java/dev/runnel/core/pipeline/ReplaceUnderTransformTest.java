package dev.runnel.core.pipeline;

import static dev.runnel.core.pipeline.PipelineForecastTest.H;
import static dev.runnel.core.pipeline.PipelineForecastTest.T0;
import static dev.runnel.core.pipeline.PipelineForecastTest.line;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.PipelineForecastTest.Collector;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * {@code corrections: replace} under {@code model.target_transform: log1p} (a survivor of mutation
 * testing in {@link PipelineStep}'s {@code removeOld}): the model learned the first actual as
 * log1p(y), so that is what is removed; the stream with an actual and its correction then forecasts
 * as the stream in which the first actual never came, as
 * {@link LateRepeatedCorrectedActualsTest#replaceEqualsTheStreamThatNeverHadTheFirstValue_andSettlesItsForecastsAgain}
 * checks without a transform.
 */
class ReplaceUnderTransformTest {

  @Test
  void replaceRemovesTheTransformedValueTheModelLearned() {
    String model = "  prior_variance: 1e8\n  forgetting: {half_life: P2D}\n  target_transform: log1p\n";
    PipelineConfig replace = LateRepeatedCorrectedActualsTest.config("    corrections: replace\n", model);
    long target = T0 + 40 * H;
    List<byte[]> head = new ArrayList<>();
    List<byte[]> tail = new ArrayList<>();
    Random rnd = new Random(61);
    for (int k = 0; k < 40; k++) {
      long hour = T0 + k * H;
      for (String hub : new String[] {"A", "B", "C"}) {
        double temp = 10 + 5 * rnd.nextGaussian();
        head.add(line(hub, hour + H, hour, temp, 30 + PipelineForecastTest.sessions(rnd, hub, hour, temp))); // positive: in log1p's domain
      }
    }
    byte[] first = line("A", T0 + 40 * H, target, 7, 50.0); // at the clock's time: forgets nothing
    for (int k = 41; k < 70; k++) {
      long hour = T0 + k * H;
      for (String hub : new String[] {"A", "B", "C"}) {
        double temp = 10 + 8 * rnd.nextGaussian() + k;
        tail.add(line(hub, hour + H, hour, temp, 30 + PipelineForecastTest.sessions(rnd, hub, hour, temp))); // positive: in log1p's domain
      }
    }
    byte[] correction = line("A", T0 + 70 * H, target, 7, 21.0);
    byte[] probe = line("B", T0 + 70 * H, T0 + 75 * H, 12, null);

    Collector withReplace = LateRepeatedCorrectedActualsTest.run(replace, head, first, tail, correction, probe);
    Collector without = LateRepeatedCorrectedActualsTest.run(replace, head, null, tail, correction, probe);
    assertEquals(1, withReplace.step.replacedActuals());
    double[] got = LateRepeatedCorrectedActualsTest.last(withReplace);
    double[] want = LateRepeatedCorrectedActualsTest.last(without);
    assertTrue(want[1] > 0, "a forecast was given");
    assertEquals(want[1], got[1], 1e-8 * (1 + Math.abs(want[1])), "the probe's forecast after replace");
    // (the interval is not compared: the noise estimate keeps the first actual's a priori error)
  }
}
