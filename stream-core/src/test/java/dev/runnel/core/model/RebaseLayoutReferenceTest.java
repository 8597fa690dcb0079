package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Random;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.CommonOps_DDRM;
import org.ejml.dense.row.factory.LinearSolverFactory_DDRM;
import org.ejml.interfaces.linsol.LinearSolverDense;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;

/**
 * Layout changes and re-basings against a problem the test keeps and solves from scratch (EJML's
 * Householder QR for the weights and an LU inverse of the information for the covariance, EJML as
 * reference). Unlike {@link ReferenceSolutionTest}, the windup guard's prior rows are not taken
 * from the model: the test books them itself by the rule of docs/model.md ("Windup guard"),
 * reading each column's prior information off its own decayed and re-based prior rows, so a
 * model that books a re-basing wrongly (say {@code *= scale²} for {@code /= scale²}) disagrees.
 * The records change the layout and re-base in the same step, in the leading (one-hot) block and
 * after it, across two array growths, and are then forecast before their update. The noise sd
 * and the interval are recomputed from the reference too, at high leverage.
 */
class RebaseLayoutReferenceTest {

  static final double LAMBDA = 0.98;
  static final double PRIOR_VARIANCE = 4.0;
  /** Column ids ever made in one test, at most. */
  static final int MAX_IDS = 64;

  /** One row of the reference problem, over column ids. */
  static final class Row {
    double[] a = new double[MAX_IDS];
    final double y;
    final int owner; // the column id a prior row belongs to; -1 for a data row
    double weight = 1.0;

    Row(double y, int owner) {
      this.y = y;
      this.owner = owner;
    }
  }

  /** The reference problem and the test's own bookkeeping of the guard. */
  static final class Reference {
    final boolean guard;
    final double priorInfo = 1.0 / PRIOR_VARIANCE;
    final double noiseDecay = Math.pow(2.0, -1.0 / ModelSettings.DEFAULT_NOISE_HALF_LIFE_RECORDS);
    final List<Row> rows = new ArrayList<>();
    final List<Integer> live = new ArrayList<>(); // layout index -> column id
    final List<Boolean> oneHot = new ArrayList<>();
    final double[] decaySinceRefresh = new double[MAX_IDS];
    int ids;
    long refreshes;
    double noiseSum;
    double noiseWeight;
    /** The guard's prior rows booked at the last update (layout index, information), by the test's rule. */
    final List<double[]> booked = new ArrayList<>();

    Reference(boolean guard) {
      this.guard = guard;
    }

    void addColumn(boolean neverRebased) {
      int id = ids++;
      live.add(id);
      oneHot.add(neverRebased);
      Row r = new Row(0.0, id);
      r.a[id] = Math.sqrt(priorInfo);
      rows.add(r);
      decaySinceRefresh[id] = 1.0;
    }

    void removeColumn(int k) {
      live.remove(k);
      oneHot.remove(k);
    }

    /** Row' = row T^-1: only entry k changes, a'_k = (a_k − shift a_0) / scale (see ReferenceSolutionTest). */
    void rebase(int k, double scale, double shift) {
      int idK = live.get(k);
      int id0 = live.get(0);
      for (Row r : rows) {
        r.a[idK] = (r.a[idK] - shift * r.a[id0]) / scale;
      }
    }

    /** The prior information of column {@code id}: the squared lengths of its own prior rows, decayed and re-based. */
    double priorInformation(int id) {
      double s = 0.0;
      for (Row r : rows) {
        if (r.owner == id) {
          s += r.weight * r.a[id] * r.a[id];
        }
      }
      return s;
    }

    void update(double[] x, double y, double lambda) {
      int p = live.size();
      // the noise sd's input: the standardized a-priori error e^2 / (1 + x^T (lambda Lambda)^-1 x)
      double e = y - prediction(x);
      double lev = leverage(x);
      noiseSum = noiseDecay * noiseSum + e * e / (1.0 + lev / lambda);
      noiseWeight = noiseDecay * noiseWeight + 1.0;
      for (Row r : rows) {
        r.weight *= lambda;
      }
      for (int id : live) {
        decaySinceRefresh[id] *= lambda;
      }
      Row data = new Row(y, -1);
      for (int j = 0; j < p; j++) {
        data.a[live.get(j)] = x[j];
      }
      rows.add(data);
      booked.clear();
      if (guard) {
        int j = (int) (refreshes++ % p);
        int id = live.get(j);
        double d = decaySinceRefresh[id];
        double now = priorInformation(id);
        double target = d * RlsModel.MAX_REFRESH_BOOST > 1.0 ? priorInfo / d : priorInfo * RlsModel.MAX_REFRESH_BOOST;
        double add = target - now;
        if (add > 1e-12 * target) {
          Row r = new Row(0.0, id);
          r.a[id] = Math.sqrt(add);
          rows.add(r);
          booked.add(new double[] {j, add});
        }
        decaySinceRefresh[id] = 1.0;
      }
    }

    int[] used() {
      boolean[] u = new boolean[ids];
      for (Row r : rows) {
        for (int j = 0; j < ids; j++) {
          u[j] |= r.a[j] != 0.0;
        }
      }
      int[] cols = new int[ids];
      int m = 0;
      for (int j = 0; j < ids; j++) {
        if (u[j]) {
          cols[m++] = j;
        }
      }
      return Arrays.copyOf(cols, m);
    }

    /** Weights over column ids, by QR least squares over every row. */
    double[] solution() {
      int[] cols = used();
      int m = cols.length;
      DMatrixRMaj a = new DMatrixRMaj(rows.size(), m);
      DMatrixRMaj b = new DMatrixRMaj(rows.size(), 1);
      for (int i = 0; i < rows.size(); i++) {
        Row r = rows.get(i);
        double sw = Math.sqrt(r.weight);
        for (int c = 0; c < m; c++) {
          a.set(i, c, sw * r.a[cols[c]]);
        }
        b.set(i, 0, sw * r.y);
      }
      LinearSolverDense<DMatrixRMaj> solver = LinearSolverFactory_DDRM.leastSquares(rows.size(), m);
      assertTrue(solver.setA(a), "reference QR");
      DMatrixRMaj sol = new DMatrixRMaj(m, 1);
      solver.solve(b, sol);
      double[] out = new double[ids];
      for (int c = 0; c < m; c++) {
        out[cols[c]] = sol.get(c, 0);
      }
      return out;
    }

    /** The covariance (in noise-variance units) of the live columns, layout order: a block of the inverse information. */
    double[][] covariance() {
      int[] cols = used();
      int m = cols.length;
      DMatrixRMaj info = new DMatrixRMaj(m, m);
      for (Row r : rows) {
        for (int i = 0; i < m; i++) {
          double ai = r.a[cols[i]];
          if (ai == 0.0) {
            continue;
          }
          for (int j = 0; j < m; j++) {
            info.add(i, j, r.weight * ai * r.a[cols[j]]);
          }
        }
      }
      DMatrixRMaj inv = new DMatrixRMaj(m, m);
      assertTrue(CommonOps_DDRM.invert(info, inv), "reference inverse");
      int p = live.size();
      double[][] c = new double[p][p];
      for (int i = 0; i < p; i++) {
        for (int j = 0; j < p; j++) {
          c[i][j] = inv.get(Arrays.binarySearch(cols, live.get(i)), Arrays.binarySearch(cols, live.get(j)));
        }
      }
      return c;
    }

    double prediction(double[] x) {
      double[] t = solution();
      double s = 0.0;
      for (int j = 0; j < live.size(); j++) {
        s += x[j] * t[live.get(j)];
      }
      return s;
    }

    double leverage(double[] x) {
      double[][] c = covariance();
      double s = 0.0;
      for (int i = 0; i < live.size(); i++) {
        for (int j = 0; j < live.size(); j++) {
          s += x[i] * c[i][j] * x[j];
        }
      }
      return s;
    }

    double noiseSd() {
      return Math.sqrt(noiseSum / noiseWeight);
    }
  }

  final Random rnd = new Random(20261205L);
  Reference ref;
  RlsModel model;
  final List<double[]> reported = new ArrayList<>();
  int checks;

  void start(boolean guard, int p0) {
    ref = new Reference(guard);
    model = new RlsModel(p0, ModelSettings.defaults().withPriorVariance(PRIOR_VARIANCE).withWindupGuard(guard));
    for (int j = 0; j < p0; j++) {
      ref.addColumn(false);
    }
    model.observePriorRows((column, information) -> reported.add(new double[] {column, information}));
  }

  void addColumn(boolean oneHot) {
    ref.addColumn(oneHot);
    reported.clear();
    int index = model.dimension();
    model.columnAdded(index, "c" + ref.ids, oneHot);
    assertEquals(1, reported.size(), "a new column's prior row is reported");
    assertEquals(index, reported.get(0)[0]);
    assertEquals(ref.priorInfo, reported.get(0)[1]);
  }

  void removeColumn(int k) {
    ref.removeColumn(k);
    model.columnRemoved(k);
  }

  /** Re-bases a column that may be re-based (not the constant, not a one-hot level), if there is one. */
  void rebaseSome() {
    List<Integer> ok = new ArrayList<>();
    for (int j = 1; j < ref.live.size(); j++) {
      if (!ref.oneHot.get(j)) {
        ok.add(j);
      }
    }
    if (ok.isEmpty()) {
      return;
    }
    int k = ok.get(rnd.nextInt(ok.size()));
    double scale = Math.exp(0.7 * rnd.nextGaussian());
    double shift = rnd.nextGaussian();
    ref.rebase(k, scale, shift);
    model.columnRebased(k, scale, shift);
  }

  /** A record: the constant, at most one one-hot level set, the other columns normal. */
  double[] record(double spread) {
    int p = ref.live.size();
    double[] x = new double[32];
    x[0] = 1.0;
    List<Integer> levels = new ArrayList<>();
    for (int j = 1; j < p; j++) {
      if (ref.oneHot.get(j)) {
        levels.add(j);
      } else {
        x[j] = rnd.nextGaussian();
      }
    }
    if (!levels.isEmpty() && rnd.nextInt(4) > 0) {
      x[levels.get(rnd.nextInt(levels.size()))] = 1.0;
    }
    for (int j = 0; j < p; j++) {
      x[j] *= spread; // a far-out vector (spread > 1) for the leverage and the interval
    }
    return x;
  }

  double truth(double[] x) {
    double y = 0.3;
    for (int j = 1; j < ref.live.size(); j++) {
      y += ((ref.live.get(j) % 5) - 2) * 0.4 * x[j];
    }
    return y + 0.2 * rnd.nextGaussian();
  }

  static void close(double want, double got, double tol, String what) {
    assertTrue(Math.abs(want - got) <= tol * (1.0 + Math.abs(want)), what + ": model " + got + ", reference " + want);
  }

  /** Forecast (and the rest) of an ordinary and of a far-out record against the reference, before the update. */
  void checkForecasts(String when) {
    checks++;
    double[] out = new double[2];
    for (double spread : new double[] {1.0, 60.0}) {
      double[] x = record(spread);
      double pred = ref.prediction(x);
      double lev = ref.leverage(x);
      model.forecast(x, out);
      close(lev, out[0], 1e-8, when + " forecast leverage (spread " + spread + ")");
      close(pred, out[1], 1e-8, when + " forecast prediction (spread " + spread + ")");
      close(lev, model.leverage(x), 1e-8, when + " leverage");
      close(pred, model.predict(x), 1e-8, when + " predict");
      if (spread > 1.0) {
        assertTrue(lev > 50.0, when + ": a far-out record has a high leverage, " + lev);
      }
      // the interval: z s sqrt(1 + leverage), every factor from the reference
      double want = model.settings().intervalZ() * ref.noiseSd() * Math.sqrt(1.0 + lev);
      close(want, model.intervalHalfWidth(x), 1e-7, when + " interval half-width (spread " + spread + ")");
    }
  }

  void checkWeights(String when) {
    // the cold paths first, so each of them must apply a pending re-basing itself
    int p = ref.live.size();
    double[][] c = ref.covariance();
    double[] cov = model.unscaledCovariance();
    for (int i = 0; i < p; i++) {
      for (int j = 0; j < p; j++) {
        close(c[i][j], cov[i * p + j], 1e-7, when + " covariance (" + i + ", " + j + ")");
      }
    }
    double[] info = model.informationMatrix();
    for (int i = 0; i < p; i++) { // the information is the inverse of the covariance
      for (int j = 0; j < p; j++) {
        double s = 0.0;
        double norm = 0.0;
        for (int k = 0; k < p; k++) {
          s += info[i * p + k] * c[k][j];
          norm += Math.abs(info[i * p + k] * c[k][j]);
        }
        assertEquals(i == j ? 1.0 : 0.0, s, 1e-7 * norm, when + " information x covariance (" + i + ", " + j + ")");
      }
    }
    double[] t = ref.solution();
    double[] theta = new double[32];
    model.weights(theta);
    double norm = 0.0;
    double diff = 0.0;
    for (int j = 0; j < ref.live.size(); j++) {
      double rj = t[ref.live.get(j)];
      norm = Math.max(norm, Math.abs(rj));
      diff = Math.max(diff, Math.abs(theta[j] - rj));
    }
    assertTrue(diff <= 1e-8 * norm, when + ": max |theta - reference| " + diff + " vs max |ref| " + norm);
    // the minimum of the objective (data and prior rows) and the effective sample size (the data rows' weights)
    double rho2 = 0.0;
    double nEff = 0.0;
    for (Row r : ref.rows) {
      double e = r.y;
      for (int j = 0; j < ref.ids; j++) {
        e -= r.a[j] * t[j];
      }
      rho2 += r.weight * e * e;
      nEff += r.owner < 0 ? r.weight : 0.0;
    }
    close(rho2, model.weightedResidualSumOfSquares(), 1e-7, when + " rho^2");
    close(nEff, model.effectiveSampleSize(), 1e-12, when + " effective sample size");
    double[] se = new double[32];
    model.standardErrors(se);
    if (nEff > ref.live.size()) {
      double sd = Math.sqrt(rho2 / (nEff - ref.live.size()));
      close(sd, model.residualSd(), 1e-7, when + " residual sd");
      for (int j = 0; j < p; j++) {
        close(sd * Math.sqrt(c[j][j]), se[j], 1e-7, when + " standard error " + j);
      }
    } else {
      assertTrue(Double.isNaN(model.residualSd()) && Double.isNaN(se[0]), when + ": no residual sd with n_eff " + nEff);
    }
  }

  /** One of the model's readers, called first after a re-basing, against the reference. */
  void firstAfterRebase(int which, String when) {
    int p = ref.live.size();
    double[][] c = ref.covariance();
    switch (which) {
      case 0 -> {
        double[] x = record(1.0);
        close(ref.leverage(x), model.leverage(x), 1e-8, when + " leverage first");
      }
      case 1 -> {
        double[] info = model.informationMatrix();
        for (int i = 0; i < p; i++) {
          double s = 0.0;
          double norm = 0.0;
          for (int k = 0; k < p; k++) {
            s += info[i * p + k] * c[k][i];
            norm += Math.abs(info[i * p + k] * c[k][i]);
          }
          assertEquals(1.0, s, 1e-7 * norm, when + " information first (" + i + ")");
        }
      }
      default -> {
        double[] se = new double[32];
        model.standardErrors(se);
        double sd = model.residualSd();
        for (int j = 0; j < p; j++) {
          close(sd * Math.sqrt(c[j][j]), se[j], 1e-7, when + " standard error " + j + " first");
        }
      }
    }
  }

  void update() {
    double[] x = record(1.0);
    double y = truth(x);
    reported.clear();
    ref.update(x, y, LAMBDA);
    assertTrue(model.update(x, y, LAMBDA));
    // the guard's rows: the model's report agrees with the test's own booking
    assertEquals(ref.booked.size(), reported.size(), "refresh rows this update");
    for (int i = 0; i < reported.size(); i++) {
      assertEquals(ref.booked.get(i)[0], reported.get(i)[0], "refreshed column");
      close(ref.booked.get(i)[1], reported.get(i)[1], 1e-9, "refresh information");
    }
  }

  @ParameterizedTest(name = "windup guard {0}")
  @ValueSource(booleans = {true, false})
  void layoutChangesAndRebasingsInOneRecord_thenForecast_matchAFromScratchSolve(boolean guard) {
    start(guard, 3); // capacity 4: grows at the 5th and the 9th column
    for (int step = 0; step < 420; step++) {
      if (step == 5 || step == 10) { // weights solved and kept, then appends: the 5th column grows the arrays
        checkWeights("step " + step + " before append");
        addColumn(false);
        checkForecasts("step " + step + " after append");
      }
      if (step == 15) { // weights and pivots in use, then a level into the leading block (no re-basing before)
        checkWeights("step 15 before a level");
        checkForecasts("step 15 before a level");
        addColumn(true);
        checkForecasts("step 15 after a level");
      }
      if (step >= 20 && step % 6 == 0) {
        int p = model.dimension();
        switch ((step / 6) % 5) {
          case 0 -> { // weights solved, then a plain column appended (an array growth at 4 and 8 columns)
            checkWeights("step " + step + " before append");
            if (p < 12) {
              addColumn(false);
            }
            checkForecasts("step " + step + " after append");
          }
          case 1 -> { // a pending re-basing, then a one-hot column into the leading block
            rebaseSome();
            if (p < 12) {
              addColumn(true);
            }
            checkForecasts("step " + step + " re-base, add level");
          }
          case 2 -> { // a pending re-basing, then a removal (of a column after the re-based one or before it)
            rebaseSome();
            if (p > 4) {
              removeColumn(1 + rnd.nextInt(p - 1));
            }
            checkForecasts("step " + step + " re-base, remove");
          }
          case 3 -> { // two re-basings, a level added, one removed, the first column re-based again
            rebaseSome();
            rebaseSome();
            if (p < 12) {
              addColumn(true);
            }
            if (model.dimension() > 4) {
              int last = model.dimension() - 1;
              removeColumn(ref.oneHot.get(last) ? last : 1 + rnd.nextInt(last));
            }
            rebaseSome();
            checkForecasts("step " + step + " mixed");
          }
          default -> { // a re-basing alone, then each reader first in turn: each must apply it itself
            for (int first = 0; first < 3; first++) {
              rebaseSome();
              firstAfterRebase(first, "step " + step + " re-base");
            }
            rebaseSome();
            checkWeights("step " + step + " re-base");
            rebaseSome();
            checkForecasts("step " + step + " re-base");
          }
        }
      }
      update();
      if (step % 25 == 0) {
        checkWeights("step " + step);
      }
    }
    checkWeights("end");
    assertTrue(ref.ids >= 12 && checks >= 60, "the stream exercised the layout: " + ref.ids + " columns, " + checks
        + " checks");
  }

  /**
   * Forgetting so fast ({@code lambda^p} below 1e-12) that a refresh is capped at 1e12 times the
   * prior information: the model's refresh rows against the test's own booking (the weights are
   * not compared: the rows' weights span hundreds of orders of magnitude).
   */
  @org.junit.jupiter.api.Test
  void veryFastForgetting_capsTheRefresh() {
    start(true, 5);
    int capped = 0;
    for (int step = 0; step < 30; step++) {
      double[] x = record(1.0);
      double y = truth(x);
      reported.clear();
      ref.update(x, y, 1e-3);
      assertTrue(model.update(x, y, 1e-3));
      assertEquals(ref.booked.size(), reported.size(), "refresh rows at step " + step);
      for (int i = 0; i < reported.size(); i++) {
        close(ref.booked.get(i)[1], reported.get(i)[1], 1e-9, "refresh information at step " + step);
        capped += ref.booked.get(i)[1] > 0.99 * ref.priorInfo * RlsModel.MAX_REFRESH_BOOST ? 1 : 0;
      }
    }
    assertTrue(capped >= 10, "capped refreshes: " + capped);
  }

  /**
   * The guard's booking at re-basings, with a fixed layout: frequent re-basings by large factors,
   * so a column's tracked prior information that is re-scaled the wrong way shows in the amount
   * refreshed (checked in {@link #update}) and in the weights.
   */
  @org.junit.jupiter.api.Test
  void guardBooksThePriorOfARebasedColumnAsItsRowsSay() {
    start(true, 4);
    for (int step = 0; step < 300; step++) {
      if (step % 3 == 0) {
        rebaseSome();
      }
      update();
      if (step % 10 == 0) {
        checkWeights("step " + step);
      }
    }
    assertTrue(ref.refreshes == 300, "a refresh turn per update");
  }
}
