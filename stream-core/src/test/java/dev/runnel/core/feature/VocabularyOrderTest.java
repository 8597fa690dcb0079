package dev.runnel.core.feature;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * Which candidate and which level the vocabulary lets go of, and in what order (its javadoc: the
 * least recently seen, by arrival), the exact limits of expiry, and checkpoints that are cut short
 * or tampered with.
 */
class VocabularyOrderTest {

  static List<String> keys(RollingVocabulary v) {
    List<String> out = new ArrayList<>();
    for (RollingVocabulary.Level l : v.levelsInOrder()) {
      out.add(l.key());
    }
    return out;
  }

  @Test
  void aFullCandidateTable_dropsTheLeastRecentlySeenCandidate_andItsCount() {
    RollingVocabulary v = new RollingVocabulary(10, 3, 0, 0);
    int cap = v.candidateCapacity();
    assertEquals(64, cap, "2 x 10 clamped to at least 64");
    long rec = 0;
    for (int i = 0; i < cap; i++) {
      assertNull(v.sight("k" + i, 0, ++rec));
    }
    assertNull(v.sight("k0", 0, ++rec)); // k0 seen again (2): now the most recent; k1 the least
    assertNull(v.sight("new", 0, ++rec)); // the table is full: k1 goes
    assertEquals(cap, v.candidateCount());
    assertNotNull(v.sight("k0", 0, ++rec), "k0 kept its count: the third sighting admits it");
    assertEquals(cap - 1, v.candidateCount(), "an admitted candidate leaves the table");
    assertNull(v.sight("k1", 0, ++rec), "k1 lost its count: it starts again at 1");
    assertNull(v.sight("k1", 0, ++rec), "... 2 (k1 is already the most recent: it stays there)");
    assertNull(v.find("k1"));
    assertNull(v.sight("another", 0, ++rec)); // full again: k2 goes (k1 was moved to the end)
    assertNull(v.sight("k3", 0, ++rec));
    assertNotNull(v.sight("k3", 0, ++rec), "k3 was kept with its count");
    assertNull(v.sight("k2", 0, ++rec));
    assertNull(v.sight("k2", 0, ++rec), "k2 was the one dropped");
    assertNotNull(v.sight("k1", 0, ++rec), "k1's third sighting since it came back");
    assertEquals(List.of("k0", "k3", "k1"), keys(v));
  }

  @Test
  void levelsExpireFromTheLeastRecentlySeenEnd_inArrivalOrder() {
    RollingVocabulary v = new RollingVocabulary(10, 1, 0, 3);
    assertNotNull(v.sight("a", 100, 1));
    assertNotNull(v.sight("b", 200, 2));
    assertNotNull(v.sight("c", 300, 3));
    assertSame(v.find("a"), v.touch("a", 50, 4)); // an older event time: lastSeenMillis stays 100
    assertEquals(100, v.find("a").lastSeenMillis());
    assertEquals(4, v.find("a").lastSeenRecord());
    assertEquals(2, v.find("a").count());
    assertEquals(List.of("b", "c", "a"), keys(v));
    assertNull(v.touch("zz", 0, 4), "not admitted: nothing changes");
    assertEquals(List.of("b", "c", "a"), keys(v));
    // b last seen at record 2: at record 5, 3 records have passed: not more than 3, kept
    assertNull(v.expireOne(0, 5, null));
    // record 6: 4 > 3, b goes; then c is the least recent (record 3: 3 records, kept)
    assertEquals("b", v.expireOne(0, 6, null).key());
    assertNull(v.expireOne(0, 6, null));
    assertEquals("c", v.expireOne(0, 7, null).key());
    assertNull(v.expireOne(0, 7, v.find("a")), "the level of the current record is kept");
    assertEquals("a", v.expireOne(0, 8, null).key());
    assertNull(v.expireOne(0, 100, null), "empty");
    assertEquals(0, v.size());
  }

  @Test
  void expiryByTime_isStrictlyMoreThanTheSpan() {
    RollingVocabulary v = new RollingVocabulary(10, 1, 1000, 0);
    v.sight("a", 5000, 1);
    v.sight("b", 5500, 2);
    assertNull(v.expireOne(6000, 3, null), "exactly the span: kept");
    assertEquals("a", v.expireOne(6001, 3, null).key());
    assertNull(v.expireOne(6001, 3, null));
    assertEquals("b", v.expireOne(6501, 1_000_000, null).key(), "records alone never expire a level here");
  }

  @Test
  void theCapSendsTheRestToOther_evenOnceCandidatesAreDue() {
    RollingVocabulary v = new RollingVocabulary(1, 2, 0, 0);
    v.sight("a", 0, 1);
    assertNotNull(v.sight("a", 0, 2));
    v.sight("b", 0, 3);
    assertNull(v.sight("b", 0, 4), "due, but no room");
    assertNull(v.sight("b", 0, 5));
    assertEquals(4, v.otherCount(), "a's first sighting and b's three");
    assertEquals(1, v.candidateCount(), "b waits with its count");
  }

  static byte[] bytes(RollingVocabulary v) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    v.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  static RollingVocabulary read(byte[] b) throws IOException {
    RollingVocabulary v = new RollingVocabulary(4, 2, 0, 0);
    v.readFrom(new DataInputStream(new ByteArrayInputStream(b)));
    return v;
  }

  static RollingVocabulary sample() {
    RollingVocabulary v = new RollingVocabulary(4, 2, 0, 0);
    long rec = 0;
    for (String k : new String[] {"x", "y", "x", "y", "z", "w", "z", "w", "x", "q", "r"}) {
      if (v.find(k) != null) {
        v.touch(k, 10 * rec, ++rec);
      } else {
        v.sight(k, 10 * rec, ++rec);
      }
    }
    return v;
  }

  @Test
  void aCheckpointRestoresTheOrderOfLevelsAndCandidates() throws IOException {
    RollingVocabulary v = sample();
    byte[] b = bytes(v);
    RollingVocabulary r = read(b);
    assertEquals(keys(v), keys(r));
    assertEquals(List.of("y", "z", "w", "x"), keys(r));
    assertEquals(v.otherCount(), r.otherCount());
    assertEquals(v.candidateCount(), r.candidateCount());
    assertEquals(java.util.Arrays.toString(b), java.util.Arrays.toString(bytes(r)));
    RollingVocabulary empty = new RollingVocabulary(4, 2, 0, 0);
    assertEquals(0, read(bytes(empty)).size(), "an empty vocabulary (no other count either) reads back");
    IllegalStateException e = assertThrows(IllegalStateException.class, () -> r.readFrom(new DataInputStream(new ByteArrayInputStream(b))));
    assertTrue(e.getMessage().contains("fresh"), e.getMessage());
  }

  @Test
  void aCheckpointCutShort_isRefusedAtEveryLength() throws IOException {
    byte[] b = bytes(sample());
    for (int len = 0; len < b.length; len++) {
      byte[] cut = java.util.Arrays.copyOf(b, len);
      assertThrows(IOException.class, () -> read(cut), "cut at " + len + " of " + b.length);
    }
  }

  @Test
  void tamperedCountsAndKeys_areRefusedByName() throws IOException {
    byte[] b = bytes(sample());
    // layout: otherCount (8), levels n (4), then per level: key (4 + bytes), count, first, last, record (4 x 8)
    assertRefused(with(b, 8, 5), "5 levels for max_levels 4");
    assertRefused(with(b, 8, -1), "-1 levels");
    assertRefused(with(b, 12, -7), "string of -7 bytes");
    assertRefused(withLong(b, 12 + 4 + 1, -3), "count -3");
    // the second level's key made equal to the first's ("y" and "z" are one byte each)
    byte[] twice = b.clone();
    twice[12 + 4 + 1 + 32 + 4] = 'y';
    assertRefused(twice, "level y twice");
    int candidates = 12 + 4 * (4 + 1 + 32);
    assertRefused(with(b, candidates, 65), "65 candidates for capacity 64");
    assertRefused(with(b, candidates, -2), "-2 candidates");
    assertRefused(withLong(b, candidates + 4 + 4 + 1, -1), "candidate q count -1");
    assertRefused(withLong(b, 0, -1), "other count -1");
  }

  static byte[] with(byte[] b, int at, int value) {
    byte[] c = b.clone();
    ByteBuffer.wrap(c).putInt(at, value);
    return c;
  }

  static byte[] withLong(byte[] b, int at, long value) {
    byte[] c = b.clone();
    ByteBuffer.wrap(c).putLong(at, value);
    return c;
  }

  static void assertRefused(byte[] b, String why) {
    IOException e = assertThrows(IOException.class, () -> read(b), why);
    assertTrue(e.getMessage().contains("corrupt checkpoint") && e.getMessage().contains(why), why + ": " + e.getMessage());
  }
}
