package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Exactly-once groundwork and the binary forms: a share folded twice counts once, in one run and
 * across a restart from a checkpoint; a gap or an own share is refused; a checkpoint continues
 * bit for bit; a share or checkpoint that is cut short or tampered with is refused by name.
 */
class GlobalModelStateTest {

  static final double HALF_LIFE_MS = 50_000;
  static final ModelSettings SETTINGS = ModelSettings.defaults().withPriorVariance(2.0);
  static final String[] COLUMNS = {"constant", "price"};

  /** A partition fed by a seeded stream: its model, clock, scaler and levels. */
  static final class Feed {
    GlobalModel gm;
    final Random rnd;
    long clock;
    double mean;
    double sd = 1;
    final List<String> layout = new ArrayList<>(Arrays.asList(COLUMNS));

    Feed(int partition, long seed) {
      gm = new GlobalModel(partition, COLUMNS, SETTINGS, HALF_LIFE_MS);
      rnd = new Random(seed);
    }

    /** {@code n} records; a re-basing every 7th; a level per record out of 3 of this partition's. */
    void learn(int n, int partition) {
      for (int i = 0; i < n; i++) {
        if (rnd.nextInt(7) == 0) {
          double m = 10 + rnd.nextGaussian();
          double s = 2 * Math.exp(0.2 * rnd.nextGaussian());
          gm.columnRebased(1, s / sd, (m - mean) / sd);
          mean = m;
          sd = s;
        }
        String level = "site=" + partition + "-" + rnd.nextInt(3);
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
        double lambda = StrictMath.pow(2.0, -(double) (t - clock) / HALF_LIFE_MS);
        clock = t;
        assertTrue(gm.update(x, 1 + 0.4 * price + rnd.nextGaussian(), lambda, null));
      }
    }
  }

  static byte[] bytes(GlobalModel g) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    g.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  static GlobalModel restore(byte[] b) throws IOException {
    return GlobalModel.readFrom(new DataInputStream(new ByteArrayInputStream(b)));
  }

  @Test
  void aShareFoldedTwiceCountsOnce() throws IOException {
    Feed a = new Feed(0, 1);
    Feed b = new Feed(1, 2);
    a.learn(40, 0);
    b.learn(40, 1);
    ModelShare s1 = b.gm.share(b.clock);
    assertEquals(GlobalModel.FoldResult.FOLDED, a.gm.fold(s1, a.clock));
    byte[] once = bytes(a.gm);
    assertEquals(GlobalModel.FoldResult.ALREADY_FOLDED, a.gm.fold(s1, a.clock));
    assertEquals(GlobalModel.FoldResult.ALREADY_FOLDED, a.gm.fold(ModelShare.fromBytes(s1.toBytes()), a.clock + 5000));
    assertArrayEquals(once, bytes(a.gm), "a repeated share changed the state");
    assertEquals(1, a.gm.lastFolded(1));
  }

  @Test
  void aRestartNeverCountsAShareTwice() throws IOException {
    Feed a = new Feed(0, 3);
    Feed b = new Feed(1, 4);
    List<ModelShare> delivered = new ArrayList<>();
    a.learn(30, 0);
    for (int round = 0; round < 3; round++) {
      b.learn(25, 1);
      ModelShare s = b.gm.share(b.clock);
      delivered.add(s);
      a.gm.fold(s, a.clock);
      a.learn(10, 0);
    }
    byte[] checkpoint = bytes(a.gm);
    long clock = a.clock;
    // the uninterrupted run goes on: two more shares from b
    List<ModelShare> later = new ArrayList<>();
    Feed bCopy = b; // b is shared by both runs: its shares are the same objects
    for (int round = 0; round < 2; round++) {
      bCopy.learn(25, 1);
      later.add(bCopy.gm.share(bCopy.clock));
    }
    GlobalModel uninterrupted = a.gm;
    GlobalModel restarted = restore(checkpoint);
    // after the restart the shared topic is read again from an older offset: every share of b
    // arrives again, the three already folded first
    List<ModelShare> replay = new ArrayList<>(delivered);
    replay.addAll(later);
    int folded = 0;
    for (ModelShare s : replay) {
      if (restarted.fold(ModelShare.fromBytes(s.toBytes()), clock) == GlobalModel.FoldResult.FOLDED) {
        folded++;
      }
    }
    for (ModelShare s : later) {
      uninterrupted.fold(s, clock);
    }
    assertEquals(2, folded, "only the two shares after the checkpoint are folded after the restart");
    assertArrayEquals(bytes(uninterrupted), bytes(restarted), "the restarted view differs from the uninterrupted one");
    assertEquals(5, restarted.lastFolded(1));
  }

  @Test
  void aGapAnOwnShareOrADisagreeingConstantIsRefusedAndChangesNothing() throws IOException {
    Feed a = new Feed(0, 5);
    Feed b = new Feed(1, 6);
    a.learn(20, 0);
    b.learn(20, 1);
    ModelShare s1 = b.gm.share(b.clock);
    b.learn(20, 1);
    ModelShare s2 = b.gm.share(b.clock);
    byte[] before = bytes(a.gm);
    IllegalArgumentException gap = assertThrows(IllegalArgumentException.class, () -> a.gm.fold(s2, a.clock));
    assertTrue(gap.getMessage().contains("share 2 of partition 1 cannot be folded before share 1"), gap.getMessage());
    assertArrayEquals(before, bytes(a.gm), "a refused share changed the state");
    ModelShare own = a.gm.share(a.clock);
    byte[] afterOwnShare = bytes(a.gm);
    assertThrows(IllegalArgumentException.class, () -> a.gm.fold(own, a.clock));
    assertArrayEquals(afterOwnShare, bytes(a.gm));
    GlobalModel noConstant = new GlobalModel(2, new String[] {"price"}, SETTINGS.withConstantTerm(false), HALF_LIFE_MS);
    IllegalArgumentException c = assertThrows(IllegalArgumentException.class, () -> noConstant.fold(s1, 0));
    assertTrue(c.getMessage().contains("model.constant_term"), c.getMessage());
    assertEquals(GlobalModel.FoldResult.FOLDED, a.gm.fold(s1, a.clock));
    assertEquals(GlobalModel.FoldResult.FOLDED, a.gm.fold(s2, a.clock));
    assertEquals(2, a.gm.lastFolded(1));
  }

  @Test
  void aCheckpointContinuesBitForBit() throws IOException {
    Feed a = new Feed(0, 7);
    Feed b = new Feed(1, 8);
    a.learn(50, 0);
    b.learn(50, 1);
    a.gm.fold(b.gm.share(b.clock), a.clock);
    a.gm.columnRemoved(a.layout.indexOf("site=0-1")); // kept in the view and in the pending share
    a.layout.remove("site=0-1");
    byte[] cp = bytes(a.gm);
    GlobalModel copy = restore(cp);
    assertArrayEquals(cp, bytes(copy));
    Feed other = new Feed(0, 7);
    other.gm = copy;
    other.rnd.setSeed(11);
    a.rnd.setSeed(11);
    other.clock = a.clock;
    other.mean = a.mean;
    other.sd = a.sd;
    other.layout.clear();
    other.layout.addAll(a.layout);
    a.learn(60, 0);
    other.learn(60, 0);
    b.learn(30, 1);
    ModelShare s = b.gm.share(b.clock);
    a.gm.fold(s, a.clock);
    other.gm.fold(s, other.clock);
    assertArrayEquals(bytes(a.gm), bytes(other.gm));
    assertArrayEquals(a.gm.share(a.clock).toBytes(), other.gm.share(other.clock).toBytes());
  }

  @Test
  void aTruncatedCheckpointIsRefused() throws IOException {
    Feed a = new Feed(0, 9);
    a.learn(20, 0);
    byte[] cp = bytes(a.gm);
    for (int cut = 0; cut < cp.length; cut += 7) {
      byte[] part = Arrays.copyOf(cp, cut);
      IOException e = assertThrows(IOException.class, () -> restore(part));
      assertTrue(e.getMessage().contains("truncated"), cut + ": " + e.getMessage());
    }
  }

  @Test
  void theShareIsTheIncrementOfTheOwnRecords() throws IOException {
    // the same records learned by a diffuse model without prior: its information is the share's
    ModelSettings diffuse = SETTINGS.withPriorVariance(ModelSettings.DIFFUSE).withWindupGuard(false);
    GlobalModel g = new GlobalModel(0, COLUMNS, SETTINGS, Double.POSITIVE_INFINITY);
    RlsModel plain = new RlsModel(2, diffuse);
    Random rnd = new Random(12);
    double[] x = new double[2];
    double yy = 0;
    for (int i = 0; i < 30; i++) {
      x[0] = 1;
      x[1] = rnd.nextGaussian();
      double y = 2 - x[1] + 0.1 * rnd.nextGaussian();
      g.update(x, y, 1.0, null);
      plain.update(x, y, 1.0);
      yy += y * y;
    }
    ModelShare s = g.share(0);
    double[] info = s.information();
    double[] want = plain.informationMatrix();
    int p = s.dimension();
    for (int i = 0; i < p; i++) {
      for (int j = 0; j < p; j++) {
        int wi = Arrays.asList(COLUMNS).indexOf(s.name(i));
        int wj = Arrays.asList(COLUMNS).indexOf(s.name(j));
        assertEquals(want[wi * 2 + wj], info[i * p + j], 1e-12 * (1 + Math.abs(want[wi * 2 + wj])));
      }
    }
    assertEquals(30.0, s.sampleSize(), 0.0);
    // the residual sum of squares and the target vector: y^T y = u^T u + rss (QR, common practice)
    double uu = 0;
    for (int i = 0; i < p; i++) {
      uu += s.target(i) * s.target(i);
    }
    assertEquals(yy, uu + s.residualSumOfSquares(), 1e-10 * yy);
    assertEquals(plain.weightedResidualSumOfSquares(), s.residualSumOfSquares(), 1e-10 * yy);
    // the next share starts empty
    ModelShare next = g.share(0);
    assertEquals(2, next.sequence());
    assertEquals(0.0, next.sampleSize(), 0.0);
    for (int i = 0; i < p; i++) {
      assertEquals(0.0, next.target(i), 0.0);
    }
  }

  @Test
  void aCutOrTamperedShareIsRefusedByName() throws IOException {
    Feed b = new Feed(1, 10);
    b.learn(30, 1);
    byte[] good = b.gm.share(b.clock).toBytes();
    assertArrayEquals(good, ModelShare.fromBytes(good).toBytes(), "the binary form does not round-trip");
    for (int cut = 0; cut < good.length; cut++) {
      byte[] part = Arrays.copyOf(good, cut);
      IOException e = assertThrows(IOException.class, () -> ModelShare.fromBytes(part));
      assertTrue(e.getMessage().contains("truncated"), cut + ": " + e.getMessage());
    }
    byte[] longer = Arrays.copyOf(good, good.length + 3);
    IOException tail = assertThrows(IOException.class, () -> ModelShare.fromBytes(longer));
    assertTrue(tail.getMessage().contains("after its end"), tail.getMessage());
    for (int at = 12; at < good.length; at++) {
      byte[] bad = good.clone();
      bad[at] ^= 0x10;
      IOException e = assertThrows(IOException.class, () -> ModelShare.fromBytes(bad));
      assertTrue(e.getMessage().contains("checksum"), at + ": " + e.getMessage());
    }
    byte[] version = good.clone();
    version[7] = 9;
    IOException v = assertThrows(IOException.class, () -> ModelShare.fromBytes(version));
    assertTrue(v.getMessage().contains("version 9"), v.getMessage());
    byte[] magic = good.clone();
    magic[0] = 'X';
    assertTrue(assertThrows(IOException.class, () -> ModelShare.fromBytes(magic)).getMessage().contains("not a model share"));
  }

  @Test
  void onePartitionWithoutRemovalsIsTodaysModelBitForBit() throws IOException {
    // the view gets the same events in the same order as a model per partition: same bits, so a
    // single partition in global mode predicts as today (a removal differs: the view keeps the column)
    GlobalModel g = new GlobalModel(0, COLUMNS, SETTINGS, HALF_LIFE_MS);
    RlsModel plain = new RlsModel(2, SETTINGS);
    Random rnd = new Random(13);
    List<String> layout = new ArrayList<>(Arrays.asList(COLUMNS));
    double mean = 0;
    double sd = 1;
    double[] outG = new double[2];
    double[] outP = new double[2];
    for (int i = 0; i < 400; i++) {
      if (i % 9 == 4) {
        double m = 5 + rnd.nextGaussian();
        double s = 2 * Math.exp(0.2 * rnd.nextGaussian());
        g.columnRebased(1, s / sd, (m - mean) / sd);
        plain.columnRebased(1, s / sd, (m - mean) / sd);
        mean = m;
        sd = s;
      }
      String level = "lvl" + rnd.nextInt(6);
      if (!layout.contains(level)) {
        layout.add(level);
        g.columnAdded(layout.size() - 1, level, true);
        plain.columnAdded(layout.size() - 1, level, true);
      }
      double[] x = new double[layout.size()];
      x[0] = 1;
      x[1] = (5 + 2 * rnd.nextGaussian() - mean) / sd;
      x[layout.indexOf(level)] = 1;
      double y = rnd.nextGaussian() + x[1];
      g.forecast(x, outG);
      plain.forecast(x, outP);
      assertEquals(Double.doubleToLongBits(outP[1]), Double.doubleToLongBits(outG[1]), "prediction at " + i);
      assertEquals(Double.doubleToLongBits(outP[0]), Double.doubleToLongBits(outG[0]), "leverage at " + i);
      double lambda = StrictMath.pow(2.0, -(double) (1 + rnd.nextInt(900)) / HALF_LIFE_MS);
      assertEquals(plain.update(x, y, lambda, outP), g.update(x, y, lambda, outG));
      assertEquals(Double.doubleToLongBits(outP[1]), Double.doubleToLongBits(outG[1]), "a-priori prediction at " + i);
    }
    ByteArrayOutputStream a = new ByteArrayOutputStream();
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    plain.writeTo(new DataOutputStream(a));
    g.view().writeTo(new DataOutputStream(b));
    assertArrayEquals(a.toByteArray(), b.toByteArray(), "the view's state differs from the plain model's");
  }

  @Test
  void aRestartFromThePriorKeepsTheExactlyOnceBookkeeping() throws IOException {
    Feed a = new Feed(0, 14);
    Feed b = new Feed(1, 15);
    a.learn(30, 0);
    b.learn(30, 1);
    ModelShare s1 = b.gm.share(b.clock);
    a.gm.fold(s1, a.clock);
    a.gm.share(a.clock);
    a.learn(5, 0); // in the pending share when the restart comes
    int local = a.gm.localDimension();
    double offset = a.gm.viewOffset(1);
    a.gm.restartFromPrior();
    assertEquals(local, a.gm.view().dimension(), "the view holds the local columns only");
    assertEquals(offset, a.gm.viewOffset(1), 0.0, "the local columns keep their bases");
    double[] w = new double[local];
    a.gm.view().weights(w);
    for (double v : w) {
      assertEquals(0.0, v, 0.0, "the view is at its prior mean");
    }
    assertEquals(GlobalModel.FoldResult.ALREADY_FOLDED, a.gm.fold(s1, a.clock));
    assertEquals(2, a.gm.nextShareSequence());
    a.learn(10, 0);
    double n = a.gm.share(a.clock).sampleSize(); // ten records' weights, each at most 1
    assertTrue(n > 9 && n <= 10, "the pending share did not start empty: sample size " + n);
    GlobalModel copy = restore(bytes(a.gm));
    assertArrayEquals(bytes(a.gm), bytes(copy));
  }

  @Test
  void aReBasedColumnThatComesBackContinuesInTheBasisANewColumnStartsIn() {
    GlobalModel g = new GlobalModel(0, COLUMNS, SETTINGS, Double.POSITIVE_INFINITY);
    Random rnd = new Random(16);
    g.columnAdded(2, "promo", false);
    double m = 3.0;
    double s = 0.5;
    g.columnRebased(2, s, m); // from (0, 1) to (3, 0.5)
    for (int i = 0; i < 50; i++) {
      double promo = 3 + 0.5 * rnd.nextGaussian();
      double[] x = {1, rnd.nextGaussian(), (promo - m) / s};
      assertTrue(g.update(x, 1 + 2 * promo + 0.1 * rnd.nextGaussian(), 1.0, null));
    }
    double raw = 4.2;
    double before = g.predict(new double[] {1, 0.3, (raw - m) / s});
    g.columnRemoved(2); // kept in the view, in basis (3, 0.5)
    assertEquals(3, g.view().dimension());
    g.columnAdded(2, "promo", false); // back: the kept column, re-based to (0, 1)
    assertEquals(3, g.view().dimension(), "the kept column is continued, not added again");
    assertEquals(0.0, g.viewOffset(g.viewIndex("promo")), 0.0);
    assertEquals(1.0, g.viewScale(g.viewIndex("promo")), 0.0);
    double after = g.predict(new double[] {1, 0.3, raw});
    assertEquals(before, after, 1e-12 * Math.abs(before), "re-basing the continued column moved a prediction");
    ModelShare share = g.share(0);
    int q = -1;
    for (int k = 0; k < share.dimension(); k++) {
      if (share.name(k).equals("promo")) {
        q = k;
      }
    }
    assertEquals(0.0, share.offset(q), 0.0, "the pending share's column is in the new basis too");
    assertEquals(1.0, share.scale(q), 0.0);
    assertEquals(50.0, share.sampleSize(), 0.0);
  }

  @Test
  void aShareStatedFarAheadOfTheClockIsRefused() {
    Feed a = new Feed(0, 17);
    Feed b = new Feed(1, 18);
    a.learn(5, 0);
    b.learn(5, 1);
    ModelShare far = b.gm.share(a.clock + (long) (65 * HALF_LIFE_MS));
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> a.gm.fold(far, a.clock));
    assertTrue(e.getMessage().contains("half-lives after this clock"), e.getMessage());
    assertEquals(0, a.gm.lastFolded(1));
    // a little ahead is folded, with a weight above 1 (it decays back as the clock catches up)
    assertEquals(GlobalModel.FoldResult.FOLDED, a.gm.fold(far, far.eventTimeMillis() - (long) HALF_LIFE_MS));
  }
}
