package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import org.apache.commons.math3.distribution.NormalDistribution;
import org.junit.jupiter.api.Test;

/**
 * The pipeline's two prediction intervals — for a record with its target (scored a priori) and
 * for a record without it (a forecast request) — at high leverage, against an independent formula.
 *
 * <p>One unscaled numeric column and a constant, λ = 1 and no prior: the model is ordinary least
 * squares over the records so far, so a new point {@code x0} has the prediction
 * {@code a + b x0} and the leverage {@code 1/n + (x0 − x̄)² / Sxx} of simple linear regression
 * (common practice), and the half-width {@code z s √(1 + leverage)} with {@code z} the normal
 * quantile of {@code (1 + level)/2} (Commons Math {@link NormalDistribution}). The noise sd
 * {@code s} is the model's own before the record (its estimate is checked elsewhere); the
 * leverage, the prediction and the quantile are computed here from the data alone. Points far
 * outside the data give leverages from about 1 to over 1000, where {@code √(1 + h)} differs from
 * {@code √(1 − h)}, {@code √h}, {@code 1 + h} or the half-width without {@code z} by far more than
 * rounding.
 */
class PipelineIntervalLeverageTest {

  private static final double LEVEL = 0.8;

  private static PipelineStep step() {
    String yaml = """
        name: leverage
        input:
          fields:
            y: number
            x: number
        target: y
        features:
          - {kind: numeric, field: x, scaling: none}
        model:
          constant_term: true
          prior_variance: no_prior
          interval_level: 0.8
        outputs:
          snapshot_every_records: 0
        """;
    PipelineConfig cfg = ConfigLoader.parse(yaml, "leverage.yaml");
    return new PipelineStep(cfg);
  }

  /** The last prediction a step handed to its sink, copied. */
  private static final class Last implements PipelineStep.Sink {
    Prediction.Status status;
    double predicted;
    double low;
    double high;

    @Override public void prediction(Prediction p, EventRecord r) {
      status = p.status();
      predicted = p.predicted();
      low = p.low();
      high = p.high();
    }

    @Override public void reject(RejectReason reason, String detail) {
      throw new AssertionError("rejected: " + reason + " " + detail);
    }

    @Override public void snapshotDue() { }
  }

  private static void feed(PipelineStep step, String json, long line, Last sink) {
    byte[] b = json.getBytes(StandardCharsets.UTF_8);
    step.process(b, 0, b.length, 0L, -1, line, sink);
  }

  @Test void scoredAndForecastIntervals_atHighLeverage_matchTheRegressionFormula() {
    PipelineStep step = step();
    Last sink = new Last();
    double z = new NormalDistribution(0, 1).inverseCumulativeProbability((1 + LEVEL) / 2); // Commons Math
    List<double[]> seen = new ArrayList<>();
    long line = 0;
    // a noisy line on x in [0, 2): y = 3 - 0.5 x + noise (a fixed pseudo-random sequence)
    java.util.Random r = new java.util.Random(21);
    for (int i = 0; i < 30; i++) {
      double x = 2.0 * r.nextDouble();
      double y = 3.0 - 0.5 * x + 0.2 * r.nextGaussian();
      feed(step, "{\"y\":" + y + ",\"x\":" + x + "}", ++line, sink);
      seen.add(new double[] {x, y});
    }
    assertEquals(Prediction.Status.SCORED, sink.status, "ready and with a noise estimate after 30 records");
    double[] far = {-3.0, 7.5, 40.0, 120.0};
    int checked = 0;
    for (double x0 : far) {
      for (boolean withTarget : new boolean[] {false, true}) {
        double s = step.model().noiseSd();
        double[] ols = ols(seen);
        double n = seen.size();
        double lev = 1.0 / n + (x0 - ols[2]) * (x0 - ols[2]) / ols[3];
        double predicted = ols[0] + ols[1] * x0;
        double half = z * s * Math.sqrt(1.0 + lev);
        assertTrue(lev > 1.0, "a high-leverage point: " + lev);
        double y0 = predicted + 0.3; // a target near the line, so the fit stays sane for the next point
        if (withTarget) {
          feed(step, "{\"y\":" + y0 + ",\"x\":" + x0 + "}", ++line, sink);
          assertEquals(Prediction.Status.SCORED, sink.status);
        } else {
          feed(step, "{\"x\":" + x0 + "}", ++line, sink);
          assertEquals(Prediction.Status.FORECAST, sink.status);
        }
        String at = (withTarget ? "scored" : "forecast") + " x0=" + x0 + " leverage " + lev;
        assertEquals(predicted, sink.predicted, 1e-9 * Math.max(1, Math.abs(predicted)), at + ": prediction");
        assertEquals(half, (sink.high - sink.low) / 2, 1e-9 * half, at + ": half-width z s sqrt(1 + leverage)");
        assertEquals(predicted, (sink.high + sink.low) / 2, 1e-9 * Math.max(1, Math.abs(predicted)), at + ": centred on the prediction");
        if (withTarget) {
          seen.add(new double[] {x0, y0});
        }
        checked++;
      }
    }
    assertEquals(8, checked);
  }

  /**
   * A snapshot's raw-unit weights and standard errors of a standardized column against simple
   * linear regression on the raw data: slope {@code Sxy/Sxx} with standard error
   * {@code s/√Sxx}, intercept {@code ȳ − b x̄} with {@code s √(1/n + x̄²/Sxx)}, and
   * {@code s = √(SSE/(n − 2))} (closed forms; common practice). The column's scaler centres and
   * scales it, so the intercept's raw standard error needs the covariance of both weights.
   */
  @Test void snapshotRawWeightsAndStandardErrors_matchSimpleRegression() {
    PipelineConfig cfg = ConfigLoader.parse("""
        name: raw
        input:
          fields:
            y: number
            x: number
        target: y
        features:
          - {kind: numeric, field: x, scaling: standardize}
        model:
          prior_variance: no_prior
        outputs:
          snapshot_every_records: 0
        """, "raw.yaml");
    PipelineStep step = new PipelineStep(cfg);
    Last sink = new Last();
    java.util.Random r = new java.util.Random(5);
    List<double[]> pts = new ArrayList<>();
    for (int i = 0; i < 60; i++) {
      double x = 40.0 + 15.0 * r.nextDouble();
      double y = -7.0 + 0.35 * x + 0.8 * r.nextGaussian();
      feed(step, "{\"y\":" + y + ",\"x\":" + x + "}", i + 1, sink);
      pts.add(new double[] {x, y});
    }
    double[] ols = ols(pts);
    double n = pts.size();
    double sse = 0;
    for (double[] p : pts) {
      double e = p[1] - ols[0] - ols[1] * p[0];
      sse += e * e;
    }
    double sd = Math.sqrt(sse / (n - 2));
    Snapshot snap = step.snapshot();
    assertEquals(sd, snap.residualSd(), 1e-9 * sd, "residual sd");
    Snapshot.Column constant = snap.columns().get(0);
    Snapshot.Column slope = snap.columns().get(1);
    assertEquals("constant", constant.name());
    assertEquals(ols[1], slope.rawWeight(), 1e-9 * Math.abs(ols[1]), "raw slope");
    assertEquals(ols[0], constant.rawWeight(), 1e-9 * Math.abs(ols[0]), "raw intercept");
    double seSlope = sd / Math.sqrt(ols[3]);
    double seIntercept = sd * Math.sqrt(1.0 / n + ols[2] * ols[2] / ols[3]);
    assertEquals(seSlope, slope.rawStandardError(), 1e-8 * seSlope, "raw standard error of the slope");
    assertEquals(seIntercept, constant.rawStandardError(), 1e-8 * seIntercept, "raw standard error of the intercept");
    // the standardized basis: the slope per standardized unit is the raw slope times the scale
    assertEquals(ols[1] * slope.scale(), slope.weight(), 1e-9 * Math.abs(slope.weight()), "weight in the model's basis");
    assertEquals(seSlope * slope.scale(), slope.standardError(), 1e-8 * slope.standardError(), "its standard error");
  }

  /** Intercept, slope, mean of x and Sxx of simple linear regression (closed form; common practice). */
  private static double[] ols(List<double[]> pts) {
    double n = pts.size();
    double mx = 0;
    double my = 0;
    for (double[] p : pts) {
      mx += p[0];
      my += p[1];
    }
    mx /= n;
    my /= n;
    double sxx = 0;
    double sxy = 0;
    for (double[] p : pts) {
      sxx += (p[0] - mx) * (p[0] - mx);
      sxy += (p[0] - mx) * (p[1] - my);
    }
    double b = sxy / sxx;
    return new double[] {my - b * mx, b, mx, sxx};
  }
}
