package dev.runnel.core.model;

/**
 * Told of every prior-information row an {@link RlsModel} adds, so a check can rebuild the exact
 * least-squares problem the model solves. A prior row is {@code sqrt(information) * e_column} with
 * target 0, added at the current basis and then decayed and re-based like any data row.
 */
@FunctionalInterface
public interface PriorRowObserver {

  /**
   * A prior row was added.
   *
   * @param column live index of the column the row touches
   * @param information the information the row adds to that column's diagonal (the row's squared
   *     length), positive
   */
  void priorRowAdded(int column, double information);
}
