package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import org.junit.jupiter.api.Test;

/**
 * What the horizon tables hold across growth, emptying and checkpoint reads (the survivors of
 * mutation testing in {@link HorizonMetrics}): an entity is found again after the per-entity table
 * grew past its first allocation; {@code clearAll} empties the overall table as well; a checkpoint
 * read into tables that already hold data replaces that data (and with other bucket bounds leaves
 * every table empty); checkpoints with no bounds, no entities, or an entity of empty text read back.
 * Expected values are hand counts of what was added.
 */
class HorizonMetricsStateTest {

  private static final long[] BOUNDS = HorizonMetricsTest.BOUNDS;
  private static final long H = HorizonMetricsTest.H;

  private static int entity(HorizonMetrics m, String name) {
    char[] k = HorizonMetricsTest.key(name);
    return m.entity(k, k.length);
  }

  private static byte[] bytes(HorizonMetrics m) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    m.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  private static boolean read(HorizonMetrics m, byte[] bytes) throws IOException {
    return m.readFrom(new DataInputStream(new ByteArrayInputStream(bytes)));
  }

  private static void assertEmpty(HorizonMetrics m) {
    assertEquals(0, m.entities());
    assertEquals(0, m.settledNotKept());
    for (int b = 0; b < m.buckets(); b++) {
      Snapshot.Metrics x = m.metrics(-1, b);
      assertEquals(0, x.count(), "bucket " + b);
      assertTrue(Double.isNaN(x.mae()) && Double.isNaN(x.recentMae()) && Double.isNaN(x.coverage()), "bucket " + b);
    }
  }

  @Test
  void everyEntityIsFoundAgainAfterTheTableGrewPastItsFirstAllocation() {
    HorizonMetrics m = new HorizonMetrics(BOUNDS, 20, 100);
    int n = 40; // the first allocation holds 16
    for (int i = 0; i < n; i++) {
      assertEquals(i, entity(m, "hub-" + i), "a new entity takes the next index");
    }
    for (int i = 0; i < n; i++) {
      int e = entity(m, "hub-" + i);
      assertEquals(i, e, "entity hub-" + i + " found again, not added twice");
      for (int r = 0; r <= i; r++) {
        m.add(e, 2 * H, 1.0, true);
      }
    }
    assertEquals(n, m.entities());
    for (int i = 0; i < n; i++) {
      assertEquals(i + 1, m.metrics(i, 1).count(), "entity " + i);
      assertArrayEquals(HorizonMetricsTest.key("hub-" + i), m.entityKey(i));
    }
    assertEquals((long) n * (n + 1) / 2, m.metrics(-1, 1).count());
  }

  @Test
  void clearAllEmptiesTheOverallTableAsWellAsTheEntities() {
    HorizonMetrics m = new HorizonMetrics(BOUNDS, 20, 1);
    for (int b = 0; b <= BOUNDS.length; b++) {
      m.add(entity(m, "a"), b * 10 * H, 2.0, b % 2 == 0);
      m.add(entity(m, "b"), b * 10 * H, -1.0, true); // beyond the cap: overall only, counted
    }
    assertEquals(BOUNDS.length + 1, m.settledNotKept());
    m.clearAll();
    assertEmpty(m);
    // and it fills again from nothing
    m.add(entity(m, "b"), H, 3.0, false);
    assertEquals(1, m.metrics(-1, 0).count());
    assertEquals(3.0, m.metrics(0, 0).mae());
    assertEquals(0.0, m.metrics(-1, 0).coverage());
  }

  @Test
  void aCheckpointReadIntoFullTablesReplacesWhatTheyHeld() throws IOException {
    HorizonMetrics used = new HorizonMetrics(BOUNDS, 20, 2);
    for (String e : new String[] {"a", "b", "c"}) {
      used.add(entity(used, e), 3 * H, 5.0, true);
      used.add(entity(used, e), 500 * H, -5.0, false);
    }
    HorizonMetrics written = new HorizonMetrics(BOUNDS, 20, 2);
    written.add(entity(written, "z"), H / 2, 0.25, true);
    byte[] checkpoint = bytes(written);

    assertTrue(read(used, checkpoint));
    assertEquals(1, used.entities(), "only the checkpoint's entity");
    assertArrayEquals(HorizonMetricsTest.key("z"), used.entityKey(0));
    assertEquals(0, used.settledNotKept());
    for (int b = 0; b < used.buckets(); b++) {
      assertEquals(written.metrics(-1, b), used.metrics(-1, b), "overall bucket " + b);
      assertEquals(written.metrics(0, b), used.metrics(0, b), "entity z bucket " + b);
    }
    assertArrayEquals(checkpoint, bytes(used));
    // "a" was forgotten: it comes back as a new entity
    assertEquals(1, entity(used, "a"));
  }

  @Test
  void aCheckpointWithOtherBucketBoundsLeavesEveryTableEmpty() throws IOException {
    HorizonMetrics used = new HorizonMetrics(BOUNDS, 20, 1);
    used.add(entity(used, "a"), 3 * H, 5.0, true);
    used.add(entity(used, "b"), 3 * H, 1.0, true);
    HorizonMetrics other = new HorizonMetrics(new long[] {2 * H, 48 * H}, 20, 4);
    other.add(entity(other, "x"), H, 1.0, true);
    other.add(entity(other, "y"), 100 * H, 1.0, false);

    assertFalse(read(used, bytes(other)), "other bounds: tables not kept");
    assertEmpty(used);
    // the covered counts went too: one forecast outside its interval is coverage 0, not 2
    used.add(entity(used, "a"), 3 * H, 1.0, false);
    assertEquals(0.0, used.metrics(-1, 1).coverage());
    assertEquals(1.0, used.metrics(-1, 1).rmse());
  }

  @Test
  void checkpointsWithNoBoundsNoEntitiesOrAnEmptyEntityTextReadBack() throws IOException {
    // a single open bucket
    HorizonMetrics open = new HorizonMetrics(new long[0], 20, 3);
    char[] empty = new char[0];
    open.add(open.entity(empty, 0), 7 * H, -2.0, true);
    open.add(open.entity(empty, 0), 0, 4.0, false);
    HorizonMetrics back = new HorizonMetrics(new long[0], 20, 3);
    assertTrue(read(back, bytes(open)));
    assertEquals(1, back.entities());
    assertEquals(0, back.entityKey(0).length);
    assertEquals(open.metrics(0, 0), back.metrics(0, 0));
    assertEquals(2, back.metrics(-1, 0).count());
    assertEquals(3.0, back.metrics(-1, 0).mae());

    // overall only (no entity kept)
    HorizonMetrics none = new HorizonMetrics(BOUNDS, 20, 0);
    none.add(entity(none, "a"), H, 1.5, true);
    HorizonMetrics backNone = new HorizonMetrics(BOUNDS, 20, 0);
    assertTrue(read(backNone, bytes(none)));
    assertEquals(0, backNone.entities());
    assertEquals(1, backNone.settledNotKept());
    assertEquals(1.5, backNone.metrics(-1, 0).mae());
  }
}
