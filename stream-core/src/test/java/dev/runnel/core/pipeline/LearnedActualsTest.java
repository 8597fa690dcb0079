package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.lang.management.ManagementFactory;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The memory of learned actuals against a plain list that does the same by scanning: a seeded mix
 * of look-ups, adds, value changes and clock moves over few keys (long probe runs, many deletions)
 * finds the same keys with the same values and forgets the same ones; a checkpoint in the middle
 * continues identically; and once warm a look-up and an add allocate nothing, with rows kept too.
 */
class LearnedActualsTest {

  private static final class Entry {
    final String key;
    final long target;
    double value;

    Entry(String key, long target, double value) {
      this.key = key;
      this.target = target;
      this.value = value;
    }
  }

  /** The reference: a list in the order learned, scanned in full. */
  private static final class Reference {
    final int max;
    final long lag;
    final List<Entry> list = new ArrayList<>();
    long early;

    Reference(int max, long lag) {
      this.max = max;
      this.lag = lag;
    }

    void expireFront(long now) {
      while (!list.isEmpty() && now != Long.MIN_VALUE && now - list.get(0).target > lag) {
        list.remove(0);
      }
    }

    Entry find(String key, long target, long now) {
      expireFront(now);
      for (Entry e : list) {
        if (e.key.equals(key) && e.target == target) {
          return e;
        }
      }
      return null;
    }

    void add(String key, long target, double v, long now) {
      expireFront(now);
      if (list.size() == max) {
        list.remove(0);
        early++;
      }
      list.add(new Entry(key, target, v));
    }
  }

  @Test
  void agreesWithAScanningReferenceAndSurvivesACheckpoint() throws IOException {
    for (long seed = 1; seed <= 6; seed++) {
      Random rnd = new Random(seed);
      int max = 1 + rnd.nextInt(40);
      long lag = 1 + rnd.nextInt(50);
      LearnedActuals store = new LearnedActuals(max, lag, false);
      Reference ref = new Reference(max, lag);
      long now = Long.MIN_VALUE;
      int keys = 1 + rnd.nextInt(12);
      int found = 0;
      for (int step = 0; step < 20_000; step++) {
        if (step == 10_000) {
          store = roundTrip(store, max, lag);
        }
        String key = "hub-" + rnd.nextInt(keys) + (rnd.nextBoolean() ? "" : "\u0000x");
        char[] k = key.toCharArray();
        long target = (now == Long.MIN_VALUE ? 0 : now) - rnd.nextInt(40) + 5;
        if (rnd.nextInt(10) < 8) {
          // an actual: look it up; learn it when absent, change the value now and then when present
          if (now != Long.MIN_VALUE && now - target > lag) {
            continue; // the step rejects it as too late before asking
          }
          int e = store.find(k, k.length, target, now);
          Entry want = ref.find(key, target, now);
          assertEquals(want != null, e >= 0, key + "@" + target + " at step " + step + " (seed " + seed + ")");
          double v = rnd.nextInt(4);
          if (e < 0) {
            store.add(k, k.length, target, v, now);
            ref.add(key, target, v, now);
          } else {
            found++;
            assertEquals(want.value, store.value(e), "the value learned, at step " + step);
            store.setValue(e, v);
            want.value = v;
          }
        } else {
          now = now == Long.MIN_VALUE ? 0 : now + rnd.nextInt(3);
          store.expireFront(now);
          ref.expireFront(now);
        }
        assertEquals(ref.list.size(), store.size(), "remembered at step " + step + " (seed " + seed + ")");
      }
      assertEquals(ref.early, store.forgottenEarly(), "forgotten by count");
      assertTrue(found > 100 && ref.early > 0, "the mix exercised every path (seed " + seed + "): found " + found + ", early " + ref.early);
    }
  }

  private static LearnedActuals roundTrip(LearnedActuals store, int max, long lag) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    store.writeTo(new DataOutputStream(b));
    LearnedActuals back = new LearnedActuals(max, lag, false);
    back.readFrom(new DataInputStream(new ByteArrayInputStream(b.toByteArray())));
    ByteArrayOutputStream again = new ByteArrayOutputStream();
    back.writeTo(new DataOutputStream(again));
    assertEquals(java.util.Arrays.toString(b.toByteArray()), java.util.Arrays.toString(again.toByteArray()),
        "a restored memory writes what it read");
    return back;
  }

  /**
   * Rows of every length from 0 to 40 non-zero entries, kept for keys that come and go: every key
   * found reads back the row last kept for it, through the ring's growth, rows outgrowing the room
   * kept for them (8 entries at first) and a checkpoint written and read in the middle. Fails when
   * growing a row's room or the ring moves a row to the wrong place or cuts it short (checked on the
   * flat layout tried on 2026-12-05, docs/performance.md, by copying one entry too few).
   */
  @Test
  void rowsOfAnyLengthReadBackThroughGrowthWideningAndACheckpoint() throws IOException {
    int d = 40;
    ColumnBases bases = new ColumnBases(d);
    LearnedActuals store = new LearnedActuals(300, 60, true);
    java.util.Map<String, double[]> kept = new java.util.HashMap<>();
    Random rnd = new Random(7);
    double[] row = new double[d];
    int checked = 0;
    int longest = 0;
    for (int i = 0; i < 6_000; i++) {
      if (i == 3_000) {
        ByteArrayOutputStream b = new ByteArrayOutputStream();
        store.writeTo(new DataOutputStream(b));
        LearnedActuals back = new LearnedActuals(300, 60, true);
        back.readFrom(new DataInputStream(new ByteArrayInputStream(b.toByteArray())));
        ByteArrayOutputStream again = new ByteArrayOutputStream();
        back.writeTo(new DataOutputStream(again));
        assertEquals(java.util.Arrays.toString(b.toByteArray()), java.util.Arrays.toString(again.toByteArray()),
            "a restored memory with rows writes what it read");
        store = back;
      }
      String key = "hub-" + rnd.nextInt(12);
      char[] k = key.toCharArray();
      long now = i / 4;
      long target = now - rnd.nextInt(10);
      int e = store.find(k, k.length, target, now);
      String ref = key + "@" + target;
      if (e >= 0) {
        double[] want = kept.get(ref);
        int m = store.rowLength(e);
        assertEquals((int) want[0], m, "row length of " + ref + " at step " + i);
        for (int c = 0; c < m; c++) {
          assertEquals((int) want[1 + 2 * c], store.rowId(e, c), "column id " + c + " of " + ref + " at step " + i);
          assertEquals(want[2 + 2 * c], store.rowValue(e, c), "value " + c + " of " + ref + " at step " + i);
        }
        assertEquals(want[1 + 2 * m], store.logDecay(e), "log-forgetting of " + ref);
        checked++;
      } else {
        e = store.add(k, k.length, target, i, now);
      }
      int nnz = rnd.nextInt(i < 1_000 ? 9 : d + 1);
      java.util.Arrays.fill(row, 0.0);
      int from = rnd.nextInt(d);
      for (int c = 0; c < nnz; c++) {
        row[(from + c) % d] = 1.0 + rnd.nextInt(1000); // nnz distinct columns
      }
      store.keepRow(e, row, d, bases, -i * 1e-3, 0);
      int m = 0;
      double[] want = new double[2 + 2 * d];
      for (int j = 0; j < d; j++) {
        if (row[j] != 0.0) {
          want[1 + 2 * m] = bases.id(j);
          want[2 + 2 * m] = bases.toFirstBasis(j, row[j]);
          m++;
        }
      }
      want[0] = m;
      want[1 + 2 * m] = -i * 1e-3;
      longest = Math.max(longest, m);
      kept.put(ref, want);
    }
    assertTrue(checked > 500 && longest > 32, "the mix read rows back (" + checked + ") and widened past 32 (" + longest + ")");
  }

  @Test
  void warmLookUpsAndAddsAllocateNothing() {
    com.sun.management.ThreadMXBean bean = (com.sun.management.ThreadMXBean) ManagementFactory.getThreadMXBean();
    ColumnBases bases = new ColumnBases(12);
    LearnedActuals store = new LearnedActuals(5_000, 100, true);
    char[][] keys = new char[500][];
    for (int i = 0; i < keys.length; i++) {
      keys[i] = ("hub-" + i).toCharArray();
    }
    double[] row = new double[12];
    long[] before = {bean.getCurrentThreadAllocatedBytes()};
    for (int round = 0; round < 3; round++) {
      if (round == 2) {
        before[0] = bean.getCurrentThreadAllocatedBytes();
      }
      for (int i = round * 20_000; i < (round + 1) * 20_000; i++) {
        char[] k = keys[i % keys.length];
        long target = i / 10;
        int e = store.find(k, k.length, target, target);
        if (e < 0) {
          e = store.add(k, k.length, target, i, target);
        }
        for (int j = 0; j < row.length; j++) {
          row[j] = (i + j) % 3 == 0 ? 0.0 : j + 0.5;
        }
        store.keepRow(e, row, row.length, bases, -i * 1e-3, 0);
      }
    }
    long allocated = bean.getCurrentThreadAllocatedBytes() - before[0];
    assertTrue(allocated < 4_096, "bytes allocated by 20000 warm look-ups and adds with rows: " + allocated);
  }
}
