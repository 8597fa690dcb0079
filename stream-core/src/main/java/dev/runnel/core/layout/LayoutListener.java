package dev.runnel.core.layout;

/**
 * Receives every change of the column layout, in the order the featurizer makes them, so a model
 * can follow its columns exactly. One writer thread.
 *
 * <p>Contract:
 * <ul>
 *   <li>Column 0 is the constant term when the layout has one; it is never added or removed.</li>
 *   <li>{@link #columnAdded} always appends: the new column's index is the old dimension.</li>
 *   <li>{@link #columnRemoved} removes one index; the columns after it move down by one.</li>
 *   <li>{@link #columnRebased} re-expresses column {@code column} in a new basis: with the old
 *       encoding {@code z = (v - m) / s} and the new {@code z' = (v - m') / s'}, the model must
 *       map its weight {@code w -> w * scale} with {@code scale = s' / s}, and add
 *       {@code w * shift} to the constant's weight with {@code shift = (m' - m) / s}, so that no
 *       prediction changes. {@code shift} is 0 when the layout has no constant term.</li>
 * </ul>
 */
public interface LayoutListener {

  /**
   * A column was appended at index {@code index} (equal to the previous dimension).
   *
   * @param index the new column's index
   * @param name the column's name, e.g. {@code hub=H07}. Not modified.
   */
  void columnAdded(int index, String name);

  /**
   * As {@link #columnAdded(int, String)}, saying whether {@link #columnRebased} will ever be
   * called for the column (false for a one-hot level, whose encoding is fixed). A model may use
   * it to order its own storage; by default it is ignored.
   *
   * @param index the new column's index
   * @param name the column's name. Not modified.
   * @param neverRebased true if the column will never be re-based
   */
  default void columnAdded(int index, String name, boolean neverRebased) {
    columnAdded(index, name);
  }

  /**
   * The column at {@code index} was removed; later columns shift down by one.
   *
   * @param index index of the removed column, at least 1 when there is a constant term
   */
  void columnRemoved(int index);

  /**
   * Column {@code column}'s encoding changed from {@code (v - m)/s} to {@code (v - m')/s'}.
   *
   * @param column the re-based column
   * @param scale {@code s' / s}, positive and finite
   * @param shift {@code (m' - m) / s}, finite; 0 without a constant term
   */
  void columnRebased(int column, double scale, double shift);

  /** A listener that ignores every change. */
  LayoutListener NONE = new LayoutListener() {
    @Override public void columnAdded(int index, String name) { }
    @Override public void columnRemoved(int index) { }
    @Override public void columnRebased(int column, double scale, double shift) { }
  };
}
