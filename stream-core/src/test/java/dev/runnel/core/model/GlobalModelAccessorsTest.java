package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.ArrayList;
import java.util.Arrays;
import java.util.HashSet;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Random;
import org.apache.commons.math3.linear.Array2DRowRealMatrix;
import org.apache.commons.math3.linear.ArrayRealVector;
import org.apache.commons.math3.linear.LUDecomposition;
import org.apache.commons.math3.linear.RealMatrix;
import org.apache.commons.math3.linear.RealVector;
import org.junit.jupiter.api.Test;

/**
 * A {@link GlobalModel}'s answers in the local layout ({@link GlobalModel#localWeights},
 * {@link GlobalModel#localStandardErrors}, {@link GlobalModel#localUnscaledCovariance},
 * {@link GlobalModel#predict}, {@link GlobalModel#leverage}) against weighted least squares over
 * the union of both partitions' records, solved here with Commons Math's {@link LUDecomposition}
 * (no prior, no windup guard: the view is then that solution itself). Every record keeps its raw
 * values and its event time; at the end each weighs {@code 2^(-(T - t)/h)} at the receiver's
 * clock {@code T} (docs/model.md, "The fold", forgetting by event time), and its entries are in
 * the receiver's bases, which the test sets itself. The sender's bases differ from the
 * receiver's in offset and scale (price), in offset alone (temp) and in scale alone (load); the
 * sender has levels the receiver never sees; the receiver has more than 8 local columns, removes
 * one (kept in the view) and adds one after a fold, so the view's order is not the local one.
 */
class GlobalModelAccessorsTest {

  static final double H = 100_000;
  static final ModelSettings PLAIN =
      ModelSettings.defaults().withPriorVariance(ModelSettings.DIFFUSE).withWindupGuard(false);
  static final String[] NUMERIC = {"price", "temp", "load"};

  record Rec(long t, double[] raw, String level, double y) { }

  /** A partition: its model, clock, bases (per numeric column: offset, scale) and records. */
  static final class Part {
    final GlobalModel gm;
    final List<String> layout = new ArrayList<>();
    final double[] off = new double[3];
    final double[] sc = {1, 1, 1};
    final List<Rec> recs = new ArrayList<>();
    final Random rnd;
    final List<String> levels;
    final java.util.Set<String> twoArgs = new HashSet<>();
    long clock;

    Part(int id, long seed, List<String> levels) {
      layout.addAll(List.of("constant", "price", "temp", "load"));
      gm = new GlobalModel(id, layout.toArray(new String[0]), PLAIN, H);
      rnd = new Random(seed);
      this.levels = new ArrayList<>(levels);
      for (String l : levels) {
        add(l);
      }
    }

    void add(String level) {
      layout.add(level);
      if (layout.size() % 2 == 0) {
        gm.columnAdded(layout.size() - 1, level); // the two-argument form: re-based like any column
        twoArgs.add(level);
      } else {
        gm.columnAdded(layout.size() - 1, level, true);
      }
    }

    void basis(int k, double offset, double scale) {
      // from (off, sc) to (offset, scale): x' = (x - shift) / s' with shift in units of the old scale
      gm.columnRebased(1 + k, scale / sc[k], (offset - off[k]) / sc[k]);
      off[k] = offset;
      sc[k] = scale;
    }

    void learn(int n) {
      for (int i = 0; i < n; i++) {
        double[] raw = {10 + 3 * rnd.nextGaussian(), 20 + 5 * rnd.nextGaussian(), 2 + rnd.nextGaussian()};
        int pick = rnd.nextInt(levels.size() + 1);
        String level = pick < levels.size() ? levels.get(pick) : null;
        double y = 3 + 0.5 * raw[0] - 0.2 * raw[1] + raw[2] + (level == null ? 0 : 0.3 * levels.indexOf(level))
            + 0.5 * rnd.nextGaussian();
        long t = clock + 1 + rnd.nextInt(4000);
        double lambda = StrictMath.pow(2.0, -(double) (t - clock) / H);
        clock = t;
        double[] x = new double[layout.size()];
        x[0] = 1;
        for (int k = 0; k < 3; k++) {
          x[1 + k] = (raw[k] - off[k]) / sc[k];
        }
        if (level != null) {
          x[layout.indexOf(level)] = 1;
        }
        assertTrue(gm.update(x, y, lambda, null));
        recs.add(new Rec(t, raw, level, y));
      }
    }
  }

  /** The weighted least squares solution over {@code cols}, rows in the bases {@code off, sc}. */
  static final class Wls {
    final List<String> cols;
    final RealMatrix inv;
    final RealVector theta;
    final double rss;
    final double n;

    Wls(List<String> cols, List<Rec> recs, long now, double[] off, double[] sc) {
      this.cols = cols;
      int p = cols.size();
      RealMatrix a = new Array2DRowRealMatrix(p, p);
      RealVector b = new ArrayRealVector(p);
      double nn = 0;
      List<double[]> xs = new ArrayList<>();
      for (Rec r : recs) {
        double w = StrictMath.pow(2.0, -(double) (now - r.t) / H);
        double[] x = row(r, off, sc);
        xs.add(x);
        nn += w;
        for (int i = 0; i < p; i++) {
          b.addToEntry(i, w * x[i] * r.y);
          for (int j = 0; j < p; j++) {
            a.addToEntry(i, j, w * x[i] * x[j]);
          }
        }
      }
      inv = new LUDecomposition(a).getSolver().getInverse();
      theta = inv.operate(b);
      double s = 0;
      for (int k = 0; k < recs.size(); k++) {
        double w = StrictMath.pow(2.0, -(double) (now - recs.get(k).t) / H);
        double e = recs.get(k).y - theta.dotProduct(new ArrayRealVector(xs.get(k)));
        s += w * e * e;
      }
      rss = s;
      n = nn;
    }

    double[] row(Rec r, double[] off, double[] sc) {
      double[] x = new double[cols.size()];
      x[cols.indexOf("constant")] = 1;
      for (int k = 0; k < 3; k++) {
        x[cols.indexOf(NUMERIC[k])] = (r.raw[k] - off[k]) / sc[k];
      }
      if (r.level != null) {
        x[cols.indexOf(r.level)] = 1;
      }
      return x;
    }
  }

  @Test
  void theLocalAnswersAreTheUnionsWeightedLeastSquares() {
    Part a = new Part(0, 31, List.of("site=a", "site=b", "site=c", "site=d", "site=e"));
    Part b = new Part(1, 32, List.of("site=a", "site=x", "site=y"));
    a.basis(0, 5, 2);
    a.basis(1, 3, 1.5);
    a.basis(2, 0, 4);
    b.basis(0, 7, 3); // offset and scale differ from a's
    b.basis(1, 1, 1.5); // offset only
    b.basis(2, 0, 0.5); // scale only
    b.clock = 50_000; // b's clock runs ahead of a's: its shares are folded with weights above 1
    a.learn(60);
    b.learn(70);
    ModelShare s1 = b.gm.share(b.clock);
    assertEquals(GlobalModel.FoldResult.FOLDED, a.gm.fold(s1, a.clock));
    // a removes site=c (kept in the view; no record has it from now on) and adds site=f
    int c = a.layout.indexOf("site=c");
    a.gm.columnRemoved(c);
    a.layout.remove(c);
    a.levels.remove("site=c");
    a.add("site=f");
    a.levels.add("site=f");
    a.learn(50);
    b.learn(40);
    ModelShare s2 = b.gm.share(b.clock);
    assertTrue(a.clock < b.clock, "the fold is not ahead");
    assertEquals(GlobalModel.FoldResult.FOLDED, a.gm.fold(s2, a.clock));
    a.learn(20);

    List<String> union = a.gm.viewColumns();
    assertEquals(new HashSet<>(List.of("constant", "price", "temp", "load", "site=a", "site=b", "site=c", "site=d",
        "site=e", "site=f", "site=x", "site=y")), new HashSet<>(union));
    assertEquals(12, union.size());
    assertEquals(9, a.gm.localDimension()); // past the first 8: the local map grew
    assertTrue(union.indexOf("site=x") < union.indexOf("site=f"), "the view's order is not the local one");
    for (String name : union) {
      assertEquals(union.indexOf(name), a.gm.viewIndex(name));
    }
    assertEquals(-1, a.gm.viewIndex("site=z"));

    // a row of b learned at t is stated at b's clock t0 with weight 2^(-(t0 - t)/h) and folded at
    // a's clock t1 with 2^(-(t1 - t0)/h): together 2^(-(t1 - t)/h), then forgotten with a's rows
    List<Rec> all = new ArrayList<>(a.recs);
    all.addAll(b.recs);
    Wls ref = new Wls(union, all, a.clock, a.off, a.sc);
    int p = union.size();
    int local = a.layout.size();
    double[] w = new double[local];
    double[] se = new double[local];
    a.gm.localWeights(w);
    a.gm.localStandardErrors(se);
    double[] cov = a.gm.localUnscaledCovariance();
    assertEquals(local * local, cov.length);
    double sd = Math.sqrt(ref.rss / (ref.n - p)); // the residual sd over n_eff - p (RlsModel.residualSd)
    for (int i = 0; i < local; i++) {
      int vi = union.indexOf(a.layout.get(i));
      double want = ref.theta.getEntry(vi);
      assertEquals(want, w[i], 1e-9 * (1 + Math.abs(want)), "weight of " + a.layout.get(i));
      double wantSe = sd * Math.sqrt(ref.inv.getEntry(vi, vi));
      assertEquals(wantSe, se[i], 1e-8 * wantSe, "standard error of " + a.layout.get(i));
      for (int j = 0; j < local; j++) {
        int vj = union.indexOf(a.layout.get(j));
        double e = ref.inv.getEntry(vi, vj);
        assertEquals(e, cov[i * local + j], 1e-8 * Math.sqrt(ref.inv.getEntry(vi, vi) * ref.inv.getEntry(vj, vj)),
            "covariance (" + a.layout.get(i) + ", " + a.layout.get(j) + ")");
      }
    }
    // a prediction and a leverage of a new record in the local layout
    Rec probe = new Rec(a.clock, new double[] {12.0, 18.0, 2.5}, "site=f", 0);
    double[] x = new double[local];
    x[0] = 1;
    for (int k = 0; k < 3; k++) {
      x[1 + k] = (probe.raw()[k] - a.off[k]) / a.sc[k];
    }
    x[a.layout.indexOf("site=f")] = 1;
    RealVector xv = new ArrayRealVector(ref.row(probe, a.off, a.sc));
    double pred = ref.theta.dotProduct(xv);
    double lev = xv.dotProduct(ref.inv.operate(xv));
    assertEquals(pred, a.gm.predict(x), 1e-9 * (1 + Math.abs(pred)));
    // the leverage of another record, asked right after: each call reads its own vector
    Rec other = new Rec(a.clock, new double[] {6.0, 25.0, 1.0}, "site=a", 0);
    double[] x2 = new double[local];
    x2[0] = 1;
    for (int k = 0; k < 3; k++) {
      x2[1 + k] = (other.raw()[k] - a.off[k]) / a.sc[k];
    }
    x2[a.layout.indexOf("site=a")] = 1;
    RealVector xv2 = new ArrayRealVector(ref.row(other, a.off, a.sc));
    double lev2 = xv2.dotProduct(ref.inv.operate(xv2));
    assertEquals(lev2, a.gm.leverage(x2), 1e-9 * lev2);
    assertEquals(lev, a.gm.leverage(x), 1e-9 * lev);
    double[] out = new double[2];
    a.gm.forecast(x, out);
    assertEquals(lev, out[0], 1e-9 * lev);
    assertEquals(pred, out[1], 1e-9 * (1 + Math.abs(pred)));
    // the bookkeeping read back
    Map<Integer, Long> want = new LinkedHashMap<>();
    want.put(1, 2L);
    assertEquals(want, a.gm.foldedSequences());
    assertEquals(2L, a.gm.lastFolded(1));
    assertEquals(0L, a.gm.lastFolded(5));
    // a's pending share: the 9 local columns and the removed one (kept until shared)
    assertEquals(10, a.gm.pendingDimension());
    ModelShare own = a.gm.share(a.clock);
    assertEquals(10, own.dimension());
    assertEquals(9, a.gm.pendingDimension());
    // the two-argument columnAdded adds a column that is re-based like any other (not fixed)
    for (int q = 0; q < own.dimension(); q++) {
      if (own.name(q).startsWith("site=")) {
        assertEquals(!a.twoArgs.contains(own.name(q)), own.fixed(q), own.name(q));
      } else {
        assertFalse(own.fixed(q), own.name(q));
      }
    }
  }

  @Test
  void aRowTheViewRefusesLeavesThePendingShareAndTheViewUnchanged() {
    Part a = new Part(0, 41, List.of("site=a"));
    a.learn(20);
    double before = a.gm.predict(new double[] {1, 0.5, 0.2, 0.1, 1});
    double[] bad = {1, Double.NaN, 0, 0, 1};
    assertFalse(a.gm.update(bad, 1.0, 0.9, null));
    double[] huge = {1, 1e101, 0, 0, 0};
    assertFalse(a.gm.update(huge, 1.0, 0.9, null));
    assertEquals(before, a.gm.predict(new double[] {1, 0.5, 0.2, 0.1, 1}), 0.0);
    ModelShare s = a.gm.share(a.clock);
    double n = 0;
    for (Rec r : a.recs) {
      n += StrictMath.pow(2.0, -(double) (a.clock - r.t()) / H);
    }
    assertEquals(n, s.sampleSize(), 1e-12 * n, "the refused rows (or their forgetting) reached the pending share");
    assertTrue(Arrays.stream(new double[] {s.residualSumOfSquares()}).allMatch(Double::isFinite));
  }
}
