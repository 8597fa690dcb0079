package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigException;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.config.TargetPoint;
import dev.runnel.core.config.TargetTransform;
import dev.runnel.core.model.ModelSettings;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Random;
import org.apache.commons.math3.analysis.integration.IterativeLegendreGaussIntegrator;
import org.apache.commons.math3.distribution.LogNormalDistribution;
import org.apache.commons.math3.distribution.NormalDistribution;
import org.junit.jupiter.api.Test;

/**
 * {@code model.target_transform} (docs/model.md, "Transformed target"): the model learns in the
 * transformed scale and publishes in the target's units. The back-transformed interval is the
 * interval of the back-transformed distribution (checked against Commons Math's distributions);
 * the mean correction is the mean of that distribution (checked by Commons Math's numerical
 * integration); the step's published values are exactly the back-transform of a step that learns
 * the transformed target as a plain one; a count target's values never go below 0; a target
 * outside the domain is a reject that changes nothing.
 */
class TargetTransformTest {

  private static TargetScaling scaling(TargetTransform t, TargetPoint p, boolean nonNegative) {
    return new TargetScaling(new PipelineConfig.TargetScale(t, p, nonNegative));
  }

  @Test
  void theBackTransformedIntervalHoldsTheQuantilesOfTheBackTransformedDistribution() {
    TargetScaling log1p = scaling(TargetTransform.LOG1P, TargetPoint.MEDIAN, false);
    TargetScaling sqrt = scaling(TargetTransform.SQRT, TargetPoint.MEDIAN, false);
    double[][] cases = {{0.3, 0.2, 0.9}, {2.1, 0.6, 0.8}, {-0.4, 1.3, 0.95}, {4.0, 0.05, 0.5}};
    for (double[] c : cases) {
      double mu = c[0];
      double s = c[1];
      double level = c[2];
      double z = ModelSettings.zForLevel(level);
      double lo = (1 - level) / 2;
      double hi = (1 + level) / 2;
      // log1p: 1 + Y is log-normal with scale mu and shape s (Commons Math LogNormalDistribution)
      LogNormalDistribution ln = new LogNormalDistribution(mu, s);
      assertEquals(ln.inverseCumulativeProbability(lo) - 1, log1p.back(mu - z * s), 1e-9 * (1 + Math.exp(mu + 3 * s)));
      assertEquals(ln.inverseCumulativeProbability(hi) - 1, log1p.back(mu + z * s), 1e-9 * (1 + Math.exp(mu + 3 * s)));
      assertEquals(ln.inverseCumulativeProbability(0.5) - 1, log1p.point(mu, s), 1e-9 * (1 + Math.exp(mu)));
      // sqrt: Y = max(0, Z)², so P(Y <= y) = P(Z <= √y) for y >= 0 (Commons Math NormalDistribution)
      NormalDistribution nd = new NormalDistribution(mu, s);
      double yHigh = sqrt.back(mu + z * s);
      assertEquals(hi, nd.cumulativeProbability(Math.sqrt(yHigh)), 1e-9);
      double yLow = sqrt.back(mu - z * s);
      if (yLow > 0) {
        assertEquals(lo, nd.cumulativeProbability(Math.sqrt(yLow)), 1e-9);
      } else {
        assertTrue(nd.cumulativeProbability(0) >= lo - 1e-12, "a bound at 0 only where P(Z <= 0) reaches the lower tail");
      }
      // and directly: Commons Math NormalDistribution quantiles, transformed by hand
      double qLo = nd.inverseCumulativeProbability(lo);
      double qHi = nd.inverseCumulativeProbability(hi);
      assertEquals(Math.expm1(qLo), log1p.back(mu - z * s), 1e-9 * (1 + Math.exp(mu + 3 * s)));
      assertEquals(Math.expm1(qHi), log1p.back(mu + z * s), 1e-9 * (1 + Math.exp(mu + 3 * s)));
      assertEquals(qLo > 0 ? qLo * qLo : 0.0, sqrt.back(mu - z * s), 1e-9 * (1 + qHi * qHi));
      assertEquals(qHi > 0 ? qHi * qHi : 0.0, sqrt.back(mu + z * s), 1e-9 * (1 + qHi * qHi));
      double median = Math.max(0, nd.inverseCumulativeProbability(0.5));
      assertEquals(median * median, sqrt.point(mu, s), 1e-9 * (1 + mu * mu));
    }
  }

  @Test
  void theMeanCorrectionIsTheMeanOfTheBackTransformedDistribution() {
    TargetScaling log1p = scaling(TargetTransform.LOG1P, TargetPoint.MEAN, false);
    TargetScaling sqrt = scaling(TargetTransform.SQRT, TargetPoint.MEAN, false);
    IterativeLegendreGaussIntegrator integrator = new IterativeLegendreGaussIntegrator(16, 1e-12, 1e-14);
    double[][] cases = {{0.3, 0.2}, {2.1, 0.6}, {-0.4, 1.3}, {1.0, 2.5}};
    for (double[] c : cases) {
      double mu = c[0];
      double s = c[1];
      // Commons Math LogNormalDistribution's mean: exp(scale + shape²/2)
      assertEquals(new LogNormalDistribution(mu, s).getNumericalMean() - 1, log1p.point(mu, s), 1e-12 * Math.exp(mu + s * s));
      // E[max(0, Z)²] by Commons Math's Legendre-Gauss integration over the normal density
      NormalDistribution nd = new NormalDistribution(mu, s);
      double upper = mu + 12 * s;
      double integral = integrator.integrate(1_000_000, x -> x * x * nd.density(x), Math.max(0, mu - 12 * s), upper);
      assertEquals(integral, sqrt.point(mu, s), 1e-9 * (1 + integral));
      assertTrue(sqrt.point(mu, s) > scaling(TargetTransform.SQRT, TargetPoint.MEDIAN, false).point(mu, s),
          "the mean of a right-skewed distribution lies above its median");
    }
  }

  // ------------------------------------------------------------------ through the step

  static final String CONFIG = """
      name: target-test
      input:
        fields:
          hub: text
          temperature_c: number
          sessions: number
          at: time
        event_time: {field: at, format: epoch_millis}
      target: sessions
      features:
        - {kind: onehot, field: hub}
        - {kind: numeric, field: temperature_c}
      model:
        prior_variance: 10
        interval_level: 0.9
      """;

  static PipelineConfig config(String modelKeys) {
    return ConfigLoader.parse(CONFIG.replace("  interval_level: 0.9\n", "  interval_level: 0.9\n" + modelKeys), "target-test.yaml");
  }

  /** A count stream: Poisson-like sessions whose log-mean is linear in temperature, per hub. */
  static List<byte[]> counts(int n, long seed, boolean transformedByHand) {
    Random r = new Random(seed);
    List<byte[]> out = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      String hub = "H" + (i % 3);
      double temp = 10 + 10 * r.nextDouble();
      double rate = Math.exp(0.2 + 0.1 * temp + 0.3 * (i % 3));
      int k = poisson(r, rate);
      double y = transformedByHand ? StrictMath.log1p(k) : k;
      boolean request = i % 7 == 3;
      String s = String.format(Locale.ROOT, "{\"hub\":\"%s\",\"at\":%d,\"temperature_c\":%s%s}", hub, 1_700_000_000_000L + i * 60_000L,
          Double.toString(temp), request ? "" : ",\"sessions\":" + Double.toString(y));
      out.add(s.getBytes(StandardCharsets.UTF_8));
    }
    return out;
  }

  private static int poisson(Random r, double rate) {
    double l = Math.exp(-rate);
    int k = 0;
    double p = 1;
    do {
      k++;
      p *= r.nextDouble();
    } while (p > l);
    return k - 1;
  }

  record Out(Prediction.Status status, double predicted, double low, double high) { }

  static final class Collect implements PipelineStep.Sink {
    final List<Out> out = new ArrayList<>();
    final List<String> rejects = new ArrayList<>();
    @Override public void prediction(Prediction p, EventRecord record) { out.add(new Out(p.status(), p.predicted(), p.low(), p.high())); }
    @Override public void reject(RejectReason reason, String detail) { rejects.add(reason.id() + ": " + detail); }
    @Override public void snapshotDue() { }
  }

  static Collect run(PipelineConfig c, List<byte[]> lines) {
    PipelineStep step = new PipelineStep(c);
    Collect k = new Collect();
    for (int i = 0; i < lines.size(); i++) step.process(lines.get(i), 0, lines.get(i).length, 0, 0, i, k);
    return k;
  }

  @Test
  void publishedValuesAreTheBackTransformOfAModelThatLearnsTheTransformedTarget() {
    Collect byHand = run(config(""), counts(600, 7, true));
    Collect log1p = run(config("  target_transform: log1p\n"), counts(600, 7, false));
    assertEquals(byHand.out.size(), log1p.out.size());
    int warm = 0;
    for (int i = 0; i < byHand.out.size(); i++) {
      Out a = byHand.out.get(i);
      Out b = log1p.out.get(i);
      assertEquals(a.status(), b.status());
      if (a.status() == Prediction.Status.WARMING_UP) continue;
      warm++;
      // the same model bits in the log scale; published through e^z - 1
      assertEquals(StrictMath.expm1(a.predicted()), b.predicted(), 0.0);
      assertEquals(StrictMath.expm1(a.low()), b.low(), 0.0);
      assertEquals(StrictMath.expm1(a.high()), b.high(), 0.0);
      assertTrue(b.low() <= b.predicted() && b.predicted() <= b.high());
    }
    assertTrue(warm > 500);
  }

  @Test
  void aCountTargetsForecastsAndLowerBoundsNeverGoBelowZero() {
    List<byte[]> lines = counts(800, 11, false);
    // as it is, the linear model of a count gives negative values on some records (the complaint)
    Collect plain = run(config(""), lines);
    assertTrue(plain.out.stream().anyMatch(o -> o.low() < 0), "the check can fail: plain lower bounds go below 0");
    for (String keys : List.of("  target_transform: log1p\n  target_non_negative: true\n", "  target_transform: sqrt\n",
        "  target_transform: sqrt\n  target_point: mean\n", "  target_non_negative: true\n",
        "  target_transform: log1p\n  target_point: mean\n  target_non_negative: true\n")) {
      Collect c = run(config(keys), lines);
      long warm = c.out.stream().filter(o -> o.status() != Prediction.Status.WARMING_UP).count();
      assertTrue(warm > 700, keys);
      for (Out o : c.out) {
        if (o.status() == Prediction.Status.WARMING_UP) continue;
        assertTrue(o.predicted() >= 0 && o.low() >= 0 && o.high() >= o.low(), keys + " " + o);
      }
    }
  }

  @Test
  void theMeanPointLiesAboveTheMedianAndTheIntervalIsTheSame() {
    List<byte[]> lines = counts(300, 5, false);
    Collect median = run(config("  target_transform: log1p\n"), lines);
    Collect mean = run(config("  target_transform: log1p\n  target_point: mean\n"), lines);
    for (int i = 0; i < lines.size(); i++) {
      Out a = median.out.get(i);
      Out b = mean.out.get(i);
      if (a.status() == Prediction.Status.WARMING_UP) continue;
      assertTrue(b.predicted() > a.predicted());
      assertEquals(a.low(), b.low(), 0.0);
      assertEquals(a.high(), b.high(), 0.0);
    }
  }

  @Test
  void aTargetOutsideTheDomainIsARejectThatChangesNothing() {
    for (String[] c : new String[][] {{"  target_transform: log1p\n", "-1.0", "greater than -1"},
        {"  target_transform: log1p\n", "-3.5", "greater than -1"},
        {"  target_transform: sqrt\n", "-0.25", "at least 0 (model.target_transform: sqrt)"},
        {"  target_non_negative: true\n", "-2.0", "at least 0 (model.target_non_negative: true)"}}) {
      PipelineStep step = new PipelineStep(config(c[0]));
      List<byte[]> lines = counts(50, 3, false);
      Collect k = new Collect();
      for (int i = 0; i < lines.size(); i++) step.process(lines.get(i), 0, lines.get(i).length, 0, 0, i, k);
      byte[] before = step.checkpoint();
      byte[] bad = ("{\"hub\":\"H1\",\"at\":1700000999000,\"temperature_c\":12.5,\"sessions\":" + c[1] + "}").getBytes(StandardCharsets.UTF_8);
      step.process(bad, 0, bad.length, 0, 0, 99, k);
      assertEquals(1, k.rejects.size(), c[0]);
      assertTrue(k.rejects.get(0).startsWith("target_out_of_domain: field sessions (the target): " + c[1]), k.rejects.get(0));
      assertTrue(k.rejects.get(0).contains(c[2]), k.rejects.get(0));
      assertEquals(1, step.rejected(RejectReason.TARGET_OUT_OF_DOMAIN));
      // only the record and reject counters moved: restore the state before into a fresh step and count the same
      PipelineStep fresh = new PipelineStep(config(c[0]));
      fresh.restore(before);
      Collect k2 = new Collect();
      fresh.process(bad, 0, bad.length, 0, 0, 99, k2);
      assertArrayEquals(step.checkpoint(), fresh.checkpoint());
      // the new reason's counter is written once it is non-zero, and read back
      PipelineStep again = new PipelineStep(config(c[0]));
      again.restore(step.checkpoint());
      assertEquals(1, again.rejected(RejectReason.TARGET_OUT_OF_DOMAIN));
      // the counters up to its own are written once it is non-zero: 15 always, then one long each up to it
      assertEquals(before.length + 8 * (RejectReason.TARGET_OUT_OF_DOMAIN.ordinal() + 1 - 15), step.checkpoint().length);
      assertNotEquals(before.length, 0);
    }
  }

  @Test
  void theDefaultLeavesTheCheckpointFingerprintAsBeforeAndATransformChangesIt() {
    PipelineStep plain = new PipelineStep(config(""));
    PipelineStep log1p = new PipelineStep(config("  target_transform: log1p\n"));
    PipelineStep explicitNone = new PipelineStep(config("  target_transform: none\n  target_point: median\n"));
    assertArrayEquals(plain.checkpoint(), explicitNone.checkpoint());
    assertThrows(IllegalArgumentException.class, () -> log1p.restore(plain.checkpoint()));
  }

  @Test
  void wrongWordsNameTheKeyAndTheChoices() {
    ConfigException e = assertThrows(ConfigException.class, () -> config("  target_transform: log\n"));
    assertTrue(e.getMessage().contains("model.target_transform") && e.getMessage().contains("none, log1p, sqrt"), e.getMessage());
    ConfigException f = assertThrows(ConfigException.class, () -> config("  target_point: mode\n"));
    assertTrue(f.getMessage().contains("model.target_point") && f.getMessage().contains("median, mean"), f.getMessage());
    assertFalse(config("  target_transform: sqrt\n").targetScale().isNone());
  }
}
