package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import org.junit.jupiter.api.Test;

/**
 * The raw constant's standard error when the running scaler's centre is stale: the scaler's
 * equal-weight mean lags a level shift of the numeric feature while the forgetting model weighs
 * the recent rows, which in its basis are far from 0, so the covariance of the constant and the
 * slope is far from 0 and the sign of the transformation's cross term matters (without forgetting
 * the cross term is about 0 and either sign agrees).
 *
 * <p>Reference (common practice, the variance of a linear combination): the raw constant is
 * {@code w0 − w1 m / s}, a linear combination {@code c = (1, −m/s)} of the model's weights, so its
 * standard error is {@code σ √(cᵀ C c)} with {@code C} the model's unscaled covariance and
 * {@code σ} its residual sd. Computed here by hand from the snapshot's own centre and scale.
 */
class SnapshotStaleCentreTest {

  private static final class Quiet implements PipelineStep.Sink {
    @Override public void prediction(Prediction p, EventRecord r) { }

    @Override public void reject(RejectReason reason, String detail) {
      throw new AssertionError("rejected: " + reason + " " + detail);
    }

    @Override public void snapshotDue() { }
  }

  @Test void rawConstantStandardError_afterALevelShift_isTheCovarianceTransformedByHand() {
    PipelineConfig cfg = ConfigLoader.parse("""
        name: stale
        input:
          fields:
            y: number
            x: number
        target: y
        features:
          - {kind: numeric, field: x, scaling: standardize}
        model:
          prior_variance: no_prior
          forgetting: {factor: 0.97}
        outputs:
          snapshot_every_records: 0
        """, "stale.yaml");
    PipelineStep step = new PipelineStep(cfg);
    Quiet sink = new Quiet();
    java.util.Random r = new java.util.Random(17);
    long line = 0;
    for (int i = 0; i < 200; i++) {
      // x near 5 for 150 records, then shifted to near 60: the running centre lags far behind
      double x = (i < 150 ? 5.0 : 60.0) + r.nextDouble();
      double y = 2.0 + 0.4 * x + 0.3 * r.nextGaussian();
      byte[] b = ("{\"y\":" + y + ",\"x\":" + x + "}").getBytes(StandardCharsets.UTF_8);
      step.process(b, 0, b.length, 0L, -1, ++line, sink);
    }
    Snapshot snap = step.snapshot();
    Snapshot.Column constant = snap.columns().get(0);
    Snapshot.Column slope = snap.columns().get(1);
    assertEquals("constant", constant.name());
    double[] cov = step.modelCovariance();
    assertEquals(4, cov.length);
    double c1 = -slope.centre() / slope.scale();
    double q = cov[0] + 2 * c1 * cov[1] + c1 * c1 * cov[3];
    double expected = step.model().residualSd() * Math.sqrt(q);
    // the cross term is not small: the stale centre leaves the rows uncentred in the model's basis
    double cross = 2 * c1 * cov[1];
    assertTrue(Math.abs(cross) > 0.01 * q, "cross term " + cross + " against " + q);
    assertEquals(expected, constant.rawStandardError(), 1e-9 * expected, "raw constant's standard error");
  }
}
