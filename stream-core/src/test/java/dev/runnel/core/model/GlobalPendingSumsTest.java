package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.DataInputStream;
import java.io.IOException;
import java.io.InputStream;
import java.lang.management.ManagementFactory;
import org.junit.jupiter.api.Test;

/**
 * The pending share kept as weighted sums ({@link InformationSums}, checkpoint version 2) against
 * the earlier pending share, a diffuse {@link RlsModel} updated by Givens rotations (version 1):
 * a version-1 checkpoint is still read, and the share made from it is the one the old build made
 * to 1e-9 relative; the sums' share matches a diffuse {@link RlsModel} fed the same rows; a warm
 * update allocates nothing.
 */
class GlobalPendingSumsTest {

  /** Largest |a - b| over max(1, largest |b|): the reference tests' relative measure. */
  static double relative(double[] a, double[] b) {
    double scale = 1.0;
    for (double v : b) {
      scale = Math.max(scale, Math.abs(v));
    }
    double d = 0.0;
    for (int i = 0; i < a.length; i++) {
      d = Math.max(d, Math.abs(a[i] - b[i]));
    }
    return d / scale;
  }

  /** {@code s}'s information and information vector in the column order of {@code order}. */
  static double[][] inOrderOf(ModelShare s, ModelShare order) {
    int n = order.dimension();
    assertEquals(n, s.dimension());
    int[] at = new int[n];
    for (int q = 0; q < n; q++) {
      at[q] = -1;
      for (int k = 0; k < n; k++) {
        if (s.name(k).equals(order.name(q))) {
          at[q] = k;
        }
      }
      assertTrue(at[q] >= 0, "column " + order.name(q) + " missing");
      assertEquals(order.offset(q), s.offset(at[q]), 0.0, "offset of " + order.name(q));
      assertEquals(order.scale(q), s.scale(at[q]), 0.0, "scale of " + order.name(q));
    }
    double[] info = s.information();
    double[] eta = s.informationVector();
    double[] m = new double[n * n];
    double[] v = new double[n];
    for (int i = 0; i < n; i++) {
      v[i] = eta[at[i]];
      for (int j = 0; j < n; j++) {
        m[i * n + j] = info[at[i] * n + at[j]];
      }
    }
    return new double[][] {m, v};
  }

  /** Information, information vector and sample size; the residual sum of squares when {@code rss}. */
  static void assertSameShare(ModelShare expected, ModelShare actual, String what, boolean rss) {
    double[][] e = {expected.information(), expected.informationVector()};
    double[][] a = inOrderOf(actual, expected);
    assertTrue(relative(a[0], e[0]) < 1e-9, what + ": information differs by " + relative(a[0], e[0]));
    assertTrue(relative(a[1], e[1]) < 1e-9, what + ": information vector differs by " + relative(a[1], e[1]));
    if (rss) {
      assertEquals(expected.residualSumOfSquares(), actual.residualSumOfSquares(),
          1e-9 * Math.max(1.0, expected.residualSumOfSquares()), what + ": residual sum of squares");
    }
    assertEquals(expected.sampleSize(), actual.sampleSize(), 1e-12 * expected.sampleSize(), what + ": sample size");
    assertEquals(expected.eventTimeMillis(), actual.eventTimeMillis());
    assertEquals(expected.sequence(), actual.sequence());
  }

  static byte[] resource(String name) throws IOException {
    try (InputStream in = GlobalPendingSumsTest.class.getResourceAsStream(name)) {
      assertTrue(in != null, name + " missing");
      return in.readAllBytes();
    }
  }

  /**
   * The stream the fixtures were written from: partition 1, {@link GlobalModelStateTest.Feed}'s
   * events with seed 19, 60 records (re-basings, three one-hot levels beside the constant term);
   * returns its clock.
   */
  static long fixtureStream(GlobalModel gm) {
    java.util.Random rnd = new java.util.Random(19);
    long clock = 0;
    double mean = 0;
    double sd = 1;
    java.util.List<String> layout = new java.util.ArrayList<>(java.util.List.of(GlobalModelStateTest.COLUMNS));
    for (int i = 0; i < 60; i++) {
      if (rnd.nextInt(7) == 0) {
        double m = 10 + rnd.nextGaussian();
        double s = 2 * Math.exp(0.2 * rnd.nextGaussian());
        gm.columnRebased(1, s / sd, (m - mean) / sd);
        mean = m;
        sd = s;
      }
      String level = "site=1-" + rnd.nextInt(3);
      if (!layout.contains(level)) {
        layout.add(level);
        gm.columnAdded(layout.size() - 1, level, true);
      }
      double price = 10 + 2 * rnd.nextGaussian();
      double[] x = new double[layout.size()];
      x[0] = 1;
      x[1] = (price - mean) / sd;
      x[layout.indexOf(level)] = 1;
      long t = clock + 1 + rnd.nextInt(900);
      double lambda = StrictMath.pow(2.0, -(double) (t - clock) / GlobalModelStateTest.HALF_LIFE_MS);
      clock = t;
      assertTrue(gm.update(x, 1 + 0.4 * price + rnd.nextGaussian(), lambda, null));
    }
    return clock;
  }

  /**
   * The fixtures were written by the build before the change (commit 0bcedba) from
   * {@link #fixtureStream}: its checkpoint (version 1, the pending share an {@link RlsModel}),
   * then the share it made at its clock. Read now, the checkpoint's share carries the old one's
   * information to 1e-9; its residual sum of squares is that of the share this build makes from
   * the same stream (the old one's is not: see {@link #theSumsShareWhatADiffuseRotationModelHolds}).
   */
  @Test
  void aVersionOneCheckpointIsReadAndSharesWhatTheOldBuildShared() throws IOException {
    byte[] checkpoint = resource("/checkpoints/global-model-v1.bin");
    assertEquals(1, checkpoint[7], "the fixture is a version-1 checkpoint");
    GlobalModel g = GlobalModel.readFrom(new DataInputStream(new ByteArrayInputStream(checkpoint)));
    ModelShare old = ModelShare.fromBytes(resource("/checkpoints/global-model-v1-share.bin"));
    GlobalModel now = new GlobalModel(1, GlobalModelStateTest.COLUMNS, GlobalModelStateTest.SETTINGS,
        GlobalModelStateTest.HALF_LIFE_MS);
    long clock = fixtureStream(now);
    assertEquals(28_458, clock);
    ModelShare fromCheckpoint = g.share(clock);
    assertSameShare(old, fromCheckpoint, "share after a version-1 checkpoint against the old build's", false);
    assertSameShare(now.share(clock), fromCheckpoint, "share after a version-1 checkpoint against this build's", true);
  }

  /**
   * The sums' share against the information of a diffuse {@link RlsModel} (the earlier pending
   * share) fed the same rows, with forgetting, re-basings and a column the layout removes.
   */
  @Test
  void theSumsShareWhatADiffuseRotationModelHolds() {
    double h = GlobalModelStateTest.HALF_LIFE_MS;
    GlobalModel gm = new GlobalModel(0, GlobalModelStateTest.COLUMNS, GlobalModelStateTest.SETTINGS, h);
    RlsModel ref = new RlsModel(2, GlobalModelStateTest.SETTINGS.withPriorVariance(ModelSettings.DIFFUSE)
        .withWindupGuard(false));
    java.util.List<String> local = new java.util.ArrayList<>(java.util.List.of(GlobalModelStateTest.COLUMNS));
    java.util.List<String> all = new java.util.ArrayList<>(local); // the pending share keeps removed columns
    java.util.Random rnd = new java.util.Random(23);
    java.util.List<double[]> rowsSeen = new java.util.ArrayList<>(); // x in the pending layout, then y, then the weight
    double mean = 0;
    double sd = 1;
    long clock = 0;
    for (int i = 0; i < 400; i++) {
      if (rnd.nextInt(9) == 0) {
        double m = 10 + rnd.nextGaussian();
        double s = 2 * Math.exp(0.2 * rnd.nextGaussian());
        gm.columnRebased(1, s / sd, (m - mean) / sd);
        ref.columnRebased(1, s / sd, (m - mean) / sd);
        for (double[] r : rowsSeen) { // x'_1 = (x_1 - shift x_0) / scale, as the model re-bases
          r[1] = (r[1] - (m - mean) / sd) / (s / sd);
        }
        mean = m;
        sd = s;
      }
      String level = "site=" + rnd.nextInt(i < 200 ? 3 : 5);
      if (i == 250) {
        int gone = local.indexOf("site=0");
        if (gone >= 0) {
          gm.columnRemoved(gone);
          local.remove(gone);
        }
      }
      if (i >= 250 && level.equals("site=0")) {
        level = "site=1";
      }
      if (!local.contains(level)) {
        local.add(level);
        gm.columnAdded(local.size() - 1, level, true);
        if (!all.contains(level)) {
          all.add(level);
          ref.columnAdded(all.size() - 1, level, true);
        }
      }
      double price = 10 + 2 * rnd.nextGaussian();
      double[] x = new double[local.size()];
      double[] xr = new double[all.size()];
      x[0] = 1;
      x[1] = (price - mean) / sd;
      x[local.indexOf(level)] = 1;
      xr[0] = 1;
      xr[1] = x[1];
      xr[all.indexOf(level)] = 1;
      long t = clock + 1 + rnd.nextInt(900);
      double lambda = StrictMath.pow(2.0, -(double) (t - clock) / h);
      clock = t;
      double y = 1 + 0.4 * price + rnd.nextGaussian();
      assertTrue(gm.update(x, y, lambda, null));
      assertTrue(ref.update(xr, y, lambda));
      for (double[] r : rowsSeen) {
        r[r.length - 1] *= lambda;
      }
      double[] r = new double[10];
      System.arraycopy(xr, 0, r, 0, xr.length);
      r[8] = y;
      r[9] = 1.0;
      rowsSeen.add(r);
    }
    ModelShare share = gm.share(clock);
    int n = all.size();
    assertEquals(n, share.dimension());
    for (int q = 0; q < n; q++) {
      assertEquals(all.get(q), share.name(q), "the share's columns are the pending table's");
    }
    double[][] rows = new double[n][n];
    double[] u = new double[n];
    int[] cols = new int[n];
    ref.sqrtInformation(rows, u, cols);
    double[] eta = new double[n];
    for (int i = 0; i < n; i++) {
      for (int k = 0; k <= i; k++) {
        eta[cols[i]] += rows[k][i] * u[k];
      }
    }
    double[] info = ref.informationMatrix();
    assertTrue(relative(share.information(), info) < 1e-9,
        "information differs from the rotations' by " + relative(share.information(), info));
    assertTrue(relative(share.informationVector(), eta) < 1e-9,
        "information vector differs from the rotations' by " + relative(share.informationVector(), eta));
    // The minimum weighted residual sum of squares against EJML's pseudo-inverse (SVD) solution of
    // the weighted rows. The constant term is the sum of the one-hot levels, so the rows do not
    // determine every column: the rotations' own sum (the earlier pending share's) takes a
    // rounding-sized pivot for the dependent column as information and comes out smaller by
    // about 0.1 % here; the sums give that column a zero row instead.
    double truth = ejmlResidualSumOfSquares(rowsSeen, n);
    assertEquals(truth, share.residualSumOfSquares(), 1e-9 * truth, "residual sum of squares against EJML");
    assertEquals(ref.effectiveSampleSize(), share.sampleSize(), 1e-12 * ref.effectiveSampleSize(), "sample size");
  }

  /** {@code min |W^1/2 (y - X theta)|^2} by EJML's pseudo-inverse (EJML, SolvePseudoInverseSvd). */
  static double ejmlResidualSumOfSquares(java.util.List<double[]> rows, int n) {
    org.ejml.data.DMatrixRMaj a = new org.ejml.data.DMatrixRMaj(rows.size(), n);
    org.ejml.data.DMatrixRMaj b = new org.ejml.data.DMatrixRMaj(rows.size(), 1);
    for (int i = 0; i < rows.size(); i++) {
      double[] r = rows.get(i);
      double sw = Math.sqrt(r[9]);
      for (int j = 0; j < n; j++) {
        a.set(i, j, r[j] * sw);
      }
      b.set(i, 0, r[8] * sw);
    }
    org.ejml.interfaces.linsol.LinearSolverDense<org.ejml.data.DMatrixRMaj> solver =
        org.ejml.dense.row.factory.LinearSolverFactory_DDRM.pseudoInverse(true);
    assertTrue(solver.setA(a.copy()));
    org.ejml.data.DMatrixRMaj theta = new org.ejml.data.DMatrixRMaj(n, 1);
    solver.solve(b, theta);
    org.ejml.data.DMatrixRMaj fit = new org.ejml.data.DMatrixRMaj(rows.size(), 1);
    org.ejml.dense.row.CommonOps_DDRM.mult(a, theta, fit);
    double rss = 0.0;
    for (int i = 0; i < rows.size(); i++) {
      double e = b.get(i, 0) - fit.get(i, 0);
      rss += e * e;
    }
    return rss;
  }

  @Test
  void aWarmUpdateAllocatesNothing() {
    GlobalModelStateTest.Feed a = new GlobalModelStateTest.Feed(0, 29);
    a.learn(50, 0);
    com.sun.management.ThreadMXBean bean = (com.sun.management.ThreadMXBean) ManagementFactory.getThreadMXBean();
    double[] x = new double[a.layout.size()];
    x[0] = 1;
    x[1] = 0.3;
    x[2] = 1;
    double[] out = new double[2];
    long before = bean.getCurrentThreadAllocatedBytes();
    for (int round = 0; round < 2; round++) {
      if (round == 1) {
        before = bean.getCurrentThreadAllocatedBytes();
      }
      for (int i = 0; i < 10_000; i++) {
        x[1] = (i % 17) * 0.1;
        assertTrue(a.gm.update(x, 1.0 + x[1], 0.999, out));
      }
    }
    long allocated = bean.getCurrentThreadAllocatedBytes() - before;
    assertTrue(allocated < 4_096, "bytes allocated by 10000 warm updates: " + allocated);
  }
}
