package dev.runnel.core.feature;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigException;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Random;
import org.apache.commons.math3.stat.regression.OLSMultipleLinearRegression;
import org.junit.jupiter.api.Test;

/**
 * {@code kind: bends}: the columns and their values (hinge by hand; the natural spline's defining
 * properties), the fit on the expanded columns against Commons Math OLS, a restore that continues
 * bit for bit, re-basing that does not move a prediction, and the configuration's errors.
 */
class BendsFeatureTest {

  private static String yaml(String bends, String model) {
    return "name: b\ninput:\n  fields: {temp: number, y: number}\ntarget: y\nfeatures:\n  - " + bends + "\nmodel:\n" + model;
  }

  private static double[] encode(Featurizer f, double x) {
    EventRecord r = new EventRecord(f.config().input().schema());
    r.setNumber(0, x);
    double[] row = new double[f.maxDimension()];
    f.encode(r, 0, row);
    return java.util.Arrays.copyOf(row, f.dimension());
  }

  @Test void hingeColumns_holdXAndMaxZeroXMinusEachKnot() {
    Featurizer f = new Featurizer(TestConfigs.parse(yaml("{kind: bends, field: temp, knots: [5, 18.5], scaling: none}", "  prior_variance: 10\n")));
    assertEquals(List.of("constant", "temp", "temp>5", "temp>18.5"), f.columnNames());
    // by hand: max(0, x - k)
    assertArrayEquals(new double[] {1, 20, 15, 1.5}, encode(f, 20), 0.0);
    assertArrayEquals(new double[] {1, 10, 5, 0}, encode(f, 10), 0.0);
    assertArrayEquals(new double[] {1, -3, 0, 0}, encode(f, -3), 0.0);
  }

  /** The natural spline's basis by its definition, written out separately (truncated cubes). */
  private static double ns(double x, double[] k, int j) {
    int last = k.length - 1;
    return dk(x, k, j) - dk(x, k, last - 1);
  }

  private static double dk(double x, double[] k, int j) {
    double kl = k[k.length - 1];
    return (Math.pow(Math.max(0, x - k[j]), 3) - Math.pow(Math.max(0, x - kl), 3)) / (kl - k[j]);
  }

  @Test void naturalSplineColumns_areStraightBeyondTheOuterKnotsAndSmoothAtEveryKnot() {
    double[] knots = {0, 10, 20, 30};
    Featurizer f = new Featurizer(TestConfigs.parse(yaml("{kind: bends, name: t, field: temp, basis: natural_spline, knots: [0, 10, 20, 30], scaling: none}",
        "  prior_variance: 10\n")));
    assertEquals(List.of("constant", "t", "t.ns1", "t.ns2"), f.columnNames());
    for (double x : new double[] {-7, 3, 12.5, 29, 41}) {
      double[] row = encode(f, x);
      for (int j = 0; j < 2; j++) assertEquals(ns(x, knots, j), row[2 + j], 1e-9 * (1 + Math.abs(row[2 + j])), "x " + x + " ns" + (j + 1));
    }
    double h = 0.5;
    for (int j = 0; j < 2; j++) {
      // straight beyond the outer knots: second differences vanish (common practice: the defining property of a natural spline)
      for (double x : new double[] {-20, -5, 31, 45, 80}) {
        double second = encode(f, x + h)[2 + j] - 2 * encode(f, x)[2 + j] + encode(f, x - h)[2 + j];
        assertEquals(0.0, second, 1e-9 * (1 + Math.abs(encode(f, x)[2 + j])), "ns" + (j + 1) + " at " + x);
      }
      // and not straight inside: the check can fail
      double inside = encode(f, 15 + h)[2 + j] - 2 * encode(f, 15)[2 + j] + encode(f, 15 - h)[2 + j];
      assertTrue(Math.abs(inside) > 1e-3, "ns" + (j + 1) + " bends between the knots");
      // a cubic spline is twice continuously differentiable: second differences just left and right of a knot agree to O(h)
      for (double k : knots) {
        double e = 1e-3;
        double left = encode(f, k - e)[2 + j] - 2 * encode(f, k - 2 * e)[2 + j] + encode(f, k - 3 * e)[2 + j];
        double right = encode(f, k + 3 * e)[2 + j] - 2 * encode(f, k + 2 * e)[2 + j] + encode(f, k + e)[2 + j];
        assertEquals(left / (e * e), right / (e * e), 1e-3 * 10, "second derivative continuous at knot " + k);
      }
    }
  }

  // ------------------------------------------------------------------ the fit against OLS

  static byte[] line(int i, double temp, Double y) {
    return String.format(Locale.ROOT, "{\"at\":%d,\"temp\":%s%s}", 1_700_000_000_000L + i * 60_000L, Double.toString(temp),
        y == null ? "" : ",\"y\":" + Double.toString(y)).getBytes(StandardCharsets.UTF_8);
  }

  static String stepYaml(String bends) {
    return "name: b\ninput:\n  fields: {at: time, temp: number, y: number}\n  event_time: {field: at, format: epoch_millis}\n"
        + "target: y\nfeatures:\n  - " + bends + "\nmodel:\n  prior_variance: no_prior\n";
  }

  /** Heating below 5, flat between, cooling above 18: the curve a hinge basis can draw. */
  static double demand(double t) { return 40 + 2.5 * Math.max(0, 5 - t) + 1.5 * Math.max(0, t - 18) + 0.1 * t; }

  private static void agreesWithOls(String bends, double[] knots, boolean spline) {
    Random r = new Random(42);
    int n = 400;
    double[] ys = new double[n];
    double[][] xs = new double[n][];
    PipelineStep step = new PipelineStep(dev.runnel.core.config.ConfigLoader.parse(stepYaml(bends), "b.yaml"));
    List<Double> predictions = new ArrayList<>();
    PipelineStep.Sink sink = new PipelineStep.Sink() {
      @Override public void prediction(Prediction p, EventRecord record) { predictions.add(p.predicted()); }
      @Override public void reject(RejectReason reason, String detail) { throw new AssertionError(detail); }
      @Override public void snapshotDue() { }
    };
    for (int i = 0; i < n; i++) {
      double t = -8 + 40 * r.nextDouble();
      double y = demand(t) + r.nextGaussian();
      ys[i] = y;
      int cols = spline ? knots.length - 1 : knots.length + 1;
      double[] row = new double[cols];
      row[0] = t;
      for (int j = 1; j < cols; j++) row[j] = spline ? ns(t, knots, j - 1) : Math.max(0, t - knots[j - 1]);
      xs[i] = row;
      byte[] b = line(i, t, y);
      step.process(b, 0, b.length, 0, 0, i, sink);
    }
    // Commons Math OLSMultipleLinearRegression on the raw expanded columns, with an intercept
    OLSMultipleLinearRegression ols = new OLSMultipleLinearRegression();
    ols.newSampleData(ys, xs);
    double[] beta = ols.estimateRegressionParameters();
    predictions.clear();
    double[] grid = {-6, 0, 4.9, 5, 11, 18, 18.5, 25, 31};
    for (int i = 0; i < grid.length; i++) {
      byte[] b = line(n + i, grid[i], null);
      step.process(b, 0, b.length, 0, 0, n + i, sink);
    }
    for (int i = 0; i < grid.length; i++) {
      double t = grid[i];
      double expected = beta[0] + beta[1] * t;
      for (int j = 1; j < xs[0].length; j++) expected += beta[j + 1] * (spline ? ns(t, knots, j - 1) : Math.max(0, t - knots[j - 1]));
      assertEquals(expected, predictions.get(i), 1e-8 * Math.abs(expected), bends + " at " + t);
    }
  }

  @Test void hingeFit_equalsOlsOnTheExpandedColumns() {
    agreesWithOls("{kind: bends, field: temp, knots: [5, 18]}", new double[] {5, 18}, false);
  }

  @Test void naturalSplineFit_equalsOlsOnTheExpandedColumns() {
    agreesWithOls("{kind: bends, field: temp, basis: natural_spline, knots: [-5, 5, 18, 28]}", new double[] {-5, 5, 18, 28}, true);
  }

  // ------------------------------------------------------------------ restore, errors

  @Test void aRestoreContinuesBitForBit() {
    String yaml = stepYaml("{kind: bends, field: temp, basis: natural_spline, knots: [0, 10, 20], weighting_half_life_records: 50}")
        .replace("no_prior", "10");
    Random r = new Random(3);
    List<byte[]> lines = new ArrayList<>();
    for (int i = 0; i < 300; i++) {
      double t = -5 + 35 * r.nextDouble();
      lines.add(line(i, t, i % 5 == 4 ? null : demand(t) + r.nextGaussian()));
    }
    dev.runnel.core.config.PipelineConfig c = dev.runnel.core.config.ConfigLoader.parse(yaml, "b.yaml");
    PipelineStep whole = new PipelineStep(c);
    PipelineStep first = new PipelineStep(c);
    List<String> a = new ArrayList<>();
    List<String> b = new ArrayList<>();
    PipelineStep.Sink sa = collect(a);
    PipelineStep.Sink sb = collect(b);
    for (int i = 0; i < lines.size(); i++) whole.process(lines.get(i), 0, lines.get(i).length, 0, 0, i, sa);
    for (int i = 0; i < 150; i++) first.process(lines.get(i), 0, lines.get(i).length, 0, 0, i, sb);
    PipelineStep second = new PipelineStep(c);
    second.restore(first.checkpoint());
    for (int i = 150; i < lines.size(); i++) second.process(lines.get(i), 0, lines.get(i).length, 0, 0, i, sb);
    assertEquals(a, b);
    assertArrayEquals(whole.checkpoint(), second.checkpoint());
  }

  private static PipelineStep.Sink collect(List<String> out) {
    return new PipelineStep.Sink() {
      @Override public void prediction(Prediction p, EventRecord record) {
        out.add(Double.doubleToRawLongBits(p.predicted()) + " " + Double.doubleToRawLongBits(p.low()) + " " + Double.doubleToRawLongBits(p.high()));
      }
      @Override public void reject(RejectReason reason, String detail) { out.add(reason.id()); }
      @Override public void snapshotDue() { }
    };
  }

  @Test void wrongKnots_nameTheKeyTheValueAndTheFix() {
    String base = "{kind: bends, field: temp, KNOTS}";
    ConfigException unsorted = assertThrows(ConfigException.class, () -> TestConfigs.parse(yaml(base.replace("KNOTS", "knots: [18, 5]"), "  prior_variance: 10\n")));
    assertTrue(unsorted.getMessage().startsWith("features[0].knots: ") && unsorted.getMessage().contains("not greater than the one before it")
        && unsorted.getMessage().contains("increasing order"), unsorted.getMessage());
    ConfigException twice = assertThrows(ConfigException.class, () -> TestConfigs.parse(yaml(base.replace("KNOTS", "knots: [5, 5]"), "  prior_variance: 10\n")));
    assertTrue(twice.getMessage().contains("features[0].knots"), twice.getMessage());
    ConfigException few = assertThrows(ConfigException.class,
        () -> TestConfigs.parse(yaml(base.replace("KNOTS", "basis: natural_spline, knots: [5, 18]"), "  prior_variance: 10\n")));
    assertTrue(few.getMessage().contains("features[0].knots") && few.getMessage().contains("list 3 to 64 numbers"), few.getMessage());
    ConfigException text = assertThrows(ConfigException.class, () -> TestConfigs.parse(yaml(base.replace("KNOTS", "knots: [5, warm]"), "  prior_variance: 10\n")));
    assertTrue(text.getMessage().startsWith("features[0].knots[1]: "), text.getMessage());
    ConfigException none = assertThrows(ConfigException.class, () -> TestConfigs.parse(yaml(base.replace(", KNOTS", ""), "  prior_variance: 10\n")));
    assertTrue(none.getMessage().startsWith("features[0].knots: missing"), none.getMessage());
    ConfigException basis = assertThrows(ConfigException.class, () -> TestConfigs.parse(yaml(base.replace("KNOTS", "basis: spline, knots: [1, 2, 3]"), "  prior_variance: 10\n")));
    assertTrue(basis.getMessage().contains("features[0].basis") && basis.getMessage().contains("hinge, natural_spline"), basis.getMessage());
  }
}
