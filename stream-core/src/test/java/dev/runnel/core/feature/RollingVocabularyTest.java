package dev.runnel.core.feature;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.record.EventRecord;
import java.lang.management.ManagementFactory;
import java.lang.management.MemoryMXBean;
import java.util.List;
import org.junit.jupiter.api.Test;

class RollingVocabularyTest {

  private static final long HOUR = 3_600_000L;

  private static final class Rig {
    final Featurizer f;
    final RecordingListener l;
    final EventRecord r;
    final double[] row;
    long clock = Long.MIN_VALUE;

    Rig(String onehotOptions) {
      f = new Featurizer(TestConfigs.parse("name: v\ninput:\n  fields: {hub: text, y: number}\ntarget: y\n"
          + "features:\n  - {kind: onehot, field: hub" + onehotOptions + "}\n"));
      l = new RecordingListener(f.columnNames(), true, null);
      f.setListener(l);
      r = new EventRecord(f.config().input().schema());
      row = new double[f.maxDimension()];
    }

    /** Trains on one record and checks the listener's view of the layout against the featurizer's. */
    int learn(String hub, long t) {
      r.clear();
      r.setText(0, hub);
      r.setNumber(1, 1.0);
      assertNull(f.check(r, true));
      clock = Math.max(clock, t); // the pipeline step's clock for in-order and late records
      f.learnAndEncode(r, t, clock, row);
      assertEquals(f.columnNames(), l.names, "listener follows the layout");
      return hot();
    }

    int score(String hub) {
      r.clear();
      r.setText(0, hub);
      f.encode(r, 0, row);
      return hot();
    }

    int hot() {
      int at = -1;
      for (int i = 1; i < f.dimension(); i++) {
        if (row[i] == 1.0) {
          assertEquals(-1, at, "exactly one hot column");
          at = i;
        } else {
          assertEquals(0.0, row[i]);
        }
      }
      assertEquals(1.0, row[0], "constant");
      return at;
    }
  }

  @Test void firstSighting_admitsAndAppendsAColumn() {
    Rig g = new Rig("");
    assertEquals(List.of("constant", "hub=(other)"), g.f.columnNames());
    assertEquals(2, g.learn("H07", 0));
    assertEquals(List.of("add 2 hub=H07"), g.l.events);
    assertEquals(1, g.f.layoutVersion());
    assertEquals(3, g.learn("H01", 1));
    assertEquals(2, g.learn("H07", 2));
    assertEquals(List.of("add 2 hub=H07", "add 3 hub=H01"), g.l.events);
    assertEquals(1, g.score("never-seen"), "unseen level scores as other");
    assertEquals(3, g.score("H01"));
    assertEquals(2, g.f.layoutVersion());
    assertEquals(2, g.f.vocabulary("hub").find("H07").count());
  }

  @Test void minCount_admitsOnTheNthSighting() {
    Rig g = new Rig(", min_count: 3");
    assertEquals(1, g.learn("A", 0));
    assertEquals(1, g.learn("B", 0));
    assertEquals(1, g.learn("A", 0));
    assertEquals(1, g.score("A"), "not admitted after two sightings");
    assertEquals(2, g.learn("A", 0), "third sighting admits and encodes the new column");
    assertEquals(List.of("add 2 hub=A"), g.l.events);
    assertEquals(3, g.f.vocabulary("hub").otherCount());
    assertEquals(1, g.f.vocabulary("hub").candidateCount(), "B is still a candidate");
  }

  @Test void expiryByRecords_removesAndShiftsLaterColumns() {
    Rig g = new Rig(", expire_after_records: 2");
    g.learn("A", 0);   // record 1
    g.learn("B", 0);   // record 2
    g.learn("B", 0);   // record 3: A missed 2 records
    assertEquals(List.of("add 2 hub=A", "add 3 hub=B"), g.l.events);
    assertEquals(3, g.learn("C", 0)); // record 4: A missed 3 > 2 -> removed first; B moves to 2, C appended at 3
    assertEquals(List.of("add 2 hub=A", "add 3 hub=B", "remove 2 hub=A", "add 3 hub=C"), g.l.events.subList(0, 4));
    assertEquals(List.of("constant", "hub=(other)", "hub=B", "hub=C"), g.f.columnNames());
    assertEquals(1, g.score("A"));
  }

  @Test void expiryByEventTime_usesTheStreamTime() {
    Rig g = new Rig(", expire_after: PT1H");
    long t0 = 1_774_000_000_000L;
    g.learn("A", t0);
    g.learn("B", t0 + HOUR / 2);
    g.learn("B", t0 + HOUR);          // exactly 1 h: not more than the span
    assertEquals(2, g.f.vocabulary("hub").size());
    g.learn("B", t0 + HOUR / 4);      // late record: stream time stays at t0 + 1 h
    assertEquals(2, g.f.vocabulary("hub").size());
    g.learn("B", t0 + HOUR + 1);
    assertEquals(List.of("add 2 hub=A", "add 3 hub=B", "remove 2 hub=A"), g.l.events);
    assertEquals(2, g.score("B"));
    // a seen level stays: B seen at t0 + 1 h + 1 ms; still present 1 h later
    g.learn("C", t0 + 2 * HOUR + 1);
    assertEquals(2, g.f.vocabulary("hub").size());
    g.learn("C", t0 + 2 * HOUR + 2);
    assertEquals(List.of("constant", "hub=(other)", "hub=C"), g.f.columnNames());
  }

  @Test void levelInTheCurrentRecord_isNotExpiredEvenWhenLateAndAlone() {
    Rig g = new Rig(", expire_after: PT1H, expire_after_records: 1");
    long t0 = 1_774_000_000_000L;
    g.learn("B", t0 + 3 * HOUR);   // 1
    g.learn("A", t0);              // 2: late; admitted although already an hour stale
    assertEquals(2, g.learn("A", t0)); // 3: B expires (2 records without it), A moves to 2 and, seen now, stays
    assertEquals(List.of("add 2 hub=B", "add 3 hub=A", "remove 2 hub=B"), g.l.events);
    assertEquals(List.of("constant", "hub=(other)", "hub=A"), g.f.columnNames());
    assertEquals(2, g.learn("C", t0 + 3 * HOUR)); // 4: now A expires (stale by time and by records)
    assertEquals(List.of("remove 2 hub=A", "add 2 hub=C"), g.l.events.subList(3, 5));
  }

  @Test void cap_sendsTheRestToOther() {
    Rig g = new Rig(", max_levels: 2");
    assertEquals(2, g.learn("A", 0));
    assertEquals(3, g.learn("B", 0));
    assertEquals(1, g.learn("C", 0));
    assertEquals(1, g.learn("D", 0));
    assertEquals(2, g.learn("A", 0));
    assertEquals(1, g.score("C"));
    assertEquals(2, g.f.vocabulary("hub").otherCount());
    assertEquals(4, g.f.dimension());
    assertEquals(4, g.f.maxDimension());
  }

  @Test void expiryAndAdmissionInOneRecord_reportRemovalsFirst() {
    Rig g = new Rig(", max_levels: 2, expire_after_records: 1");
    g.learn("A", 0); // 1
    g.learn("B", 0); // 2
    g.learn("C", 0); // 3: A missed 2 > 1 -> removed; C admitted (room again)
    assertEquals(List.of("add 2 hub=A", "add 3 hub=B", "remove 2 hub=A", "add 3 hub=C"), g.l.events);
    g.learn("D", 0); // 4: B missed 2 -> removed; D admitted
    assertEquals(List.of("remove 2 hub=B", "add 3 hub=D"), g.l.events.subList(4, 6));
    assertEquals(List.of("constant", "hub=(other)", "hub=C", "hub=D"), g.f.columnNames());
    assertEquals(6, g.f.layoutVersion());
  }

  @Test void millionDistinctStrings_keepRetainedSizeBounded() {
    // Bound stated here: at most max_levels = 1000 levels and, with min_count 2, at most
    // candidateCapacity() = 2000 candidates; each retained entry costs about 200 bytes
    // (level/candidate object ~56, hash node ~32, table slot ~8, the ~10-char key ~56, link share),
    // so the retained size is under 3000 * 200 B = 600 kB whatever the input.
    for (int minCount : new int[] {1, 2}) {
      Rig g = new Rig(", max_levels: 1000, min_count: " + minCount);
      MemoryMXBean mem = ManagementFactory.getMemoryMXBean();
      System.gc();
      long before = mem.getHeapMemoryUsage().getUsed();
      if (minCount == 2) {
        // fill the vocabulary first: 1000 levels seen twice each
        for (int i = 0; i < 2000; i++) {
          g.r.clear();
          g.r.setText(0, "hot-" + (i / 2));
          g.r.setNumber(1, 1.0);
          g.f.learnAndEncode(g.r, i, i, g.row);
        }
      }
      for (int i = 0; i < 1_000_000; i++) {
        g.r.clear();
        g.r.setText(0, "level-" + i);
        g.r.setNumber(1, 1.0);
        g.f.learnAndEncode(g.r, i, i, g.row);
      }
      RollingVocabulary v = g.f.vocabulary("hub");
      assertEquals(1000, v.size());
      assertEquals(minCount == 1 ? 0 : 2000, v.candidateCapacity());
      assertEquals(v.candidateCapacity(), v.candidateCount(), "the candidate table is full but no larger");
      long retained = v.size() + v.candidateCount();
      assertTrue(retained <= 3000, "retained entries " + retained);
      assertEquals(1001 + 1, g.f.dimension());
      System.gc();
      long after = mem.getHeapMemoryUsage().getUsed();
      // Unbounded, 10^6 entries would retain over 100 MB; allow generous slack for GC noise.
      assertTrue(after - before < 32L * 1024 * 1024, "heap grew by " + (after - before) + " bytes");
      g.l.events.clear();
    }
  }
}
