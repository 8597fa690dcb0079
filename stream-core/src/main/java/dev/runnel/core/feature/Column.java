package dev.runnel.core.feature;

/**
 * One column of the layout: its current index (kept by {@link Columns}), its name, the scaler
 * whose re-basing it reports (null for a column that is never re-based) and the feature kind that
 * made it (null for the constant). A kind may extend it to remember what the column stands for
 * (a one-hot level's key, a cross cell's two parts).
 */
class Column {
  /** Current index in the layout; -1 once removed. Written by {@link Columns} only. */
  int index;
  final String name;
  final RunningScaler scaler;
  final Feature owner;

  Column(String name, RunningScaler scaler, Feature owner) {
    this.name = name;
    this.scaler = scaler;
    this.owner = owner;
  }
}
