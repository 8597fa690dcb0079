package dev.runnel.core.feature;

import dev.runnel.core.config.FeatureConfig;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RecordSchema;
import dev.runnel.core.record.RejectReason;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;
import java.time.ZoneId;
import java.util.Arrays;
import java.util.List;

/**
 * Sin/cos pairs of a calendar cycle ({@code kind: cyclic}): fixed columns
 * {@code <name>.sin1, <name>.cos1, ...} for harmonics 1..k of the position in the cycle, in the
 * pipeline's time zone, of the event time or of a time field. Its parts, for a cross, are all its
 * columns.
 */
final class CyclicFeature extends Feature {

  final FeatureConfig.Cyclic cfg;
  final int slot;
  private final String field;
  private final LocalCalendar calendar;
  private final Column[] cols;
  private final List<Column> parts;

  CyclicFeature(FeatureConfig.Cyclic cfg, int position, RecordSchema s, ZoneId zone) {
    super(cfg.name(), position);
    this.cfg = cfg;
    this.slot = cfg.field() == null ? -1 : s.slot(cfg.field());
    this.field = slot < 0 ? null : s.name(slot);
    this.calendar = new LocalCalendar(zone);
    this.cols = new Column[2 * cfg.harmonics()];
    this.parts = Arrays.asList(cols);
    this.memo = new double[MEMO * cols.length];
  }

  @Override String kind() { return cfg.kind(); }
  @Override int maxColumns() { return cols.length; }
  @Override int fixedColumns() { return cols.length; }

  @Override void createFixedColumns() {
    for (int k = 1; k <= cfg.harmonics(); k++) {
      cols[2 * k - 2] = columns.append(new Column(name + ".sin" + k, null, this));
      cols[2 * k - 1] = columns.append(new Column(name + ".cos" + k, null, this));
    }
  }

  @Override int requiredSlot() { return slot; }

  @Override RejectReason check(EventRecord r) {
    return slot < 0 || r.present(slot) ? null : missing(field);
  }

  /** Position in the cycle as a fraction of the period, in [0, 1). */
  private double phase(long t) {
    switch (cfg.cycle()) {
      case HOUR_OF_DAY: return calendar.dayFraction(t);
      case DAY_OF_WEEK: return (calendar.isoDayOfWeek(t) - 1) / 7.0;
      case DAY_OF_YEAR: default: return (calendar.dayOfYear(t) - 1) / (double) calendar.daysInYear(t);
    }
  }

  /**
   * Remembered encodings: slot {@code e} holds the angle {@code memoAngle[e]} (its bits; valid
   * when {@code memoFilled[e]}) and its sines and cosines {@code memo[e * cols.length ..]}, in
   * column order. A stream has few distinct positions in a cycle (24 hours of hourly data, 7
   * days), so most records find theirs here instead of computing {@code cols.length} sines and
   * cosines; the values are those the same computation gave, so the row is the same bit for bit.
   * Direct-mapped by the angle's bits, {@value #MEMO} slots.
   */
  private static final int MEMO = 64;
  private final long[] memoAngle = new long[MEMO];
  private final boolean[] memoFilled = new boolean[MEMO];
  private final double[] memo;

  @Override void write(EventRecord r, long t, double[] out, boolean training) {
    long time = slot < 0 ? t : r.timeMillis(slot);
    double base = 2.0 * Math.PI * phase(time);
    long bits = Double.doubleToRawLongBits(base);
    int e = (int) ((bits * 0x9E3779B97F4A7C15L) >>> 58);
    int w = cols.length;
    double[] m = memo;
    if (!memoFilled[e] || memoAngle[e] != bits) {
      for (int k = 1; k <= w / 2; k++) {
        double a = base * k;
        m[e * w + 2 * k - 2] = StrictMath.sin(a);
        m[e * w + 2 * k - 1] = StrictMath.cos(a);
      }
      memoAngle[e] = bits;
      memoFilled[e] = true;
    }
    Column[] c = cols;
    for (int j = 0; j < w; j++) out[c[j].index] = m[e * w + j];
  }

  @Override boolean crossable() { return true; }
  @Override List<Column> parts() { return parts; }
  @Override int maxParts() { return cols.length; }
  @Override int fixedParts() { return cols.length; }
  @Override int activeParts() { return cols.length; }
  @Override Column activePart(int i) { return cols[i]; }

  @Override void writePart(Column c, DataOutput out) throws IOException {
    out.writeByte(PART_CYCLIC);
    out.writeInt(parts.indexOf(c));
  }

  @Override Column readPart(int partKind, DataInput in) throws IOException {
    if (partKind != PART_CYCLIC) return null;
    int j = in.readInt();
    if (j < 0 || j >= cols.length) throw new IOException("corrupt checkpoint: cyclic part " + j);
    return cols[j];
  }
}
