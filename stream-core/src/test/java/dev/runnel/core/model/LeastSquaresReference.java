package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.factory.LinearSolverFactory_DDRM;
import org.ejml.interfaces.linsol.LinearSolverDense;

/**
 * The from-scratch reference that {@link DowndateTest} and {@link ReferenceSolutionTest} hold the
 * model to: weighted rows over column ids (every column ever seen, so a removed column stays an
 * unknown) and their weighted least-squares solution, min sum w (y - a^T theta)^2, by EJML's
 * Householder QR over the columns any row touches (EJML as reference).
 */
abstract class LeastSquaresReference {

  /** One row of the reference problem, over column ids. */
  static final class Row {
    double[] a;
    final double y;
    double weight = 1.0;
    /** A data row (false: a prior or information row, never removed by a downdate). */
    final boolean data;

    Row(int ids, double y, boolean data) {
      this.a = new double[ids];
      this.y = y;
      this.data = data;
    }
  }

  final List<Row> rows = new ArrayList<>();
  /** Live index (the model's column) to column id. */
  final List<Integer> live = new ArrayList<>();
  /** Column ids handed out so far. */
  int ids;

  Row newRow(double y, boolean data) {
    Row r = new Row(Math.max(ids, 1), y, data);
    rows.add(r);
    return r;
  }

  /** The row's entries, grown to every column id handed out so far. */
  double[] entries(Row r) {
    if (r.a.length < ids) {
      r.a = Arrays.copyOf(r.a, ids);
    }
    return r.a;
  }

  /**
   * The model's prior as reference rows: the constructor's, 1/priorVariance on each of the first
   * {@code p0} column ids (documented), and every prior row the model adds later (a new column's).
   */
  void priorRows(RlsModel model, int p0, double priorVariance) {
    for (int j = 0; j < p0; j++) {
      Row r = newRow(0.0, false);
      entries(r)[j] = Math.sqrt(1.0 / priorVariance);
    }
    model.observePriorRows((column, information) -> {
      Row r = newRow(0.0, false);
      entries(r)[live.get(column)] = Math.sqrt(information);
    });
  }

  /**
   * Solves the reference problem.
   *
   * @param out by column id, at least {@link #ids} long: the weights of the columns any row
   *     touches are written, the others are left as they are
   * @return the weighted residual sum of squares at the solution
   */
  double referenceSolution(double[] out) {
    boolean[] used = new boolean[ids];
    for (Row r : rows) {
      double[] a = entries(r);
      for (int j = 0; j < ids; j++) {
        used[j] |= a[j] != 0.0;
      }
    }
    int[] cols = new int[ids];
    int m = 0;
    for (int j = 0; j < ids; j++) {
      if (used[j]) {
        cols[m++] = j;
      }
    }
    DMatrixRMaj a = new DMatrixRMaj(rows.size(), m);
    DMatrixRMaj b = new DMatrixRMaj(rows.size(), 1);
    int i = 0;
    for (Row r : rows) {
      double sw = Math.sqrt(r.weight);
      for (int c = 0; c < m; c++) {
        a.set(i, c, sw * r.a[cols[c]]);
      }
      b.set(i, 0, sw * r.y);
      i++;
    }
    LinearSolverDense<DMatrixRMaj> solver = LinearSolverFactory_DDRM.leastSquares(rows.size(), m);
    assertTrue(solver.setA(a), "reference QR");
    DMatrixRMaj sol = new DMatrixRMaj(m, 1);
    solver.solve(b, sol);
    for (int c = 0; c < m; c++) {
      out[cols[c]] = sol.get(c, 0);
    }
    double rss = 0.0;
    for (Row r : rows) {
      double fit = 0.0;
      for (int c = 0; c < m; c++) {
        fit += r.a[cols[c]] * sol.get(c, 0);
      }
      double e = r.y - fit;
      rss += r.weight * e * e;
    }
    return rss;
  }
}
