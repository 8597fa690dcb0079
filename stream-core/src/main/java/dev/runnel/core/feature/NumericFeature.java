package dev.runnel.core.feature;

import dev.runnel.core.config.FeatureConfig;
import dev.runnel.core.config.Scaling;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RecordSchema;
import dev.runnel.core.record.RejectReason;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;

/**
 * One scaled column {@code <name>} from a number field ({@code kind: numeric}), after an optional
 * transform; the column is re-based whenever its scaler's centre or scale moves (unless
 * {@code scaling: none}).
 */
final class NumericFeature extends Feature {

  final FeatureConfig.Numeric cfg;
  final int slot;
  private final String field;
  private final RunningScaler scaler;
  private Column column;
  /** The transformed value of the current training record. */
  private double value;

  NumericFeature(FeatureConfig.Numeric cfg, int position, RecordSchema s) {
    super(cfg.name(), position);
    this.cfg = cfg;
    this.slot = s.slot(cfg.field());
    this.field = s.name(slot);
    this.scaler = new RunningScaler(cfg.scaling(), cfg.transform(), cfg.exponent(), cfg.weightingHalfLifeRecords(), cfg.clip());
  }

  @Override String kind() { return cfg.kind(); }
  @Override int maxColumns() { return 1; }
  @Override int fixedColumns() { return 1; }

  @Override void createFixedColumns() {
    column = columns.append(new Column(name, cfg.scaling() == Scaling.NONE ? null : scaler, this));
  }

  @Override int requiredSlot() { return slot; }

  @Override boolean checksDomain() { return true; }

  @Override boolean inDomain(EventRecord r) { return scaler.accepts(r.number(slot)); }

  @Override RejectReason check(EventRecord r) {
    if (!r.present(slot)) return missing(field);
    double v = r.number(slot);
    if (!scaler.accepts(v)) {
      detail = "field " + cfg.field() + ": " + v + " is outside the transform's domain (" + scaler.domain() + ")";
      return RejectReason.OUT_OF_RANGE;
    }
    return null;
  }

  @Override boolean scales() { return true; }

  @Override void learnScalers(EventRecord r) {
    value = scaler.transformed(r.number(slot));
    if (scaler.observe(value) && column.scaler != null) columns.rebase(column);
  }

  @Override void write(EventRecord r, long t, double[] out, boolean training) {
    double v = training ? value : scaler.transformed(r.number(slot));
    out[column.index] = scaler.encode(v);
  }

  @Override void writeState(DataOutput out) throws IOException { scaler.writeTo(out); }

  @Override void readState(DataInput in) throws IOException { scaler.readFrom(in); }
}
