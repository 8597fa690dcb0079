package dev.runnel.core.drift;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.List;
import java.util.Random;
import org.apache.commons.math3.stat.regression.OLSMultipleLinearRegression;
import org.junit.jupiter.api.Test;

/**
 * {@link ChangeAttribution} at its limits (the survivors of the whole-package mutation run of
 * 2026-12-05): when a window opens at all, a window of exactly 2p records, a column that is 0 in
 * every record of the window, a model with no effective sample yet, the order of the changes, and
 * a checkpoint that claims no columns. Scores are checked against Commons Math's
 * {@code OLSMultipleLinearRegression} on the window's rows, as in {@link ChangeAttributionTest}.
 */
class ChangeAttributionEdgesTest {

  static final String[] NAMES = {"constant", "a", "b"};

  @Test
  void anOffAttribution_aWindowWithoutColumns_orANonFiniteWeight_opensNothing() {
    ChangeAttribution off = new ChangeAttribution(0, 4.0);
    assertFalse(off.enabled());
    off.open(NAMES, new double[] {1, 2, 3}, 3, 100, 0, 0);
    assertFalse(off.isOpen(), "attribution_records 0 is off");

    ChangeAttribution c = new ChangeAttribution(10, 4.0);
    assertTrue(c.enabled());
    c.open(new String[0], new double[0], 0, 100, 0, 0);
    assertFalse(c.isOpen(), "no columns");
    c.open(NAMES, new double[] {1, Double.NaN, 3}, 3, 100, 0, 0);
    assertFalse(c.isOpen(), "a NaN weight");
    c.open(NAMES, new double[] {1, 2, Double.POSITIVE_INFINITY}, 3, 100, 0, 0);
    assertFalse(c.isOpen(), "an infinite weight (the last column)");
    c.open(NAMES, new double[] {1, 2, 3}, 3, 100, 0, 0);
    assertTrue(c.isOpen(), "finite weights open it");
  }

  /** OLS t-statistics of the change, inflated by √(1 + n/nEff) (nEff = 0: no inflation). */
  static double[] referenceScores(double[][] x, double[] y, double[] before, double nEff) {
    OLSMultipleLinearRegression ols = new OLSMultipleLinearRegression();
    ols.setNoIntercept(true);
    ols.newSampleData(y, x);
    double[] b = ols.estimateRegressionParameters();
    double[] se = ols.estimateRegressionParametersStandardErrors();
    double inflate = 1.0 + (nEff > 0 ? x.length / nEff : 0.0);
    double[] z = new double[b.length];
    for (int j = 0; j < b.length; j++) {
      z[j] = (b[j] - before[j]) / (se[j] * Math.sqrt(inflate));
    }
    return z;
  }

  static double scoreOf(List<ChangeAttribution.Change> all, String name) {
    for (ChangeAttribution.Change ch : all) {
      if (ch.column().equals(name)) {
        return ch.score();
      }
    }
    throw new AssertionError("no " + name + " in " + all);
  }

  @Test
  void aWindowOfExactly2pRecordsIsEvaluated_andOneCutShorterIsNot() {
    double[][] x = {{1, 0.5}, {1, -1.0}, {1, 2.0}, {1, 1.25}};
    double[] y = {2.6, -2.1, 7.05, 4.7}; // about 1 + 3x with noise
    double[] before = {1.0, 0.0};
    ChangeAttribution c = new ChangeAttribution(4, 2.0);
    c.open(new String[] {"constant", "x"}, before, 2, 50, 0, 0);
    List<ChangeAttribution.Change> named = null;
    for (int i = 0; i < 4; i++) {
      named = c.observe(x[i], y[i], 2, 0);
    }
    assertNotNull(c.latest(), "4 = 2p records are evaluated");
    double[] z = referenceScores(x, y, before, 50);
    assertEquals(z[1], scoreOf(c.latest(), "x"), 1e-5 * Math.abs(z[1]));
    assertEquals(z[0], scoreOf(c.latest(), "constant"), 1e-5 * (1 + Math.abs(z[0])));
    assertTrue(Math.abs(z[1]) > 2.0, "the slope moved: " + z[1]);
    assertEquals("x", named.get(0).column());

    // a window cut by a layout change after 3 < 2p records: nothing is evaluated
    ChangeAttribution d = new ChangeAttribution(10, 2.0);
    d.open(new String[] {"constant", "x"}, before, 2, 50, 0, 0);
    for (int i = 0; i < 3; i++) {
      assertNull(d.observe(x[i], y[i], 2, 0));
    }
    assertEquals(List.of(), d.observe(new double[] {1, 1, 1}, 1.0, 3, 1));
    assertEquals(List.of(), d.latest(), "3 records of 2 columns are not evaluated");
  }

  /** Rows: the constant, a, b; y moved in b a lot and in a a little. */
  static void window(Random rnd, int n, double[][] x, double[] y) {
    for (int i = 0; i < n; i++) {
      x[i][0] = 1.0;
      x[i][1] = rnd.nextGaussian();
      x[i][2] = 2.0 + rnd.nextGaussian();
      y[i] = 1.0 + 1.3 * x[i][1] + 4.0 * x[i][2] + 0.5 * rnd.nextGaussian();
    }
  }

  @Test
  void changesComeLargestScoreFirst_andAModelWithoutEffectiveSampleIsNotInflated() {
    Random rnd = new Random(11);
    int n = 60;
    double[][] x = new double[n][3];
    double[] y = new double[n];
    window(rnd, n, x, y);
    double[] before = {1.0, 1.0, 1.0};
    ChangeAttribution c = new ChangeAttribution(n, 1.0);
    c.open(NAMES, before, 3, 0.0, 0, 0);
    for (int i = 0; i < n; i++) {
      c.observe(x[i], y[i], 3, 0);
    }
    double[] z = referenceScores(x, y, before, 0.0);
    List<ChangeAttribution.Change> all = c.latest();
    assertEquals(3, all.size());
    for (int j = 0; j < 3; j++) {
      assertEquals(z[j], scoreOf(all, NAMES[j]), 1e-5 * (1 + Math.abs(z[j])), NAMES[j]);
    }
    List<String> want = new ArrayList<>(List.of(NAMES));
    want.sort(Comparator.comparingDouble(s -> -Math.abs(z[List.of(NAMES).indexOf(s)])));
    assertEquals("b", want.get(0), "the design: b moved most");
    List<String> got = new ArrayList<>();
    for (ChangeAttribution.Change ch : all) {
      got.add(ch.column());
    }
    assertEquals(want, got, "largest |z| first");
  }

  @Test
  void aColumnThatIsZeroInTheWholeWindowIsNotScored_theOthersAre() {
    Random rnd = new Random(5);
    int n = 40;
    double[][] x = new double[n][3];
    double[][] x2 = new double[n][2];
    double[] y = new double[n];
    for (int i = 0; i < n; i++) {
      double v = rnd.nextGaussian();
      x[i] = new double[] {1.0, v, 0.0};
      x2[i] = new double[] {1.0, v};
      y[i] = 0.5 + 3.0 * v + 0.2 * rnd.nextGaussian();
    }
    double[] before = {0.5, 1.0, 7.0};
    ChangeAttribution c = new ChangeAttribution(n, 4.0);
    c.open(NAMES, before, 3, 100, 0, 0);
    for (int i = 0; i < n; i++) {
      c.observe(x[i], y[i], 3, 0);
    }
    List<ChangeAttribution.Change> all = c.latest();
    assertNotNull(all, "the window is evaluated without the empty column");
    assertEquals(2, all.size(), all.toString());
    // reference: OLS on the two columns with data (Commons Math), residual degrees of freedom n − 2:
    // the empty column is not fitted and takes none (it did, n − 3, before: scores 1.3 % small here)
    double[] z = referenceScores(x2, y, new double[] {0.5, 1.0}, 100);
    assertEquals(z[1], scoreOf(all, "a"), 1e-5 * Math.abs(z[1]));
    assertEquals(z[0], scoreOf(all, "constant"), 1e-5 * (1 + Math.abs(z[0])));
    assertTrue(Math.abs(1.0 - scoreOf(all, "a") / z[1]) < 0.5 * (1.0 - Math.sqrt((n - 3.0) / (n - 2.0))),
        "the degrees of freedom of a fit without the empty column");
  }

  @Test
  void aCheckpointOfAnOpenWindowWithoutColumnsIsRefused() throws IOException {
    ByteArrayOutputStream bo = new ByteArrayOutputStream();
    DataOutputStream out = new DataOutputStream(bo);
    out.writeBoolean(true);
    out.writeInt(0);
    out.flush();
    ChangeAttribution c = new ChangeAttribution(10, 4.0);
    IOException e = assertThrows(IOException.class,
        () -> c.readFrom(new DataInputStream(new ByteArrayInputStream(bo.toByteArray()))));
    assertEquals("corrupt drift checkpoint: attribution window of 0 columns", e.getMessage());
  }
}
