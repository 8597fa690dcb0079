package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.HashMap;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/**
 * The keys and probe table {@link PendingForecasts} and {@link LearnedActuals} share, against a map:
 * a seeded mix of inserts and removals of keys of 1 to 40 chars (so the fixed key width grows
 * while entries are in the table, and probe runs are shifted back by removals) finds every key in
 * the table and no other; a ring resize moves entries to new ids with their keys; a key written
 * and read back is the same chars.
 */
class EntityTimeKeysTest {

  private static String randomKey(SplittableRandom rnd) {
    int n = 1 + rnd.nextInt(rnd.nextInt(8) == 0 ? 40 : 6);
    StringBuilder b = new StringBuilder();
    for (int i = 0; i < n; i++) {
      b.append((char) ('a' + rnd.nextInt(3)));
    }
    return b.toString();
  }

  /** Whether the key is in the table, and at which entry (-1: absent). */
  private static int find(EntityTimeKeys keys, String key, long target) {
    char[] k = key.toCharArray();
    return keys.entryAt(keys.slotOf(EntityTimeKeys.hash(k, k.length, target), k, k.length, target));
  }

  @Test void insertsAndRemovalsFindWhatAMapFinds() {
    SplittableRandom rnd = new SplittableRandom(15);
    int cap = 64;
    EntityTimeKeys keys = new EntityTimeKeys(cap);
    String[] keyOf = new String[cap];
    long[] targetOf = new long[cap];
    Map<String, Integer> reference = new HashMap<>();
    int widest = 0;
    for (int step = 0; step < 20_000; step++) {
      int e = rnd.nextInt(cap);
      if (keyOf[e] != null) {
        keys.removeSlot(keys.slotOfEntry(e));
        reference.remove(keyOf[e] + "@" + targetOf[e]);
        keyOf[e] = null;
      } else {
        String key = randomKey(rnd);
        long target = rnd.nextInt(4) * 3_600_000L;
        if (reference.containsKey(key + "@" + target)) {
          continue;
        }
        char[] k = key.toCharArray();
        keys.set(e, EntityTimeKeys.hash(k, k.length, target), k, k.length, target);
        keys.insert(e);
        keyOf[e] = key;
        targetOf[e] = target;
        reference.put(key + "@" + target, e);
        widest = Math.max(widest, k.length);
      }
      if (step % 97 == 0) {
        for (int i = 0; i < cap; i++) {
          if (keyOf[i] != null) {
            assertEquals(i, find(keys, keyOf[i], targetOf[i]), "entry " + i + " (" + keyOf[i] + ") at step " + step);
          }
        }
        assertEquals(reference.size(), keys.slotsInUse(), "slots in use at step " + step);
        String absent = randomKey(rnd);
        long t = rnd.nextInt(4) * 3_600_000L;
        assertEquals(reference.getOrDefault(absent + "@" + t, -1), find(keys, absent, t), absent + " at step " + step);
      }
    }
    assertEquals(40, widest, "keys longer than the first width came");
  }

  @Test void aRingResizeMovesEntriesWithTheirKeys() throws IOException {
    EntityTimeKeys keys = new EntityTimeKeys(4);
    String[] text = {"north", "a longer entity than eight chars", "south", "east"};
    // a ring of 4 whose head is at 2: ring order is entries 2, 3, 0, 1
    for (int e = 0; e < 4; e++) {
      char[] k = text[e].toCharArray();
      keys.set(e, EntityTimeKeys.hash(k, k.length, e), k, k.length, e);
    }
    keys.resizeRing(2, 4, 8);
    int[] from = {2, 3, 0, 1};
    for (int i = 0; i < 4; i++) {
      keys.insert(i);
    }
    for (int i = 0; i < 4; i++) {
      assertEquals(i, find(keys, text[from[i]], from[i]), text[from[i]]);
      assertEquals(from[i], keys.target(i));
      ByteArrayOutputStream b = new ByteArrayOutputStream();
      keys.writeKey(new DataOutputStream(b), i);
      int n = keys.readKey(new DataInputStream(new ByteArrayInputStream(b.toByteArray())), "a test's");
      assertArrayEquals(text[from[i]].toCharArray(), java.util.Arrays.copyOf(keys.readBuffer(), n));
    }
  }
}
