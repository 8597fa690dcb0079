package dev.runnel.core.feature;

import dev.runnel.core.config.BendBasis;
import dev.runnel.core.config.FeatureConfig;
import dev.runnel.core.config.Scaling;
import dev.runnel.core.config.Transform;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RecordSchema;
import dev.runnel.core.record.RejectReason;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;
import java.util.List;

/**
 * A curve in a raw number field that bends at given knots ({@code kind: bends}), as a linear
 * basis: the column {@code <name>} (x itself), then one column per basis function, each its own
 * scaled column (standardized like a numeric feature's, re-based when its scaler moves).
 *
 * <p>{@code basis: hinge}, knots {@code k_1 < ... < k_K}: columns {@code <name>>k_j} =
 * {@code max(0, x − k_j)}; the fitted curve is piecewise linear, its slope changing by the weight of
 * column j at knot j.
 *
 * <p>{@code basis: natural_spline}, knots {@code ξ_1 < ... < ξ_K} (K ≥ 3): columns
 * {@code <name>.ns1 .. <name>.ns(K−2)} = {@code d_j(x) − d_{K−1}(x)} with
 * {@code d_j(x) = ((x − ξ_j)³₊ − (x − ξ_K)³₊) / (ξ_K − ξ_j)}: with x and the constant term these
 * span the natural cubic splines with those knots (cubic between knots, twice continuously
 * differentiable, linear beyond the outer knots). Formula: Hastie, Tibshirani and Friedman, The
 * Elements of Statistical Learning, 2nd ed., section 5.2.1, eqs. 5.4–5.5 (from memory; the
 * linearity beyond the outer knots is checked in the tests).
 *
 * <p>A record whose basis values are not all finite (a huge x cubed) is out of range.
 */
final class BendsFeature extends Feature {

  final FeatureConfig.Bends cfg;
  final int slot;
  private final String field;
  private final boolean spline;
  private final double[] knots;
  private final RunningScaler[] scalers;
  private final Column[] cols;
  /** The basis values of the current record, in column order. */
  private final double[] values;

  BendsFeature(FeatureConfig.Bends cfg, int position, RecordSchema s) {
    super(cfg.name(), position);
    this.cfg = cfg;
    this.slot = s.slot(cfg.field());
    this.field = s.name(slot);
    this.spline = cfg.basis() == BendBasis.NATURAL_SPLINE;
    List<Double> k = cfg.knots();
    this.knots = new double[k.size()];
    for (int j = 0; j < knots.length; j++) knots[j] = k.get(j);
    int n = spline ? knots.length - 1 : knots.length + 1;
    scalers = new RunningScaler[n];
    for (int j = 0; j < n; j++) {
      scalers[j] = new RunningScaler(cfg.scaling(), Transform.NONE, 1.0, cfg.weightingHalfLifeRecords(), cfg.clip());
    }
    cols = new Column[n];
    values = new double[n];
  }

  @Override String kind() { return cfg.kind(); }
  @Override int maxColumns() { return cols.length; }
  @Override int fixedColumns() { return cols.length; }

  @Override void createFixedColumns() {
    for (int j = 0; j < cols.length; j++) {
      String c = j == 0 ? name : spline ? name + ".ns" + j : name + ">" + knotText(knots[j - 1]);
      cols[j] = columns.append(new Column(c, cfg.scaling() == Scaling.NONE ? null : scalers[j], this));
    }
  }

  /** A knot as written in a column name: a whole number without ".0", else Java's shortest form. */
  static String knotText(double k) {
    if (k == Math.rint(k) && Math.abs(k) < 1e15) return Long.toString((long) k);
    return Double.toString(k);
  }

  /**
   * The basis values of {@code x} into {@code out}, in column order.
   *
   * @param out receives {@code cols.length} values. Modified.
   * @return whether every value is finite
   */
  boolean fill(double x, double[] out) {
    out[0] = x;
    double[] k = knots;
    if (!spline) {
      for (int j = 0; j < k.length; j++) {
        double d = x - k[j];
        out[j + 1] = d > 0 ? d : 0.0;
      }
    } else {
      int last = k.length - 1;
      double dLastBefore = d(x, last - 1);
      for (int j = 0; j < last - 1; j++) out[j + 1] = d(x, j) - dLastBefore;
    }
    for (int j = 0; j < out.length; j++) {
      if (!Double.isFinite(out[j])) return false;
    }
    return true;
  }

  /** {@code d_j(x) = ((x − ξ_j)³₊ − (x − ξ_K)³₊) / (ξ_K − ξ_j)}, j 0-based. */
  private double d(double x, int j) {
    double[] k = knots;
    double kLast = k[k.length - 1];
    double a = x - k[j];
    double b = x - kLast;
    double a3 = a > 0 ? a * a * a : 0.0;
    double b3 = b > 0 ? b * b * b : 0.0;
    return (a3 - b3) / (kLast - k[j]);
  }

  @Override int requiredSlot() { return slot; }

  @Override boolean checksDomain() { return true; }

  @Override boolean inDomain(EventRecord r) { return fill(r.number(slot), values); }

  @Override RejectReason check(EventRecord r) {
    if (!r.present(slot)) return missing(field);
    double x = r.number(slot);
    if (!fill(x, values)) {
      detail = "field " + cfg.field() + ": " + x + " gives a basis value that is not finite";
      return RejectReason.OUT_OF_RANGE;
    }
    return null;
  }

  @Override boolean scales() { return true; }

  @Override void learnScalers(EventRecord r) {
    fill(r.number(slot), values);
    for (int j = 0; j < cols.length; j++) {
      if (scalers[j].observe(values[j]) && cols[j].scaler != null) columns.rebase(cols[j]);
    }
  }

  @Override void write(EventRecord r, long t, double[] out, boolean training) {
    if (!training) fill(r.number(slot), values);
    for (int j = 0; j < cols.length; j++) out[cols[j].index] = scalers[j].encode(values[j]);
  }

  @Override void writeState(DataOutput out) throws IOException {
    for (RunningScaler s : scalers) s.writeTo(out);
  }

  @Override void readState(DataInput in) throws IOException {
    for (RunningScaler s : scalers) s.readFrom(in);
  }
}
