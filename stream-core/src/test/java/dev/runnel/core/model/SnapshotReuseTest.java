package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.IOException;
import java.util.Arrays;
import org.junit.jupiter.api.Test;

/**
 * What a snapshot asks of the model more than once is computed once per factor (docs/model.md,
 * "Cost"): the unscaled covariance (asked by the drift monitor, the constant's raw standard error
 * and the contrasts) is kept until the factor changes. Each answer must be the bits a model that
 * never answered before gives (a copy restored from the checkpoint, whose caches are empty), after
 * an update, a re-basing alone and a fold; and a caller writing into what it got changes nothing.
 * Also {@link ModelShare#sourceOf}, with which the runner skips its own shares unread.
 */
class SnapshotReuseTest {

  /** The local covariance a model that never computed one gives now. */
  private static double[] fresh(GlobalModel g) throws IOException {
    return GlobalModelStateTest.restore(GlobalModelStateTest.bytes(g)).localUnscaledCovariance();
  }

  @Test
  void theKeptCovarianceFollowsEveryChangeOfTheFactor() throws IOException {
    GlobalModelStateTest.Feed[] f = GlobalViewOrderTest.twoPartitions();
    GlobalModelStateTest.Feed a = f[0];
    GlobalModelStateTest.Feed b = f[1];
    GlobalModel g = a.gm;

    double[] first = g.localUnscaledCovariance();
    assertArrayEquals(fresh(g), first);
    double[] whole = g.view().unscaledCovariance();
    Arrays.fill(first, 42.0); // the caller's copies: writing into them changes no later answer
    Arrays.fill(whole, 42.0);
    double[] second = g.localUnscaledCovariance();
    assertArrayEquals(fresh(g), second);
    assertArrayEquals(GlobalModelStateTest.restore(GlobalModelStateTest.bytes(g)).view().unscaledCovariance(),
        g.view().unscaledCovariance());

    // an update
    a.learn(1, 0);
    double[] afterUpdate = g.localUnscaledCovariance();
    assertFalse(Arrays.equals(second, afterUpdate), "the covariance did not move with an update");
    assertArrayEquals(fresh(g), afterUpdate);

    // a re-basing alone (no record): the factor's basis changes
    g.columnRebased(1, 1.25, 0.5);
    double[] afterRebase = g.localUnscaledCovariance();
    assertFalse(Arrays.equals(afterUpdate, afterRebase), "the covariance did not move with a re-basing");
    assertArrayEquals(fresh(g), afterRebase);

    // a fold of another partition's share
    b.learn(20, 1);
    g.fold(b.gm.share(b.clock), a.clock);
    double[] afterFold = g.localUnscaledCovariance();
    assertFalse(Arrays.equals(afterRebase, afterFold), "the covariance did not move with a fold");
    assertArrayEquals(fresh(g), afterFold);
  }

  @Test
  void theSourceOfAShareIsReadFromItsHeaderAndABadHeaderIsRefused() throws IOException {
    GlobalModelStateTest.Feed[] f = GlobalViewOrderTest.twoPartitions();
    GlobalModelStateTest.Feed b = f[1];
    b.learn(5, 1);
    byte[] good = b.gm.share(b.clock).toBytes();
    assertEquals(ModelShare.fromBytes(good).source(), ModelShare.sourceOf(good));
    assertEquals(1, ModelShare.sourceOf(good));

    byte[] magic = good.clone();
    magic[0] ^= 1;
    assertTrue(assertThrows(IOException.class, () -> ModelShare.sourceOf(magic)).getMessage().contains("not a model share"));
    byte[] version = good.clone();
    version[7] ^= 8;
    assertTrue(assertThrows(IOException.class, () -> ModelShare.sourceOf(version)).getMessage().contains("version"));
    byte[] cut = Arrays.copyOf(good, good.length - 1);
    assertTrue(assertThrows(IOException.class, () -> ModelShare.sourceOf(cut)).getMessage().contains("body length"));
    assertThrows(IOException.class, () -> ModelShare.sourceOf(Arrays.copyOf(good, 15)));
  }
}
