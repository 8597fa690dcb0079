package dev.runnel.core.feature;

import dev.runnel.core.config.FeatureConfig;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;
import java.util.IdentityHashMap;
import java.util.List;

/**
 * Products of the columns of two earlier crossable features ({@code kind: cross}; one-hot or
 * cyclic). A cell column {@code <a column>*<b column>} exists for every pair of parts; a one-hot's
 * parts are its "(other)" column and its level columns, so cells come and go with the levels (right
 * after the level's own column event). Those columns are unscaled, so no re-basing is needed.
 */
final class CrossFeature extends Feature {

  /** A cell column, which knows its two parts (for the checkpoint). */
  static final class Cell extends Column {
    final Column a;
    final Column b;

    Cell(Column a, Column b, Feature owner) {
      super(a.name + "*" + b.name, null, owner);
      this.a = a;
      this.b = b;
    }
  }

  final FeatureConfig.Cross cfg;
  private final Feature a;
  private final Feature b;
  /** The cell of parts (pa, pb) is {@code cells.get(pa).get(pb)}. */
  private final IdentityHashMap<Column, IdentityHashMap<Column, Cell>> cells = new IdentityHashMap<>();

  /**
   * @param built the features before this one, which the cross names. Not modified.
   * @throws IllegalArgumentException if a named feature is not declared before it or is not crossable
   */
  CrossFeature(FeatureConfig.Cross cfg, int position, Feature[] built) {
    super(cfg.name(), position);
    this.cfg = cfg;
    this.a = find(built, position, cfg.of().get(0));
    this.b = find(built, position, cfg.of().get(1));
    a.addDependent(this);
    b.addDependent(this);
  }

  private static Feature find(Feature[] built, int before, String name) {
    for (int k = 0; k < before; k++) {
      if (built[k].name.equals(name)) {
        if (!built[k].crossable()) {
          throw new IllegalArgumentException("a cross takes onehot or cyclic features; " + name + " is " + built[k].kind());
        }
        return built[k];
      }
    }
    throw new IllegalArgumentException("a cross must name features declared before it; " + name + " is not one");
  }

  @Override String kind() { return cfg.kind(); }

  @Override int maxColumns() {
    long n = (long) a.maxParts() * b.maxParts();
    return n > Integer.MAX_VALUE / 2 ? Integer.MAX_VALUE / 2 : (int) n;
  }

  @Override int fixedColumns() { return a.fixedParts() * b.fixedParts(); }

  @Override void createFixedColumns() {
    List<Column> pa = a.parts();
    List<Column> pb = b.parts();
    for (int i = 0; i < pa.size(); i++) {
      for (int j = 0; j < pb.size(); j++) put(columns.append(new Cell(pa.get(i), pb.get(j), this)));
    }
  }

  private void put(Cell cell) {
    cells.computeIfAbsent(cell.a, k -> new IdentityHashMap<>()).put(cell.b, cell);
  }

  /** A part of side {@code side} was added: its cells with every part of the other side follow it. */
  void partAdded(Feature side, Column part) {
    if (side == a) {
      List<Column> pb = b.parts();
      for (int j = 0; j < pb.size(); j++) put(columns.add(new Cell(part, pb.get(j), this)));
    } else {
      List<Column> pa = a.parts();
      for (int i = 0; i < pa.size(); i++) put(columns.add(new Cell(pa.get(i), part, this)));
    }
  }

  /** A part of side {@code side} was removed: its cells go, in the order of the other side's parts. */
  void partRemoved(Feature side, Column part) {
    if (side == a) {
      IdentityHashMap<Column, Cell> row = cells.remove(part);
      if (row == null) return;
      List<Column> pb = b.parts();
      for (int j = 0; j < pb.size(); j++) {
        Cell cell = row.get(pb.get(j));
        if (cell != null) columns.remove(cell);
      }
    } else {
      List<Column> pa = a.parts();
      for (int i = 0; i < pa.size(); i++) {
        IdentityHashMap<Column, Cell> row = cells.get(pa.get(i));
        Cell cell = row == null ? null : row.remove(part);
        if (cell != null) columns.remove(cell);
      }
    }
  }

  @Override RejectReason check(EventRecord r) { return null; }

  @Override boolean readsRow() { return true; }

  @Override void write(EventRecord r, long t, double[] out, boolean training) {
    // a one-hot's active part holds 1.0 and 1.0 * v == v exactly, so each cell is the product of
    // its parts' entries, whatever the kinds
    int na = a.activeParts();
    int nb = b.activeParts();
    for (int i = 0; i < na; i++) {
      Column pa = a.activePart(i);
      IdentityHashMap<Column, Cell> row = cells.get(pa);
      double va = out[pa.index];
      for (int j = 0; j < nb; j++) {
        Column pb = b.activePart(j);
        out[row.get(pb).index] = va * out[pb.index];
      }
    }
  }

  /** Every cell after the fixed columns is one of a level, so dynamic (cells of fixed parts are fixed columns). */
  @Override boolean isDynamic(Column c) { return true; }

  @Override void writeDynamicColumn(Column c, DataOutput out) throws IOException {
    Cell cell = (Cell) c;
    writePartId(cell.a, out);
    writePartId(cell.b, out);
  }

  @Override void restoreDynamicColumn(DataInput in, PartReader parts) throws IOException {
    Column pa = parts.read(in);
    Column pb = parts.read(in);
    IdentityHashMap<Column, Cell> row = cells.get(pa);
    if (row != null && row.containsKey(pb)) throw new IOException("corrupt checkpoint: cell " + pa.name + "*" + pb.name + " twice");
    put(columns.append(new Cell(pa, pb, this)));
  }
}
