package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Random;
import org.apache.commons.math3.stat.regression.OLSMultipleLinearRegression;
import org.junit.jupiter.api.Test;

/** With lambda = 1 and a diffuse start the model is ordinary least squares (Apache Commons Math OLS as reference). */
class OlsAgreementTest {

  @Test
  void diffuseNoForgettingAgreesWithCommonsMathOls() {
    Random rnd = new Random(4242);
    int n = 300;
    int q = 4;
    double[][] xs = new double[n][q];
    double[] ys = new double[n];
    RlsModel model = new RlsModel(q + 1, ModelSettings.defaults().withPriorVariance(ModelSettings.DIFFUSE));
    double[] x = new double[q + 1];
    for (int i = 0; i < n; i++) {
      x[0] = 1.0;
      double y = 3.0;
      for (int k = 0; k < q; k++) {
        xs[i][k] = rnd.nextGaussian() * (k + 1) + k;
        x[k + 1] = xs[i][k];
        y += (k - 1.5) * xs[i][k];
      }
      ys[i] = y + rnd.nextGaussian();
      assertTrue(model.update(x, ys[i], 1.0));
      if (i < q) {
        assertTrue(!model.ready() && Double.isNaN(model.predict(x)), "warming up before full rank");
      }
    }
    OLSMultipleLinearRegression ols = new OLSMultipleLinearRegression(); // Apache Commons Math as reference
    ols.newSampleData(ys, xs);
    double[] beta = ols.estimateRegressionParameters();
    double[] se = ols.estimateRegressionParametersStandardErrors();
    double[] w = new double[q + 1];
    double[] e = new double[q + 1];
    model.weights(w);
    model.standardErrors(e);
    for (int k = 0; k <= q; k++) {
      assertEquals(beta[k], w[k], 1e-10 * Math.abs(beta[k]) + 1e-12, "weight " + k);
      assertEquals(se[k], e[k], 1e-10 * se[k], "standard error " + k);
    }
    assertEquals(ols.estimateRegressionStandardError(), model.residualSd(), 1e-10 * model.residualSd(), "residual sd");
    assertEquals(n, model.effectiveSampleSize(), 0.0);
  }
}
