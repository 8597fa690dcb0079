package dev.runnel.core.feature;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayOutputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * {@link TextKeyTable} against {@link java.util.HashMap} as the reference model (random operation
 * sequences, as in property-based testing), and the vocabulary's char lookups against its
 * {@code String} lookups.
 */
class TextKeyTableTest {

  /** Keys that collide under String.hashCode ("Aa" and "BB" both hash to 2112; common knowledge). */
  static List<String> collidingKeys(int pairs) {
    List<String> out = new ArrayList<>();
    out.add("");
    for (int m = 0; m < (1 << pairs); m++) {
      StringBuilder s = new StringBuilder();
      for (int k = 0; k < pairs; k++) s.append((m >> k & 1) == 0 ? "Aa" : "BB");
      out.add(s.toString());
    }
    return out;
  }

  static List<String> mixedKeys(Random r, int n) {
    List<String> out = new ArrayList<>(collidingKeys(4));
    out.add("\u00e9");
    out.add("e\u0301");
    out.add("\ud83d\ude00");
    out.add("\ud83d");
    out.add("\"\\\n\t");
    out.add("x".repeat(1000));
    while (out.size() < n) {
      int len = r.nextInt(12);
      StringBuilder s = new StringBuilder();
      for (int i = 0; i < len; i++) s.append(r.nextInt(4) == 0 ? (char) r.nextInt(0x10000) : (char) ('a' + r.nextInt(6)));
      out.add(s.toString());
    }
    return out;
  }

  /** The key at a random offset inside a larger array with other chars around it. */
  static char[] embed(String key, int off, Random r) {
    char[] c = new char[off + key.length() + 3];
    for (int i = 0; i < c.length; i++) c[i] = (char) ('A' + r.nextInt(26));
    key.getChars(0, key.length(), c, off);
    return c;
  }

  @Test void randomOperations_matchAHashMap() {
    Random r = new Random(42);
    for (long seed : new long[] {0L, 1L, -7L, r.nextLong()}) {
      TextKeyTable<Integer> t = new TextKeyTable<>(seed);
      Map<String, Integer> ref = new HashMap<>();
      List<String> keys = mixedKeys(r, 300);
      for (int op = 0; op < 60_000; op++) {
        String k = keys.get(r.nextInt(keys.size()));
        switch (r.nextInt(4)) {
          case 0:
            if (!ref.containsKey(k)) {
              ref.put(k, op);
              t.put(k, op);
            } else {
              final String kk = k;
              assertThrows(IllegalStateException.class, () -> t.put(kk, -1));
            }
            break;
          case 1:
            assertEquals(ref.remove(k) != null, t.remove(k), k);
            break;
          case 2:
            assertEquals(ref.get(k), t.get(k), k);
            break;
          default: {
            int off = r.nextInt(5);
            assertEquals(ref.get(k), t.get(embed(k, off, r), off, k.length()), k);
          }
        }
        assertEquals(ref.size(), t.size());
      }
      for (String k : keys) {
        assertEquals(ref.get(k), t.get(k));
        assertEquals(ref.get(k), t.get(k.toCharArray(), 0, k.length()));
      }
    }
  }

  @Test void capacity_staysBoundedByTheLargestSizeHeld() {
    TextKeyTable<String> t = new TextKeyTable<>(3L);
    Random r = new Random(9);
    List<String> live = new ArrayList<>();
    for (int i = 0; i < 200_000; i++) {
      String k = "k" + i;
      t.put(k, k);
      live.add(k);
      if (live.size() > 100) assertTrue(t.remove(live.remove(r.nextInt(live.size()))));
    }
    assertEquals(100, live.size());
    assertEquals(live.size(), t.size());
    assertTrue(t.capacity() <= 256, "capacity " + t.capacity() + " for at most 101 live keys");
    for (String k : live) assertSame(k, t.get(k));
  }

  @Test void hashMatches_forStringAndChars() {
    TextKeyTable<Object> t = new TextKeyTable<>(12345L);
    Random r = new Random(1);
    for (String k : mixedKeys(r, 500)) {
      assertEquals(t.hash(k), t.hash(embed(k, 2, r), 2, k.length()), k);
    }
  }

  @Test void stringHashCollisions_doNotCollideHere() {
    // 2^10 keys that all share one String.hashCode: with a seeded mix they spread out
    List<String> keys = collidingKeys(10);
    TextKeyTable<Object> t = new TextKeyTable<>(77L);
    java.util.HashSet<Integer> hashes = new java.util.HashSet<>();
    for (String k : keys) hashes.add(t.hash(k));
    assertTrue(hashes.size() > keys.size() - 3, hashes.size() + " distinct hashes for " + keys.size() + " keys");
  }

  // ---------------------------------------------------------------- the vocabulary

  private static byte[] state(RollingVocabulary v) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    v.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  private static String key(RollingVocabulary.Level l) { return l == null ? null : l.key(); }

  /**
   * One vocabulary driven through the String methods and one through the char methods (keys
   * embedded at random offsets) give the same answers at every step and the same final state.
   */
  @Test void vocabularyByChars_equalsVocabularyByString() throws IOException {
    for (int minCount : new int[] {1, 3}) {
      Random r = new Random(minCount);
      RollingVocabulary byString = new RollingVocabulary(20, minCount, 50, 300);
      RollingVocabulary byChars = new RollingVocabulary(20, minCount, 50, 300);
      List<String> keys = mixedKeys(r, 120);
      long t = 0;
      for (long rec = 1; rec <= 30_000; rec++) {
        t += r.nextInt(3);
        String k = keys.get(Math.min(keys.size() - 1, (int) Math.abs(r.nextGaussian() * 25)));
        int off = r.nextInt(4);
        char[] c = embed(k, off, r);
        RollingVocabulary.Level a = byString.touch(k, t, rec);
        RollingVocabulary.Level b = byChars.touch(c, off, k.length(), t, rec);
        assertEquals(key(a), key(b));
        RollingVocabulary.Level ea;
        while ((ea = byString.expireOne(t, rec, a)) != null) assertEquals(ea.key(), key(byChars.expireOne(t, rec, b)));
        assertNull(byChars.expireOne(t, rec, b));
        if (a == null) {
          a = byString.sight(k, t, rec);
          b = byChars.sight(c, off, k.length(), t, rec);
          assertEquals(key(a), key(b));
          if (b != null) assertEquals(k, b.key());
        }
        String probe = keys.get(r.nextInt(keys.size()));
        assertEquals(key(byString.find(probe)), key(byChars.find(embed(probe, 1, r), 1, probe.length())));
        assertEquals(key(byString.find(probe)), key(byChars.find(probe)));
      }
      assertEquals(byString.size(), byChars.size());
      assertEquals(byString.candidateCount(), byChars.candidateCount());
      assertTrue(byString.size() > 5, "levels were admitted");
      assertEquals(java.util.Arrays.toString(state(byString)), java.util.Arrays.toString(state(byChars)));
    }
  }
}
