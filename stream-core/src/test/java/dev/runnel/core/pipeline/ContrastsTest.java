package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.Locale;
import java.util.Random;
import org.apache.commons.math3.linear.RealMatrix;
import org.apache.commons.math3.stat.regression.OLSMultipleLinearRegression;
import org.junit.jupiter.api.Test;

/**
 * Contrasts of a one-hot feature's levels against the mean of its levels, with standard errors
 * from the model's covariance, checked against an independent least-squares fit of the same rows
 * (Commons Math {@code OLSMultipleLinearRegression}, QR) in a full-rank parametrization: a
 * constant, the first four gates as dummies (gate G4 the dropped reference) and x. The contrasts
 * do not depend on the parametrization, so both must agree.
 */
class ContrastsTest {

  static final String CONFIG = """
      name: contrasts
      input:
        fields: {gate: text, x: number, y: number, at: time}
        event_time: {field: at, format: iso8601}
      target: y
      features:
        - {kind: onehot, field: gate, max_levels: 10}
        - {kind: numeric, field: x}
      model:
        prior_variance: 1000000
      drift:
        contrast_levels: %d
      """;

  static final double[] GATE = {0.0, 0.4, -0.3, 1.2, 0.1};

  @Test
  void levelEffectsAgainstTheMeanAndTheirCovarianceAgreeWithOrdinaryLeastSquares() throws Exception {
    int n = 3000;
    Random rnd = new Random(17);
    PipelineStep step = new PipelineStep(ConfigLoader.parse(CONFIG.formatted(5), "contrasts.yaml"));
    double[][] rows = new double[n][6];
    double[] ys = new double[n];
    long t = Instant.parse("2026-03-01T00:00:00Z").toEpochMilli();
    PipelineStep.Sink sink = new PipelineStep.Sink() {
      @Override public void prediction(Prediction p, EventRecord r) { }
      @Override public void reject(RejectReason reason, String detail) { throw new AssertionError(detail); }
      @Override public void snapshotDue() { }
    };
    for (int i = 0; i < n; i++) {
      int g = rnd.nextInt(10) < 4 ? 0 : 1 + rnd.nextInt(4); // G0 most frequent
      double x = 3 + rnd.nextGaussian();
      double y = 2 + GATE[g] + 0.7 * x + 0.5 * rnd.nextGaussian();
      rows[i][0] = 1;
      for (int d = 0; d < 4; d++) {
        rows[i][1 + d] = g == d ? 1 : 0;
      }
      rows[i][5] = x;
      ys[i] = y;
      byte[] b = String.format(Locale.ROOT, "{\"gate\":\"G%d\",\"x\":%.17g,\"y\":%.17g,\"at\":\"%s\"}", g, x, y,
          Instant.ofEpochMilli(t + 60_000L * i)).getBytes(StandardCharsets.UTF_8);
      step.process(b, 0, b.length, 0L, 0, i, sink);
    }
    Snapshot s = step.snapshot();
    assertEquals(1, s.contrasts().size());
    Snapshot.Contrasts c = s.contrasts().get(0);
    assertEquals(5, c.levelsTotal());
    assertEquals("G0", c.levels().get(0).level(), "the most recorded level first");

    // reference: Commons Math OLS with a constant, dummies for G0..G3 (G4 = 0) and x; the rows'
    // x as the pipeline parsed them (17 significant digits: the same doubles)
    OLSMultipleLinearRegression ols = new OLSMultipleLinearRegression();
    ols.setNoIntercept(true);
    ols.newSampleData(ys, rows);
    double[] beta = ols.estimateRegressionParameters();
    double s2 = ols.estimateErrorVariance();
    double[][] v = ols.estimateRegressionParametersVariance(); // (XᵀX)⁻¹, to be scaled by s²
    // level effect in this parametrization: G0..G3 → beta[1..4], G4 → 0; contrast vs the mean of the five
    double[][] cv = new double[5][6];
    for (int g = 0; g < 5; g++) {
      for (int h = 0; h < 4; h++) {
        cv[g][1 + h] = (g == h ? 1.0 : 0.0) - 1.0 / 5;
      }
    }
    int k = c.levels().size();
    for (int a = 0; a < k; a++) {
      Snapshot.LevelContrast l = c.levels().get(a);
      int g = Integer.parseInt(l.level().substring(1));
      double effect = 0;
      for (int j = 0; j < 6; j++) {
        effect += cv[g][j] * beta[j];
      }
      // the model has a prior of variance 10⁶ per standardized weight and counts its own columns
      // (constant + five levels + x = 7) in the residual degrees of freedom where OLS counts 6:
      // agreement to about 1e-4 relative is what that leaves
      assertEquals(effect, l.effect(), 1e-5, l.level() + " effect");
      for (int b = 0; b < k; b++) {
        int h = Integer.parseInt(c.levels().get(b).level().substring(1));
        double cov = 0;
        for (int i = 0; i < 6; i++) {
          for (int j = 0; j < 6; j++) {
            cov += cv[g][i] * v[i][j] * cv[h][j];
          }
        }
        cov *= s2;
        assertEquals(cov, c.covariance()[a * k + b], 1e-3 * Math.abs(cov) + 1e-12, l.level() + "×" + h + " covariance");
      }
      assertTrue(l.standardError() > 0 && l.standardError() < 0.1, l + ": a contrast is known far better than the prior");
    }
    // G3 (true +1.2) against G4 (true +0.1): far apart in standard errors of their difference
    int g3 = indexOf(c, "G3");
    int g4 = indexOf(c, "G4");
    double diff = c.levels().get(g3).effect() - c.levels().get(g4).effect();
    assertTrue(diff / c.differenceStandardError(g3, g4) > 10, "G3 − G4 = " + diff);

    // the snapshot JSON carries them; a step without contrast_levels writes no "contrasts" key
    JsonNode js = new ObjectMapper().readTree(new OutputJson("contrasts", 0.9).snapshot(s, 0));
    assertEquals(5, js.path("contrasts").get(0).path("levels").size());
    assertEquals(c.levels().get(0).standardError(), js.path("contrasts").get(0).path("levels").get(0).path("std_error").asDouble(), 1e-15);
    PipelineStep off = new PipelineStep(ConfigLoader.parse(CONFIG.formatted(0), "contrasts.yaml"));
    byte[] b = "{\"gate\":\"G0\",\"x\":1,\"y\":2,\"at\":\"2026-03-01T00:00:00Z\"}".getBytes(StandardCharsets.UTF_8);
    off.process(b, 0, b.length, 0L, 0, 0, sink);
    assertTrue(new ObjectMapper().readTree(new OutputJson("contrasts", 0.9).snapshot(off.snapshot(), 0)).path("contrasts").isMissingNode());
  }

  @Test
  void onlyTheMostRecordedLevelsAreShown() {
    PipelineStep step = new PipelineStep(ConfigLoader.parse(CONFIG.formatted(2), "contrasts.yaml"));
    Random rnd = new Random(5);
    PipelineStep.Sink sink = new PipelineStep.Sink() {
      @Override public void prediction(Prediction p, EventRecord r) { }
      @Override public void reject(RejectReason reason, String detail) { throw new AssertionError(detail); }
      @Override public void snapshotDue() { }
    };
    for (int i = 0; i < 500; i++) {
      int g = i % 10 < 5 ? 3 : i % 10 < 8 ? 1 : i % 2 == 0 ? 0 : 2;
      byte[] b = String.format(Locale.ROOT, "{\"gate\":\"G%d\",\"x\":%.6f,\"y\":%.6f,\"at\":\"%s\"}", g, rnd.nextGaussian(),
          rnd.nextGaussian(), Instant.ofEpochSecond(1_800_000_000L + 60L * i)).getBytes(StandardCharsets.UTF_8);
      step.process(b, 0, b.length, 0L, 0, i, sink);
    }
    Snapshot.Contrasts c = step.snapshot().contrasts().get(0);
    assertEquals(4, c.levelsTotal());
    assertEquals(2, c.levels().size());
    assertEquals("G3", c.levels().get(0).level());
    assertEquals("G1", c.levels().get(1).level());
  }

  private static int indexOf(Snapshot.Contrasts c, String level) {
    for (int i = 0; i < c.levels().size(); i++) {
      if (c.levels().get(i).level().equals(level)) {
        return i;
      }
    }
    throw new AssertionError(level);
  }
}
