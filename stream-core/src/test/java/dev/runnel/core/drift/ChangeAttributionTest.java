package dev.runnel.core.drift;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.List;
import java.util.Random;
import org.apache.commons.math3.stat.regression.OLSMultipleLinearRegression;
import org.junit.jupiter.api.Test;

/** {@link ChangeAttribution} on its own: the window's fit and standard errors against Commons Math OLS. */
class ChangeAttributionTest {

  static final int P = 4;

  /** Rows with a constant and three correlated columns; y = x·beta + noise. */
  static double[][] rows(Random rnd, int n) {
    double[][] x = new double[n][P];
    for (int i = 0; i < n; i++) {
      double f = rnd.nextGaussian();
      x[i][0] = 1.0;
      x[i][1] = 10 + 2 * (0.8 * f + 0.6 * rnd.nextGaussian());
      x[i][2] = -3 + 0.8 * f + 0.6 * rnd.nextGaussian();
      x[i][3] = 0.8 * f + 0.6 * rnd.nextGaussian();
    }
    return x;
  }

  @Test
  void theAfterFitAndItsStandardErrorsAreThoseOfOrdinaryLeastSquaresOnTheWindow() {
    Random rnd = new Random(7);
    int n = 300;
    double[][] x = rows(rnd, n);
    double[] beta = {1.0, 0.5, 6.0, -1.0};
    double[] y = new double[n];
    for (int i = 0; i < n; i++) {
      y[i] = rnd.nextGaussian() * 0.7;
      for (int j = 0; j < P; j++) {
        y[i] += x[i][j] * beta[j];
      }
    }
    double[] before = {1.0, 0.5, 2.0, -1.0};
    double nEff = 900;
    ChangeAttribution c = new ChangeAttribution(n, 4.0);
    c.open(new String[] {"constant", "a", "b", "c"}, before, P, nEff, 0, 0);
    List<ChangeAttribution.Change> named = null;
    for (int i = 0; i < n; i++) {
      named = c.observe(x[i], y[i], P, 0);
      if (i < n - 1) {
        assertNull(named, "the window closes after " + n + " records");
      }
    }
    assertNotNull(named);
    // reference: Commons Math OLSMultipleLinearRegression (QR) on the same rows, no extra intercept
    OLSMultipleLinearRegression ols = new OLSMultipleLinearRegression();
    ols.setNoIntercept(true);
    ols.newSampleData(y, x);
    double[] b = ols.estimateRegressionParameters();
    double[] se = ols.estimateRegressionParametersStandardErrors();
    String[] names = {"constant", "a", "b", "c"};
    List<ChangeAttribution.Change> all = c.latest();
    assertEquals(P, all.size());
    // tolerance: the ridge of 1e-9 on the equilibrated information moves the fit by about
    // 1e-9 times its condition number (here below 1e4), far below the standard errors
    for (int j = 0; j < P; j++) {
      ChangeAttribution.Change ch = find(all, names[j]);
      assertEquals(b[j], ch.after(), 1e-5 * (1 + Math.abs(b[j])), names[j] + " after");
      assertEquals(before[j], ch.before(), 0.0);
      double z = (b[j] - before[j]) / (se[j] * Math.sqrt(1 + n / nEff));
      assertEquals(z, ch.score(), 1e-5 * (1 + Math.abs(z)), names[j] + " score");
    }
    assertEquals("b", named.get(0).column(), "the changed column is named first: " + named);
    for (ChangeAttribution.Change ch : named) {
      assertEquals("b", ch.column(), "only the changed column is named: " + named);
    }
  }

  private static ChangeAttribution.Change find(List<ChangeAttribution.Change> all, String name) {
    for (ChangeAttribution.Change ch : all) {
      if (ch.column().equals(name)) {
        return ch;
      }
    }
    throw new AssertionError("no " + name + " in " + all);
  }

  @Test
  void aColumnTheWindowCannotIdentifyGetsNoChange() {
    // two identical columns (a level and the constant that always go together): their split is not identified
    Random rnd = new Random(3);
    int n = 200;
    ChangeAttribution c = new ChangeAttribution(n, 4.0);
    c.open(new String[] {"constant", "level", "x"}, new double[] {1.0, 0.0, 2.0}, 3, 1000, 0, 0);
    List<ChangeAttribution.Change> named = null;
    for (int i = 0; i < n; i++) {
      double v = rnd.nextGaussian();
      named = c.observe(new double[] {1.0, 1.0, v}, 1.0 + 5.0 * v + 0.1 * rnd.nextGaussian(), 3, 0);
    }
    assertNotNull(named);
    assertEquals("x", named.get(0).column(), named.toString());
    assertEquals(1, named.size(), "the unidentified pair is not named: " + c.latest());
  }

  @Test
  void aLayoutChangeClosesTheWindowAndTooFewRecordsGiveNoResult() {
    ChangeAttribution c = new ChangeAttribution(100, 4.0);
    c.open(new String[] {"constant", "x"}, new double[] {0, 1}, 2, 100, 5, 0);
    assertTrue(c.isOpen());
    assertNull(c.observe(new double[] {1, 2}, 3, 2, 5));
    assertEquals(List.of(), c.observe(new double[] {1, 2, 3}, 3, 3, 6));
    assertTrue(!c.isOpen());
  }

  @Test
  void theOpenWindowRoundTripsThroughItsCheckpoint() throws IOException {
    ChangeAttribution c = new ChangeAttribution(50, 4.0);
    c.open(new String[] {"constant", "x"}, new double[] {0, 1}, 2, 100, 5, 0);
    Random rnd = new Random(1);
    for (int i = 0; i < 20; i++) {
      c.observe(new double[] {1, rnd.nextGaussian()}, rnd.nextGaussian(), 2, 5);
    }
    ChangeAttribution d = new ChangeAttribution(50, 4.0);
    d.readFrom(new DataInputStream(new ByteArrayInputStream(bytes(c))));
    assertEquals(java.util.Arrays.toString(bytes(c)), java.util.Arrays.toString(bytes(d)));
    for (int i = 0; i < 30; i++) {
      double[] x = {1, rnd.nextGaussian()};
      double y = rnd.nextGaussian();
      assertEquals(String.valueOf(c.observe(x, y, 2, 5)), String.valueOf(d.observe(x, y, 2, 5)));
    }
    assertEquals(c.latest(), d.latest());
  }

  private static byte[] bytes(ChangeAttribution c) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    DataOutputStream out = new DataOutputStream(b);
    c.writeTo(out);
    out.flush();
    return b.toByteArray();
  }
}
