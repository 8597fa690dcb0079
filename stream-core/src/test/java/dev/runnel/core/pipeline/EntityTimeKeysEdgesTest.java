package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.HashMap;
import java.util.Map;
import org.junit.jupiter.api.Test;

/**
 * The cases of {@link EntityTimeKeys} that a good hash never reaches: keys that share their 64-bit
 * hash (the hash is passed in, so the test chooses it), probe runs that wrap round the table's end
 * and are shifted back across it, and a checkpoint key whose length is corrupt. The reference is a
 * plain {@link HashMap} of (text, target time) to entry.
 */
class EntityTimeKeysEdgesTest {

  private static int find(EntityTimeKeys keys, long h, String key, long target) {
    char[] k = key.toCharArray();
    return keys.entryAt(keys.slotOf(h, k, k.length, target));
  }

  private static void add(EntityTimeKeys keys, int e, long h, String key, long target) {
    char[] k = key.toCharArray();
    keys.set(e, h, k, k.length, target);
    keys.insert(e);
  }

  /** Same hash, keys that differ in one char, in length only (a prefix), or in target time only: each finds its own entry. */
  @Test void keysSharingTheirHashAreToldApartByTextLengthAndTime() {
    EntityTimeKeys keys = new EntityTimeKeys(8);
    long h = 5; // every key in the same probe run
    String[] text = {"abc", "abd", "ab", "abcd", "abc"};
    long[] target = {10, 10, 10, 10, 11};
    for (int e = 0; e < text.length; e++) {
      add(keys, e, h, text[e], target[e]);
    }
    for (int e = 0; e < text.length; e++) {
      assertEquals(e, find(keys, h, text[e], target[e]), text[e] + "@" + target[e]);
    }
    assertEquals(EntityTimeKeys.NONE, find(keys, h, "abe", 10), "absent, same hash");
    assertEquals(EntityTimeKeys.NONE, find(keys, h, "a", 10), "absent prefix, same hash");
    assertEquals(EntityTimeKeys.NONE, find(keys, h, "abc", 12), "absent time, same hash");
    assertEquals(EntityTimeKeys.NONE, find(keys, h + 32, "abc", 10), "same key, other hash: not this entry");
  }

  /**
   * Hashes chosen so that probe runs wrap from the last slot to slot 0; every removal (at each
   * position of each run) leaves exactly the keys a map keeps, each findable, and no slot lost or doubled.
   */
  @Test void removalsShiftBackAcrossTheTablesEnd() {
    // capacity 8: a table of 32 slots (mask 31); home slots near 31 and 0, so the runs wrap round the end
    long[][] homeSets = {
      {30, 30, 31, 31, 0, 30, 1, 31},
      {31, 31, 31, 0, 0, 1, 30, 29},
      {29, 30, 31, 31, 29, 0, 2, 2},
      {0, 0, 31, 31, 31, 1, 1, 30},
    };
    for (long[] homes : homeSets) {
      for (int removeFirst = 0; removeFirst < homes.length; removeFirst++) {
        for (int removeSecond = 0; removeSecond < homes.length; removeSecond++) {
          if (removeSecond == removeFirst) {
            continue;
          }
          EntityTimeKeys keys = new EntityTimeKeys(8);
          assertEquals(0, keys.slotsInUse());
          Map<Integer, Long> reference = new HashMap<>();
          for (int e = 0; e < homes.length; e++) {
            long h = homes[e] + ((long) e << 40); // home slot homes[e]; the hashes differ above the mask

            add(keys, e, h, "k" + e, e);
            reference.put(e, h);
          }
          for (int r : new int[] {removeFirst, removeSecond}) {
            keys.removeSlot(keys.slotOfEntry(r));
            reference.remove(r);
            assertEquals(reference.size(), keys.slotsInUse(), "slots in use, homes " + java.util.Arrays.toString(homes));
            for (Map.Entry<Integer, Long> m : reference.entrySet()) {
              int e = m.getKey();
              assertEquals(e, find(keys, m.getValue(), "k" + e, e),
                  "entry " + e + " after removing " + removeFirst + ", " + removeSecond + " of " + java.util.Arrays.toString(homes));
            }
            assertEquals(EntityTimeKeys.NONE, find(keys, homes[r] + ((long) r << 40), "k" + r, r),
                "removed entry " + r);
          }
        }
      }
    }
  }

  /** A key widened past the first width keeps the shorter keys written before it, and they round-trip. */
  @Test void wideningKeepsEveryEarlierKey() throws IOException {
    EntityTimeKeys keys = new EntityTimeKeys(3);
    String[] text = {"eightchr", "x", "a key of twenty chars", "seventeen chars.."};
    add(keys, 0, 1, text[0], 0);
    add(keys, 1, 2, text[1], 0);
    add(keys, 2, 3, text[2], 0); // widens to 20 (max(20, 16))
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    DataOutputStream out = new DataOutputStream(b);
    for (int e = 0; e < 3; e++) {
      assertEquals(e, find(keys, e + 1, text[e], 0), text[e]);
      keys.writeKey(out, e); // the three keys back to back, as in a checkpoint
    }
    DataInputStream in = new DataInputStream(new ByteArrayInputStream(b.toByteArray()));
    for (int e = 0; e < 3; e++) {
      int n = keys.readKey(in, "a test's");
      assertEquals(text[e].length(), n);
      assertArrayEquals(text[e].toCharArray(), java.util.Arrays.copyOf(keys.readBuffer(), n));
    }
    assertEquals(-1, in.read(), "nothing after the last key");
  }

  /** A resize keeps each entry's id and key and empties the table; the store inserts them again and finds them. */
  @Test void resizesKeepIdsAndKeysAndEmptyTheTable() {
    for (boolean ring : new boolean[] {false, true}) {
      EntityTimeKeys keys = new EntityTimeKeys(4);
      String[] text = {"north", "a longer entity than eight chars", "south", "east"};
      for (int e = 0; e < 4; e++) {
        char[] k = text[e].toCharArray();
        add(keys, e, EntityTimeKeys.hash(k, k.length, 7), text[e], 7);
      }
      assertEquals(4, keys.slotsInUse());
      if (ring) {
        keys.resizeRing(0, 4, 16); // head 0: ids unchanged
      } else {
        keys.resize(16);
      }
      assertEquals(0, keys.slotsInUse(), "an empty table after the resize");
      for (int e = 0; e < 4; e++) {
        keys.insert(e);
      }
      char[] more = "west".toCharArray();
      add(keys, 15, EntityTimeKeys.hash(more, more.length, 7), "west", 7); // the last new id
      assertEquals(5, keys.slotsInUse());
      for (int e = 0; e < 4; e++) {
        char[] k = text[e].toCharArray();
        assertEquals(e, find(keys, EntityTimeKeys.hash(k, k.length, 7), text[e], 7), text[e] + (ring ? " (ring)" : ""));
        assertEquals(7, keys.target(e));
      }
      assertEquals(15, find(keys, EntityTimeKeys.hash(more, more.length, 7), "west", 7));
    }
  }

  /**
   * The hash tells keys apart: 1,024 entity texts (differing in any char) at 4 target times give
   * 4,096 different 64-bit hashes, and their low 12 bits (a table of 4,096 slots) reach more than
   * half the slots (a uniform hash reaches 1 − 1/e ≈ 63 %, common practice for hashing n keys into n slots).
   */
  @Test void theHashSpreadsKeysAndTimes() {
    java.util.Set<Long> seen = new java.util.HashSet<>();
    java.util.BitSet low = new java.util.BitSet(4096);
    for (int t = 0; t < 4; t++) {
      for (int i = 0; i < 1024; i++) {
        char[] k = ("st-" + (char) ('a' + i % 26) + (i / 26)).toCharArray();
        long h = EntityTimeKeys.hash(k, k.length, t * 3_600_000L);
        seen.add(h);
        low.set((int) h & 4095);
      }
    }
    assertEquals(4096, seen.size(), "distinct hashes");
    assertTrue(low.cardinality() > 2048, "low-bit slots reached: " + low.cardinality());
  }

  /** A checkpoint's key length below 0 or above 2^26 chars is refused, naming whose key and the length. */
  @Test void aCorruptKeyLengthIsRefused() throws IOException {
    EntityTimeKeys keys = new EntityTimeKeys(1);
    for (int len : new int[] {-1, Integer.MIN_VALUE, (1 << 26) + 1, Integer.MAX_VALUE}) {
      ByteArrayOutputStream b = new ByteArrayOutputStream();
      new DataOutputStream(b).writeInt(len);
      IOException e = assertThrows(IOException.class,
          () -> keys.readKey(new DataInputStream(new ByteArrayInputStream(b.toByteArray())), "a pending forecast's"));
      assertEquals("a pending forecast's entity of " + len + " characters", e.getMessage());
    }
    // length 0 is a key (read as nothing)
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    new DataOutputStream(b).writeInt(0);
    assertEquals(0, keys.readKey(new DataInputStream(new ByteArrayInputStream(b.toByteArray())), "a test's"));
  }
}
