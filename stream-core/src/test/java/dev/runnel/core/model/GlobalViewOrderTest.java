package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.DataInputStream;
import java.io.IOException;
import java.io.InputStream;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * Where a view keeps the one-hot levels only other partitions hold (docs/model.md, "Cost"): at the
 * start of its factor, before every column its own rows can be non-zero in, so that an own row's
 * leading zeros skip their rows; and the local weights, standard errors and covariance come from
 * the factor's trailing block alone, the same bits as the whole solve and inverse give them. The
 * checkpoint keeps the count of those columns (version 3), and a version-2 checkpoint is still read.
 */
class GlobalViewOrderTest {

  /** Partition 0 after 50 own records, a share of partition 1 (3 levels it lacks), 20 more records. */
  static GlobalModelStateTest.Feed[] twoPartitions() {
    GlobalModelStateTest.Feed a = new GlobalModelStateTest.Feed(0, 7);
    GlobalModelStateTest.Feed b = new GlobalModelStateTest.Feed(1, 8);
    a.learn(50, 0);
    b.learn(50, 1);
    a.gm.fold(b.gm.share(b.clock), a.clock);
    a.learn(20, 0);
    return new GlobalModelStateTest.Feed[] {a, b};
  }

  /** The view's entries of the local columns, in the local layout, from {@code all} in the view's layout. */
  static double[] local(GlobalModel g, List<String> layout, double[] all) {
    double[] out = new double[layout.size()];
    for (int j = 0; j < out.length; j++) {
      out[j] = all[g.viewIndex(layout.get(j))];
    }
    return out;
  }

  @Test
  void aShareLevelTheViewLacksGoesAheadOfEveryOwnColumn() {
    GlobalModelStateTest.Feed[] f = twoPartitions();
    GlobalModel g = f[0].gm;
    RlsModel v = g.view();
    assertEquals(3, v.aheadCount(), "the three levels of partition 1");
    for (int k = 0; k < 3; k++) {
      int c = g.viewIndex("site=1-" + k);
      assertTrue(v.position(c) < 3, "site=1-" + k + " at factor position " + v.position(c));
    }
    for (String name : f[0].layout) {
      assertTrue(v.position(g.viewIndex(name)) >= 3, name + " at factor position " + v.position(g.viewIndex(name)));
    }
    // a level the layout adds after the fold goes after them (the end of the leading block)
    f[0].learn(200, 7);
    for (String name : f[0].layout) {
      assertTrue(v.position(g.viewIndex(name)) >= 3, name + " at factor position " + v.position(g.viewIndex(name)));
    }
  }

  @Test
  void theLocalBlockGivesTheBitsOfTheWholeSolveAndInverse() throws IOException {
    GlobalModelStateTest.Feed[] f = twoPartitions();
    GlobalModelStateTest.Feed a = f[0];
    a.gm.columnRemoved(a.layout.indexOf("site=0-1")); // kept in the view, among the local columns
    a.layout.remove("site=0-1");
    a.learn(30, 0);
    GlobalModel g = a.gm;
    RlsModel v = g.view();
    int n = v.dimension();
    int local = g.localDimension();
    double[] all = new double[n];
    double[] got = new double[local];

    // the whole solve first, then the block (the weights' cache is then the whole solve's) ...
    v.weights(all);
    g.localWeights(got);
    assertArrayEquals(local(g, a.layout, all), got);
    // ... and the block after a change, before anything solves the whole
    a.learn(1, 0);
    g.localWeights(got);
    v.weights(all);
    assertArrayEquals(local(g, a.layout, all), got);

    g.localStandardErrors(got);
    v.standardErrors(all);
    assertArrayEquals(local(g, a.layout, all), got);
    for (double se : got) {
      assertTrue(se > 0 && se < Double.POSITIVE_INFINITY, "standard error " + se);
    }

    double[] block = g.localUnscaledCovariance();
    double[] whole = v.unscaledCovariance();
    // the whole inverse, extended from the block's, is the one computed from scratch
    RlsModel fresh = GlobalModelStateTest.restore(GlobalModelStateTest.bytes(g)).view();
    double[] freshAll = new double[n];
    fresh.standardErrors(freshAll);
    assertArrayEquals(freshAll, all);
    assertArrayEquals(fresh.unscaledCovariance(), whole);
    for (int i = 0; i < local; i++) {
      for (int j = 0; j < local; j++) {
        int vi = g.viewIndex(a.layout.get(i));
        int vj = g.viewIndex(a.layout.get(j));
        assertEquals(whole[vi * n + vj], block[i * local + j], 0.0, "covariance (" + i + ", " + j + ")");
      }
    }
  }

  @Test
  void aCheckpointKeepsTheLevelsAheadAndContinuesBitForBit() throws IOException {
    GlobalModelStateTest.Feed[] f = twoPartitions();
    GlobalModelStateTest.Feed a = f[0];
    GlobalModelStateTest.Feed b = f[1];
    byte[] cp = GlobalModelStateTest.bytes(a.gm);
    GlobalModel copy = GlobalModelStateTest.restore(cp);
    assertEquals(3, copy.view().aheadCount());
    // a share with levels new to both: they go after the three of partition 1 in each
    b.learn(30, 5);
    ModelShare s = b.gm.share(b.clock);
    a.gm.fold(s, a.clock);
    copy.fold(s, a.clock);
    assertEquals(6, copy.view().aheadCount());
    assertArrayEquals(GlobalModelStateTest.bytes(a.gm), GlobalModelStateTest.bytes(copy));
  }

  /**
   * The fixtures were written by the build before this change (commit 5aa7346, checkpoint version
   * 2, the levels of other partitions at the end of the leading block) from the stream of
   * {@link #twoPartitions} (its checkpoint of partition 0), then, continued there, partition 1
   * learning 30 records with 3 new levels ({@code learn(30, 5)}), sharing, partition 0 folding it
   * and learning 20 more: the local weights and standard errors it then gave. Read now, the
   * checkpoint has no column ahead; continued the same way, the new levels go ahead, and the
   * weights and standard errors agree with the old build's to 1e-9 (its columns are in another
   * order in the factor, so the rounding differs).
   */
  @Test
  void aVersionTwoCheckpointIsReadAndContinuesToTheOldBuildsModel() throws IOException {
    byte[] checkpoint = resource("/checkpoints/global-model-v2.bin");
    assertEquals(2, checkpoint[7], "the fixture is a version-2 checkpoint");
    GlobalModelStateTest.Feed[] f = twoPartitions();
    GlobalModelStateTest.Feed a = f[0];
    GlobalModelStateTest.Feed b = f[1];
    a.gm = GlobalModel.readFrom(new DataInputStream(new ByteArrayInputStream(checkpoint)));
    assertEquals(0, a.gm.view().aheadCount());
    b.learn(30, 5);
    a.gm.fold(b.gm.share(b.clock), a.clock);
    assertEquals(3, a.gm.view().aheadCount());
    a.learn(20, 0);
    DataInputStream old = new DataInputStream(new ByteArrayInputStream(resource("/checkpoints/global-model-v2-after.bin")));
    int n = old.readInt();
    assertEquals(n, a.gm.localDimension());
    double[] w = new double[n];
    double[] se = new double[n];
    a.gm.localWeights(w);
    a.gm.localStandardErrors(se);
    for (int j = 0; j < n; j++) {
      double want = old.readDouble();
      assertEquals(want, w[j], 1e-9 * Math.max(1.0, Math.abs(want)), "weight " + j);
    }
    for (int j = 0; j < n; j++) {
      double want = old.readDouble();
      assertEquals(want, se[j], 1e-9 * Math.max(1.0, Math.abs(want)), "standard error " + j);
    }
    // written again, it is version 3 and reads back to the same bytes
    byte[] again = GlobalModelStateTest.bytes(a.gm);
    assertEquals(GlobalModel.FORMAT_VERSION, again[7]);
    assertArrayEquals(again, GlobalModelStateTest.bytes(GlobalModelStateTest.restore(again)));
  }

  static byte[] resource(String name) throws IOException {
    try (InputStream in = GlobalViewOrderTest.class.getResourceAsStream(name)) {
      return in.readAllBytes();
    }
  }
}
