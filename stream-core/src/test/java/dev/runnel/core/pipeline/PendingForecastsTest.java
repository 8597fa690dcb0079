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
 * The pending-forecast store against a plain list that does the same by scanning: a seeded mix of
 * adds, takes and clock moves over few keys (long probe runs, many deletions that shift runs back)
 * gives the same forecasts taken, in the same order, and the same counts; a checkpoint in the
 * middle continues identically; and once warm an add and a take allocate nothing.
 */
class PendingForecastsTest {

  /** One forecast in the reference list. */
  private record Entry(String key, long target, long issue, double value) { }

  /** The reference: a list in issue order, scanned in full for every operation. */
  private static final class Reference {
    final int max;
    final long delay;
    final List<Entry> list = new ArrayList<>();
    long full;
    long expired;
    long settled;

    Reference(int max, long delay) {
      this.max = max;
      this.delay = delay;
    }

    boolean old(long target, long now) {
      return now != Long.MIN_VALUE && now - target > delay;
    }

    void expireFront(long now) {
      while (!list.isEmpty() && old(list.get(0).target, now)) {
        list.remove(0);
        expired++;
      }
    }

    void add(Entry e, long now) {
      expireFront(now);
      if (old(e.target, now)) {
        expired++;
        return;
      }
      if (list.size() == max) {
        list.remove(0);
        full++;
      }
      list.add(e);
    }

    List<Entry> take(String key, long target, long now) {
      expireFront(now);
      List<Entry> out = new ArrayList<>();
      list.removeIf(e -> {
        if (e.key.equals(key) && e.target == target) {
          out.add(e);
          return true;
        }
        return false;
      });
      if (!out.isEmpty() && old(target, now)) {
        expired += out.size();
        return List.of();
      }
      settled += out.size();
      return out;
    }
  }

  @Test
  void agreesWithAScanningReferenceAndSurvivesACheckpoint() throws IOException {
    for (long seed = 1; seed <= 6; seed++) {
      Random rnd = new Random(seed);
      int max = 1 + rnd.nextInt(300);
      long delay = 1 + rnd.nextInt(50);
      PendingForecasts store = new PendingForecasts(max, delay);
      Reference ref = new Reference(max, delay);
      long now = Long.MIN_VALUE;
      int keys = 1 + rnd.nextInt(12); // few keys: many forecasts per key, long probe runs
      int takenTotal = 0;
      for (int step = 0; step < 20_000; step++) {
        if (step == 10_000) {
          store = roundTrip(store, max, delay);
        }
        String key = "hub-" + rnd.nextInt(keys) + (rnd.nextBoolean() ? "" : "\u0000x"); // texts that differ only late
        char[] k = key.toCharArray();
        long target = (now == Long.MIN_VALUE ? 0 : now) + rnd.nextInt(40) - 10;
        int op = rnd.nextInt(10);
        if (op < 6) {
          long issue = target - rnd.nextInt(30);
          double v = rnd.nextGaussian();
          store.add(k, k.length, target, issue, v, v - 1, v + 1, 0, step, now);
          ref.add(new Entry(key, target, issue, v), now);
        } else if (op < 9) {
          int n = store.take(k, k.length, target, now);
          List<Entry> want = ref.take(key, target, now);
          assertEquals(want.size(), n, "forecasts taken for " + key + "@" + target + " at step " + step + " (seed " + seed + ")");
          for (int i = 0; i < n; i++) {
            assertEquals(want.get(i).issue, store.takenIssueMillis(i), "issue order at step " + step);
            assertEquals(want.get(i).value, store.takenForecast(i), "value at step " + step);
            assertEquals(want.get(i).value - 1, store.takenLow(i));
          }
          takenTotal += n;
        } else {
          now = now == Long.MIN_VALUE ? 0 : now + rnd.nextInt(3);
          store.expireFront(now);
          ref.expireFront(now);
        }
        assertEquals(ref.list.size(), store.size(), "pending at step " + step + " (seed " + seed + ")");
      }
      assertEquals(ref.full, store.droppedFull(), "dropped by count");
      assertEquals(ref.expired, store.droppedExpired(), "dropped by age");
      assertEquals(ref.settled, store.settled(), "settled");
      assertTrue(takenTotal > 100 && ref.full > 0 && ref.expired > 0, "the mix exercised every path (seed " + seed + "): taken "
          + takenTotal + ", dropped by count " + ref.full + ", by age " + ref.expired);
    }
  }

  private static PendingForecasts roundTrip(PendingForecasts store, int max, long delay) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    store.writeTo(new DataOutputStream(b));
    PendingForecasts back = new PendingForecasts(max, delay);
    back.readFrom(new DataInputStream(new ByteArrayInputStream(b.toByteArray())));
    ByteArrayOutputStream again = new ByteArrayOutputStream();
    back.writeTo(new DataOutputStream(again));
    assertEquals(java.util.Arrays.toString(b.toByteArray()), java.util.Arrays.toString(again.toByteArray()),
        "a restored store writes what it read");
    return back;
  }

  @Test
  void warmAddsAndTakesAllocateNothing() {
    com.sun.management.ThreadMXBean bean = (com.sun.management.ThreadMXBean) ManagementFactory.getThreadMXBean();
    PendingForecasts store = new PendingForecasts(5_000, 100);
    char[][] keys = new char[500][];
    for (int i = 0; i < keys.length; i++) {
      keys[i] = ("hub-" + i).toCharArray();
    }
    long[] before = {bean.getCurrentThreadAllocatedBytes()}; // the first call loads what it needs
    for (int round = 0; round < 3; round++) {
      if (round == 2) {
        before[0] = bean.getCurrentThreadAllocatedBytes();
      }
      for (int i = round * 20_000; i < (round + 1) * 20_000; i++) {
        char[] k = keys[i % keys.length];
        long target = i / 10;
        store.add(k, k.length, target, target - 5, i, i - 1, i + 1, 0, i, target - 5);
        if (i >= 50) {
          char[] old = keys[(i - 50) % keys.length];
          store.take(old, old.length, (i - 50) / 10, target - 5);
        }
      }
    }
    long allocated = bean.getCurrentThreadAllocatedBytes() - before[0];
    // a char[] per add alone would be 20000 * 32 bytes; allow a little for the bean's own call
    assertTrue(allocated < 4_096, "bytes allocated by 20000 warm adds and takes: " + allocated);
  }

  /**
   * Many forecasts for one key take one table slot, not one each: with a slot per forecast, k
   * forecasts of a key make a probe run of k slots that every add, take and drop walked and
   * shifted (docs/performance.md, "Forecast path"). The store is filled past its count bound with
   * 40 forecasts for each of 25 keys, in the order a rolling forecast issues them.
   */
  @Test
  void forecastsOfOneKeyShareOneTableSlot() {
    PendingForecasts store = new PendingForecasts(600, 1_000_000);
    char[][] keys = new char[25][];
    for (int i = 0; i < keys.length; i++) {
      keys[i] = ("hub-" + i).toCharArray();
    }
    for (int round = 0; round < 40; round++) {
      for (char[] k : keys) {
        store.add(k, k.length, 500, round, round, round - 1, round + 1, 0, round, 0);
      }
    }
    assertEquals(600, store.size(), "the count bound holds");
    assertEquals(400, store.droppedFull(), "the first-issued ones were dropped");
    assertEquals(25, store.keySlotsInUse(), "one slot per key with forecasts pending");
    char[] k = keys[7];
    int n = store.take(k, k.length, 500, 0);
    assertEquals(24, n, "the forecasts of hub-7 left after the drops");
    for (int i = 0; i < n; i++) {
      assertEquals(16 + i, store.takenIssueMillis(i), "taken in the order issued");
    }
    assertEquals(24, store.keySlotsInUse(), "the key's slot is freed with its forecasts");
  }
}
