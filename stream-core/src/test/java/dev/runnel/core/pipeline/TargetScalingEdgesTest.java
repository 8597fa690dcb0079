package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.config.TargetPoint;
import dev.runnel.core.config.TargetTransform;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Random;
import java.util.function.DoubleUnaryOperator;
import org.junit.jupiter.api.Test;

/**
 * The parts of {@code model.target_transform} that {@link TargetTransformTest} leaves open (survivors
 * of mutation testing in {@link TargetScaling}): with {@code sqrt} the step publishes exactly the
 * back-transform ({@code max(0, z)²}) of a step that learns √y as a plain target; with
 * {@code target_non_negative} alone the model learns y itself and only the published values are
 * cut at 0; a {@code log1p} mean below 0 is cut at 0 under {@code target_non_negative}; and the
 * {@code sqrt} mean of a distribution of sd 0 is its centre squared (0 at a centre of 0).
 */
class TargetScalingEdgesTest {

  private static TargetScaling scaling(TargetTransform t, TargetPoint p, boolean nonNegative) {
    return new TargetScaling(new PipelineConfig.TargetScale(t, p, nonNegative));
  }

  /** A count stream (as {@link TargetTransformTest#counts}) with the target written through {@code f}. */
  private static List<byte[]> counts(int n, long seed, DoubleUnaryOperator f) {
    Random r = new Random(seed);
    List<byte[]> out = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      String hub = "H" + (i % 3);
      double temp = 10 + 10 * r.nextDouble();
      double mean = 0.5 + 0.3 * (temp - 15) + 0.8 * (i % 3); // near 0: a linear model goes below it
      int k = (int) Math.max(0, Math.round(mean + 1.5 * r.nextGaussian()));
      boolean request = i % 7 == 3;
      String s = String.format(Locale.ROOT, "{\"hub\":\"%s\",\"at\":%d,\"temperature_c\":%s%s}", hub,
          1_700_000_000_000L + i * 60_000L, Double.toString(temp),
          request ? "" : ",\"sessions\":" + Double.toString(f.applyAsDouble(k)));
      out.add(s.getBytes(StandardCharsets.UTF_8));
    }
    return out;
  }

  private static double squaredAbove0(double z) {
    return z > 0 ? z * z : 0.0;
  }

  @Test
  void sqrtPublishesTheBackTransformOfAModelThatLearnsTheRootAsAPlainTarget() {
    TargetTransformTest.Collect byHand = TargetTransformTest.run(TargetTransformTest.config(""), counts(500, 3, Math::sqrt));
    TargetTransformTest.Collect sqrt = TargetTransformTest.run(
        TargetTransformTest.config("  target_transform: sqrt\n"), counts(500, 3, k -> k));
    assertEquals(byHand.out.size(), sqrt.out.size());
    int warm = 0;
    int cut = 0;
    for (int i = 0; i < byHand.out.size(); i++) {
      TargetTransformTest.Out a = byHand.out.get(i);
      TargetTransformTest.Out b = sqrt.out.get(i);
      assertEquals(a.status(), b.status());
      if (a.status() == Prediction.Status.WARMING_UP) {
        continue;
      }
      warm++;
      cut += a.low() < 0 ? 1 : 0;
      // the same model bits in the root scale; published through max(0, z)² (the median)
      assertEquals(squaredAbove0(a.predicted()), b.predicted(), 0.0, "record " + i);
      assertEquals(squaredAbove0(a.low()), b.low(), 0.0, "record " + i);
      assertEquals(squaredAbove0(a.high()), b.high(), 0.0, "record " + i);
    }
    assertTrue(warm > 400);
    assertTrue(cut > 0, "the check can fail: some lower ends in the root scale are below 0");
  }

  @Test
  void nonNegativeAloneLearnsTheTargetItselfAndCutsOnlyThePublishedValues() {
    List<byte[]> lines = counts(500, 5, k -> k);
    TargetTransformTest.Collect plain = TargetTransformTest.run(TargetTransformTest.config(""), lines);
    TargetTransformTest.Collect cut = TargetTransformTest.run(TargetTransformTest.config("  target_non_negative: true\n"), lines);
    assertEquals(plain.out.size(), cut.out.size());
    int below = 0;
    for (int i = 0; i < plain.out.size(); i++) {
      TargetTransformTest.Out a = plain.out.get(i);
      TargetTransformTest.Out b = cut.out.get(i);
      assertEquals(a.status(), b.status());
      if (a.status() == Prediction.Status.WARMING_UP) {
        continue;
      }
      below += a.low() < 0 ? 1 : 0;
      assertEquals(Math.max(0.0, a.predicted()), b.predicted(), 0.0, "record " + i);
      assertEquals(Math.max(0.0, a.low()), b.low(), 0.0, "record " + i);
      assertEquals(Math.max(0.0, a.high()), b.high(), 0.0, "record " + i);
    }
    assertTrue(below > 0, "the check can fail: the plain model gives lower ends below 0");
  }

  @Test
  void aLog1pMeanBelowZeroIsCutAtZeroOnlyUnderNonNegative() {
    // e^(mu + s²/2) − 1 with mu = −2, s = 0.5: e^(−1.875) − 1 ≈ −0.847 (common practice: the log-normal mean)
    double free = scaling(TargetTransform.LOG1P, TargetPoint.MEAN, false).point(-2.0, 0.5);
    assertEquals(StrictMath.expm1(-1.875), free, 0.0);
    assertTrue(free < 0);
    assertEquals(0.0, scaling(TargetTransform.LOG1P, TargetPoint.MEAN, true).point(-2.0, 0.5), 0.0);
    assertEquals(StrictMath.expm1(0.625), scaling(TargetTransform.LOG1P, TargetPoint.MEAN, true).point(0.5, 0.5), 0.0);
    // the median and the interval's ends are cut the same way
    assertEquals(0.0, scaling(TargetTransform.LOG1P, TargetPoint.MEDIAN, true).back(-0.5), 0.0);
    assertEquals(-2.0, scaling(TargetTransform.NONE, TargetPoint.MEDIAN, false).back(-2.0), 0.0);
    assertEquals(0.0, scaling(TargetTransform.NONE, TargetPoint.MEDIAN, true).back(-2.0), 0.0);
    assertEquals(2.0, scaling(TargetTransform.NONE, TargetPoint.MEDIAN, true).forward(2.0), 0.0);
  }

  @Test
  void theSqrtMeanOfAPointMassIsItsCentreSquared() {
    // E[max(0, Z)²] with Z = mu exactly: mu² above 0, else 0
    TargetScaling mean = scaling(TargetTransform.SQRT, TargetPoint.MEAN, false);
    assertEquals(2.25, mean.point(1.5, 0.0), 0.0);
    assertEquals(0.0, mean.point(-1.5, 0.0), 0.0);
    assertEquals(0.0, mean.point(0.0, 0.0), 0.0);
    assertEquals(1.5, mean.forward(2.25), 0.0);
  }

  @Test
  void theStepsLog1pMeanIsTheLogNormalMeanOfItsOwnMedianAndInterval() {
    // the same stream learned as log1p(y) by a plain step gives mu (its point) and s (half-width / z)
    List<byte[]> byHandLines = counts(400, 9, StrictMath::log1p);
    TargetTransformTest.Collect byHand = TargetTransformTest.run(TargetTransformTest.config(""), byHandLines);
    TargetTransformTest.Collect mean = TargetTransformTest.run(
        TargetTransformTest.config("  target_transform: log1p\n  target_point: mean\n"), counts(400, 9, k -> k));
    double z = dev.runnel.core.model.ModelSettings.zForLevel(0.9);
    int warm = 0;
    for (int i = 0; i < byHand.out.size(); i++) {
      TargetTransformTest.Out a = byHand.out.get(i);
      if (a.status() == Prediction.Status.WARMING_UP) {
        continue;
      }
      warm++;
      double mu = a.predicted();
      double s = (a.high() - a.low()) / (2 * z);
      // e^(mu + s²/2) − 1 (common practice: the log-normal mean)
      double want = StrictMath.expm1(mu + 0.5 * s * s);
      assertEquals(want, mean.out.get(i).predicted(), 1e-9 * (1 + Math.abs(want)), "record " + i);
    }
    assertTrue(warm > 300);
  }
}
