package dev.runnel.core.pipeline;

import dev.runnel.core.layout.LayoutListener;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;
import java.util.Arrays;

/**
 * Follows the layout beside the model ({@code corrections: replace}, docs/forecasting.md): gives
 * every column an id that outlives index shifts, and keeps the affine map from the column's first
 * basis to today's, so a row learned long ago can be written in today's basis exactly as the model
 * re-expressed its information. Passes every layout event on to the model first.
 *
 * <p>A re-basing with {@code scale = s'/s} and {@code shift = (m' - m)/s} maps a column's entry
 * {@code x} to {@code (x - shift)/scale} (the constant column's entry is 1; docs/model.md); so with
 * {@code x = a * x0 + b} for the entry {@code x0} in the first basis, {@code a <- a/scale} and
 * {@code b <- (b - shift)/scale}. One thread.
 */
final class ColumnBases implements LayoutListener {

  private LayoutListener next;
  private int p;
  private int[] id;
  private double[] a;
  private double[] b;
  private int nextId;

  /** @param dimension the layout's columns now, given ids 0 to dimension − 1 in the identity basis */
  ColumnBases(int dimension) {
    id = new int[Math.max(8, dimension)];
    a = new double[id.length];
    b = new double[id.length];
    for (int j = 0; j < dimension; j++) {
      id[j] = j;
      a[j] = 1.0;
    }
    p = dimension;
    nextId = dimension;
  }

  /** The listener (the model) every event is passed on to. */
  void forwardTo(LayoutListener listener) {
    this.next = listener;
  }

  @Override
  public void columnAdded(int index, String name) {
    columnAdded(index, name, false);
  }

  @Override
  public void columnAdded(int index, String name, boolean neverRebased) {
    next.columnAdded(index, name, neverRebased);
    if (p == id.length) {
      id = Arrays.copyOf(id, p * 2);
      a = Arrays.copyOf(a, p * 2);
      b = Arrays.copyOf(b, p * 2);
    }
    id[p] = nextId++;
    a[p] = 1.0;
    b[p] = 0.0;
    p++;
  }

  @Override
  public void columnRemoved(int index) {
    next.columnRemoved(index);
    System.arraycopy(id, index + 1, id, index, p - 1 - index);
    System.arraycopy(a, index + 1, a, index, p - 1 - index);
    System.arraycopy(b, index + 1, b, index, p - 1 - index);
    p--;
  }

  @Override
  public void columnRebased(int column, double scale, double shift) {
    next.columnRebased(column, scale, shift);
    a[column] = a[column] / scale;
    b[column] = (b[column] - shift) / scale;
  }

  /** The id of layout column {@code j}. */
  int id(int j) { return id[j]; }

  /** The layout index of the column with this id, or -1 when it has been removed. O(p). */
  int indexOf(int columnId) {
    for (int j = 0; j < p; j++) {
      if (id[j] == columnId) {
        return j;
      }
    }
    return -1;
  }

  /** Column {@code j}'s entry {@code x} (today's basis) in its first basis. */
  double toFirstBasis(int j, double x) {
    return (x - b[j]) / a[j];
  }

  /** Column {@code j}'s entry {@code x0} (first basis) in today's basis. */
  double toToday(int j, double x0) {
    return a[j] * x0 + b[j];
  }

  int dimension() { return p; }

  void writeTo(DataOutput out) throws IOException {
    out.writeInt(p);
    out.writeInt(nextId);
    for (int j = 0; j < p; j++) {
      out.writeInt(id[j]);
      out.writeDouble(a[j]);
      out.writeDouble(b[j]);
    }
  }

  /** Replaces the state with what {@link #writeTo} wrote; the layout must have {@code dimension} columns. */
  void readFrom(DataInput in, int dimension) throws IOException {
    int n = in.readInt();
    if (n != dimension) {
      throw new IOException("the column bases hold " + n + " columns, the layout " + dimension);
    }
    nextId = in.readInt();
    id = new int[Math.max(8, n)];
    a = new double[id.length];
    b = new double[id.length];
    for (int j = 0; j < n; j++) {
      id[j] = in.readInt();
      a[j] = in.readDouble();
      b[j] = in.readDouble();
      if (!(a[j] > 0 && a[j] < Double.POSITIVE_INFINITY) || !Double.isFinite(b[j])) {
        throw new IOException("column basis " + j + ": scale " + a[j] + ", shift " + b[j]);
      }
    }
    p = n;
  }
}
