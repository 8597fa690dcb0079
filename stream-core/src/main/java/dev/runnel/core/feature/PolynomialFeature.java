package dev.runnel.core.feature;

import dev.runnel.core.config.FeatureConfig;
import dev.runnel.core.config.Scaling;
import dev.runnel.core.config.Transform;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RecordSchema;
import dev.runnel.core.record.RejectReason;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;

/**
 * Powers {@code x^1 .. x^d} of a raw number field ({@code kind: polynomial}), each its own scaled
 * column {@code <name>^k}; a record whose highest power is not finite is out of range.
 */
final class PolynomialFeature extends Feature {

  final FeatureConfig.Polynomial cfg;
  final int slot;
  private final String field;
  private final RunningScaler[] scalers;
  private final Column[] cols;
  private final double[] powers;

  PolynomialFeature(FeatureConfig.Polynomial cfg, int position, RecordSchema s) {
    super(cfg.name(), position);
    this.cfg = cfg;
    this.slot = s.slot(cfg.field());
    this.field = s.name(slot);
    int d = cfg.degree();
    scalers = new RunningScaler[d];
    for (int k = 0; k < d; k++) {
      scalers[k] = new RunningScaler(cfg.scaling(), Transform.NONE, 1.0, cfg.weightingHalfLifeRecords(), cfg.clip());
    }
    cols = new Column[d];
    powers = new double[d];
  }

  @Override String kind() { return cfg.kind(); }
  @Override int maxColumns() { return cols.length; }
  @Override int fixedColumns() { return cols.length; }

  @Override void createFixedColumns() {
    for (int k = 0; k < cols.length; k++) {
      cols[k] = columns.append(new Column(name + "^" + (k + 1), cfg.scaling() == Scaling.NONE ? null : scalers[k], this));
    }
  }

  private static boolean fill(double x, double[] p) {
    double v = x;
    for (int k = 0; k < p.length; k++) {
      p[k] = v;
      v *= x;
    }
    return Double.isFinite(p[p.length - 1]);
  }

  /** {@code x^degree}, computed as the check has always computed it. */
  private double highestPower(double x) {
    double p = x;
    for (int k = 1; k < cols.length; k++) p *= x;
    return p;
  }

  @Override int requiredSlot() { return slot; }

  @Override boolean checksDomain() { return true; }

  @Override boolean inDomain(EventRecord r) { return Double.isFinite(highestPower(r.number(slot))); }

  @Override RejectReason check(EventRecord r) {
    if (!r.present(slot)) return missing(field);
    double x = r.number(slot);
    if (!Double.isFinite(highestPower(x))) {
      detail = "field " + cfg.field() + ": " + x + "^" + cols.length + " is not finite";
      return RejectReason.OUT_OF_RANGE;
    }
    return null;
  }

  @Override boolean scales() { return true; }

  @Override void learnScalers(EventRecord r) {
    fill(r.number(slot), powers);
    for (int k = 0; k < cols.length; k++) {
      if (scalers[k].observe(powers[k]) && cols[k].scaler != null) columns.rebase(cols[k]);
    }
  }

  @Override void write(EventRecord r, long t, double[] out, boolean training) {
    if (!training) fill(r.number(slot), powers);
    for (int k = 0; k < cols.length; k++) out[cols[k].index] = scalers[k].encode(powers[k]);
  }

  @Override void writeState(DataOutput out) throws IOException {
    for (RunningScaler s : scalers) s.writeTo(out);
  }

  @Override void readState(DataInput in) throws IOException {
    for (RunningScaler s : scalers) s.readFrom(in);
  }
}
