package dev.runnel.core.feature;

import dev.runnel.core.layout.LayoutListener;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;

/**
 * The column bookkeeping of one featurizer: the columns in layout order, the layout version and
 * the listener that hears every change. Feature kinds write to it; it knows nothing of records or
 * kinds. One writer thread.
 *
 * <p>{@link #append} places a column without an event (the constant and every kind's fixed columns
 * at construction, the dynamic columns of a restored checkpoint); {@link #add}, {@link #remove}
 * and {@link #rebase} are the layout changes of training: each is reported to the listener as it
 * is made, and adding or removing counts one layout version.
 */
final class Columns {

  private final boolean constantTerm;
  private final int maxDimension;
  private Column[] columns;
  private int dimension;
  private long layoutVersion;
  private LayoutListener listener = LayoutListener.NONE;

  /**
   * @param maxDimension the most columns the layout can have
   * @param constantTerm whether column 0 is the constant term (re-basings then carry a shift)
   */
  Columns(int maxDimension, boolean constantTerm) {
    this.maxDimension = maxDimension;
    this.constantTerm = constantTerm;
    this.columns = new Column[Math.min(maxDimension, 64)];
  }

  int dimension() { return dimension; }

  int maxDimension() { return maxDimension; }

  long layoutVersion() { return layoutVersion; }

  /** Sets the layout version of a restored checkpoint. */
  void restoreLayoutVersion(long version) { layoutVersion = version; }

  void setListener(LayoutListener listener) { this.listener = listener == null ? LayoutListener.NONE : listener; }

  /** Column {@code column}, checked against the dimension. */
  Column get(int column) {
    if (column < 0 || column >= dimension) {
      throw new IndexOutOfBoundsException("column " + column + " is outside 0.." + (dimension - 1));
    }
    return columns[column];
  }

  /** Names of all columns in order (a copy; cold path). */
  List<String> names() {
    List<String> out = new ArrayList<>(dimension);
    for (int i = 0; i < dimension; i++) out.add(columns[i].name);
    return out;
  }

  /** Places {@code c} at the end without an event or a new layout version. @return c */
  <C extends Column> C append(C c) {
    if (dimension == columns.length) columns = Arrays.copyOf(columns, Math.min(maxDimension, Math.max(8, dimension * 2)));
    c.index = dimension;
    columns[dimension++] = c;
    return c;
  }

  /** Appends {@code c} as a layout change and tells the listener. @return c */
  <C extends Column> C add(C c) {
    append(c);
    layoutVersion++;
    listener.columnAdded(c.index, c.name, c.scaler == null); // only scaled columns are ever re-based
    return c;
  }

  /** Removes {@code c} (later columns move down by one) and tells the listener. */
  void remove(Column c) {
    int at = c.index;
    for (int i = at + 1; i < dimension; i++) {
      Column m = columns[i];
      m.index = i - 1;
      columns[i - 1] = m;
    }
    columns[--dimension] = null;
    c.index = -1;
    layoutVersion++;
    listener.columnRemoved(at);
  }

  /** Tells the listener that {@code c}'s scaler moved its centre or scale (its last change). */
  void rebase(Column c) {
    RunningScaler s = c.scaler;
    listener.columnRebased(c.index, s.lastScale(), constantTerm ? s.lastShift() : 0.0);
  }
}
