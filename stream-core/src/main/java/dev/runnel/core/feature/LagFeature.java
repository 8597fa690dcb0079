package dev.runnel.core.feature;

import dev.runnel.core.config.FeatureConfig;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.record.RecordSchema;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;
import java.util.Arrays;

/**
 * The value of a number field (by default the target) of the same entity at a fixed offset before
 * the record's target time ({@code kind: lag}, docs/features.md): columns {@code <name>} and
 * {@code <name>.missing}.
 *
 * <p>Time is cut into cells of {@code grid}; each entity keeps one value per cell (the one with the
 * latest target time in the cell; a repeat of the same target time replaces it) with the event
 * time it became known, in a ring of {@code (offset + tolerance) / grid + 2} cells. A record with
 * target time T and issue time s reads the cell that holds {@code T − offset}; with a
 * {@code tolerance}, the latest earlier cell with a value, at most {@code tolerance} further back.
 * A value counts only if it became known by s (its actual's event time ≤ s) and was processed
 * before the record. Otherwise the value is missing ({@code <name>.missing} = 1) and imputed
 * ({@link HistoryFeature}).
 *
 * <p>Memory: 24 bytes per cell and entity (the value, its target time and when it became known),
 * beside the entity table; arrays grow with the entities seen, up to {@code max_entities}.
 */
final class LagFeature extends HistoryFeature {

  final FeatureConfig.Lag cfg;
  private final long grid;
  private final long offset;
  private final int lookBack;
  /** Cells per entity. */
  final int cells;
  /** By {@code id * cells + cell % cells}: the value, its target time (MIN_VALUE = empty), when it became known. */
  private double[] cellValue = new double[0];
  private long[] cellTime = new long[0];
  private long[] cellKnown = new long[0];

  LagFeature(FeatureConfig.Lag cfg, int position, PipelineConfig config, RecordSchema schema) {
    super(cfg.name(), position, cfg.field(), cfg.maxEntities(), cfg.expireAfterMillis(), config, schema);
    this.cfg = cfg;
    this.grid = cfg.gridMillis();
    this.offset = cfg.offsetMillis();
    this.lookBack = (int) (cfg.toleranceMillis() / grid);
    this.cells = (int) ((cfg.offsetMillis() + cfg.toleranceMillis()) / grid + 2);
    if ((long) cells * cfg.maxEntities() > Integer.MAX_VALUE - 8) {
      throw new IllegalArgumentException("features[" + position + "].max_entities: " + cfg.maxEntities() + " entities of "
          + cells + " cells each do not fit one array; lower max_entities to at most " + (Integer.MAX_VALUE - 8) / cells);
    }
  }

  @Override String kind() { return cfg.kind(); }
  @Override String kindWord() { return "lag"; }

  @Override boolean lookUp(int id, long targetMillis, long issueMillis) {
    long wanted = Math.floorDiv(targetMillis - offset, grid);
    int base = id * cells;
    for (int k = 0; k <= lookBack; k++) {
      long c = wanted - k;
      int at = base + (int) Math.floorMod(c, (long) cells);
      long t = cellTime[at];
      if (t != Long.MIN_VALUE && Math.floorDiv(t, grid) == c && cellKnown[at] <= issueMillis) {
        value = cellValue[at];
        return true;
      }
    }
    return false;
  }

  @Override void rememberAt(int id, double y, long targetMillis, long issueMillis) {
    long c = Math.floorDiv(targetMillis, grid);
    int at = id * cells + (int) Math.floorMod(c, (long) cells);
    long t = cellTime[at];
    if (t != Long.MIN_VALUE && Math.floorDiv(t, grid) == c && t > targetMillis) return; // the cell holds a later time
    cellValue[at] = y;
    cellTime[at] = targetMillis;
    cellKnown[at] = issueMillis;
  }

  @Override void growEntities(int n) {
    int old = cellTime.length;
    cellValue = Arrays.copyOf(cellValue, n * cells);
    cellTime = Arrays.copyOf(cellTime, n * cells);
    cellKnown = Arrays.copyOf(cellKnown, n * cells);
    Arrays.fill(cellTime, old, cellTime.length, Long.MIN_VALUE);
  }

  @Override void clearEntity(int id) {
    int base = id * cells;
    Arrays.fill(cellTime, base, base + cells, Long.MIN_VALUE);
    Arrays.fill(cellValue, base, base + cells, 0.0);
    Arrays.fill(cellKnown, base, base + cells, 0L);
  }

  /** The cells that hold a value, in ring order: count, then each cell's place, value, target time and known time. */
  @Override void writeEntity(int id, DataOutput out) throws IOException {
    int base = id * cells;
    int n = 0;
    for (int k = 0; k < cells; k++) if (cellTime[base + k] != Long.MIN_VALUE) n++;
    out.writeInt(n);
    for (int k = 0; k < cells; k++) {
      int at = base + k;
      if (cellTime[at] == Long.MIN_VALUE) continue;
      out.writeInt(k);
      out.writeDouble(cellValue[at]);
      out.writeLong(cellTime[at]);
      out.writeLong(cellKnown[at]);
    }
  }

  @Override void readEntity(int id, DataInput in) throws IOException {
    clearEntity(id);
    int n = in.readInt();
    if (n < 0 || n > cells) throw new IOException("corrupt checkpoint: " + n + " lag cells of " + name + ", at most " + cells);
    int base = id * cells;
    for (int i = 0; i < n; i++) {
      int k = in.readInt();
      if (k < 0 || k >= cells) throw new IOException("corrupt checkpoint: lag cell " + k + " of " + name);
      cellValue[base + k] = in.readDouble();
      cellTime[base + k] = in.readLong();
      cellKnown[base + k] = in.readLong();
    }
  }
}
