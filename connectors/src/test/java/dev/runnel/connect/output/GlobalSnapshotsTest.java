package dev.runnel.connect.output;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * The one model followed through the snapshots of 4 partitions in {@code model.scope: global}, made by real pipeline
 * steps that share and fold ({@link GlobalViewsFeed}): one point per snapshot time, the view that took in the most
 * shares as the model, the partition that stopped folding named as differing and the others not, whatever the order
 * the partitions' snapshots are read in.
 */
class GlobalSnapshotsTest {

  static final GlobalViewsFeed FEED = GlobalViewsFeed.run();

  static List<GlobalSnapshots.Point> follow(List<JsonNode> order) {
    GlobalSnapshots g = new GlobalSnapshots();
    List<GlobalSnapshots.Point> out = new ArrayList<>();
    for (JsonNode s : order) {
      out.addAll(g.take(s));
    }
    out.addAll(g.flush());
    return out;
  }

  @Test
  void onePointPerSnapshotTimeWithTheViewThatTookInTheMostSharesAsTheModel() {
    List<String> times = FEED.times();
    assertEquals(GlobalViewsFeed.PARTITIONS * times.size(), FEED.snapshots.size(), "every partition publishes at every time");
    assertTrue(times.size() >= 10, times.toString());
    List<GlobalSnapshots.Point> pts = follow(FEED.snapshots);
    assertEquals(times.size(), pts.size(), "one point per time, not one per partition");
    for (int i = 0; i < pts.size(); i++) {
      GlobalSnapshots.Point pt = pts.get(i);
      assertFalse(pt.late());
      assertEquals(times.get(i), pt.model().path("event_time").asText());
      assertEquals(List.of(0, 1, 2, 3), pt.members());
      // the rule, from the published counts: most shares made + folded, the lowest partition of equals
      int best = -1;
      long most = -1;
      for (int p = 0; p < GlobalViewsFeed.PARTITIONS; p++) {
        JsonNode g = FEED.at(p, times.get(i)).path("global_model");
        long taken = g.path("shares_made").asLong() + g.path("shares_folded").asLong();
        if (taken > most) {
          most = taken;
          best = p;
        }
      }
      assertEquals(best, pt.model().path("partition").asInt(), times.get(i));
    }
    // the model's columns: its own and every hub the other partitions hold (16 hubs, 4 per partition)
    JsonNode last = pts.get(pts.size() - 1).model();
    for (int h = 0; h < 16; h++) {
      String name = "hub=H" + h;
      assertTrue(names(last).contains(name), name + " in " + names(last));
    }
  }

  @Test
  void thePartitionThatStoppedFoldingIsNamedAndTheOthersAgree() {
    List<GlobalSnapshots.Point> pts = follow(FEED.snapshots);
    GlobalSnapshots.Point last = pts.get(pts.size() - 1);
    assertTrue(last.model().path("partition").asInt() != GlobalViewsFeed.BEHIND, "the view behind is not the model");
    String time = last.model().path("event_time").asText();
    double[] model = GlobalViewsFeed.column(last.model(), "price");
    // the scenario: partition 3's price weight is far from the model's (its own records say -30, the rest -10)
    double[] behind = GlobalViewsFeed.column(FEED.at(GlobalViewsFeed.BEHIND, time), "price");
    assertTrue(Math.abs(behind[0] - model[0]) > 3 * model[1], behind[0] + " vs " + model[0] + " ± " + model[1]);
    assertEquals(4, last.views().size());
    for (GlobalSnapshots.View v : last.views()) {
      if (v.partition() == GlobalViewsFeed.BEHIND) {
        assertTrue(v.differs());
        GlobalSnapshots.Difference d = v.differences().stream().filter(x -> x.column().equals("price")).findFirst().orElseThrow();
        assertEquals(behind[0] - model[0], d.difference(), 1e-12);
        assertEquals((behind[0] - model[0]) / model[1], d.inStdErrors(), 1e-9);
      } else {
        // every column of the views that fold everything within one standard error of the model's
        assertFalse(v.differs(), "partition " + v.partition() + ": " + v.differences());
        JsonNode s = FEED.at(v.partition(), time);
        for (String name : names(s)) {
          double[] w = GlobalViewsFeed.column(s, name);
          double[] m = GlobalViewsFeed.column(last.model(), name);
          assertTrue(Math.abs(w[0] - m[0]) <= m[1], v.partition() + " " + name);
        }
      }
    }
    // before the cut every view folded everything: no partition differs at the first day's points
    for (GlobalSnapshots.Point pt : pts.subList(1, 4)) {
      assertTrue(pt.differing().isEmpty(), pt.model().path("event_time") + ": " + pt.differing());
    }
  }

  @Test
  void theSamePointsWhenOnePartitionIsReadAheadOfTheOthers() {
    // as a reader of Kafka may: partition by partition in runs of 5 snapshots, partition 2 entirely last
    List<JsonNode> byPart = new ArrayList<>();
    List<List<JsonNode>> parts = new ArrayList<>();
    for (int p = 0; p < GlobalViewsFeed.PARTITIONS; p++) {
      final int part = p;
      parts.add(FEED.snapshots.stream().filter(s -> s.path("partition").asInt() == part).toList());
    }
    int n = parts.get(0).size();
    for (int from = 0; from < n; from += 5) {
      for (int p : new int[] {0, 1, 3}) {
        byPart.addAll(parts.get(p).subList(from, Math.min(n, from + 5)));
      }
    }
    byPart.addAll(parts.get(2));
    List<GlobalSnapshots.Point> a = follow(FEED.snapshots);
    List<GlobalSnapshots.Point> b = follow(byPart);
    assertEquals(a.size(), b.size());
    for (int i = 0; i < a.size(); i++) {
      assertEquals(a.get(i).model(), b.get(i).model(), "point " + i);
      assertEquals(a.get(i).differing().stream().map(GlobalSnapshots.View::partition).toList(),
          b.get(i).differing().stream().map(GlobalSnapshots.View::partition).toList(), "point " + i);
    }
  }

  @Test
  void aQuietPartitionHoldsTheTimesItHasNotReachedUntilTheReaderSettles() {
    List<String> times = FEED.times();
    String cut = times.get(times.size() - 3);
    GlobalSnapshots g = new GlobalSnapshots();
    List<GlobalSnapshots.Point> pts = new ArrayList<>();
    List<JsonNode> later = new ArrayList<>();
    for (JsonNode s : FEED.snapshots) {
      if (s.path("partition").asInt() == 1 && s.path("event_time").asText().compareTo(cut) >= 0) {
        later.add(s); // partition 1 publishes its last 3 snapshots only after the reader caught up
      } else {
        pts.addAll(g.take(s));
      }
    }
    assertEquals(times.size() - 3, pts.size(), "the times partition 1 has not reached wait for it");
    List<GlobalSnapshots.Point> settled = g.settle();
    assertEquals(2, settled.size(), "all but the newest");
    for (GlobalSnapshots.Point pt : settled) {
      assertEquals(List.of(0, 2, 3), pt.members());
      // partition 1's view compared is its latest not after the point: the one before the cut
      GlobalSnapshots.View v1 = pt.views().stream().filter(v -> v.partition() == 1).findFirst().orElseThrow();
      assertEquals(times.get(times.size() - 4), v1.snapshot().path("event_time").asText());
    }
    assertEquals(times.get(times.size() - 1), g.current().model().path("event_time").asText(), "the newest is shown");
    // partition 1's snapshots come: the two settled times are late (and it agrees with the model there: nothing back),
    // the newest completes
    List<GlobalSnapshots.Point> after = new ArrayList<>();
    for (JsonNode s : later) {
      after.addAll(g.take(s));
    }
    assertEquals(1, after.size(), after.toString());
    assertFalse(after.get(0).late());
    assertEquals(List.of(0, 1, 2, 3), after.get(0).members());
    assertTrue(g.flush().isEmpty());
  }

  @Test
  void aLateViewThatDiffersComesBackAsALatePointNamingIt() {
    List<String> times = FEED.times();
    String cut = times.get(times.size() - 3);
    GlobalSnapshots g = new GlobalSnapshots();
    List<JsonNode> later = new ArrayList<>();
    for (JsonNode s : FEED.snapshots) {
      if (s.path("partition").asInt() == GlobalViewsFeed.BEHIND && s.path("event_time").asText().compareTo(cut) >= 0) {
        later.add(s);
      } else {
        g.take(s);
      }
    }
    g.settle();
    List<GlobalSnapshots.Point> after = new ArrayList<>();
    for (JsonNode s : later) {
      after.addAll(g.take(s));
    }
    assertEquals(3, after.size(), after.toString());
    for (int i = 0; i < 2; i++) {
      GlobalSnapshots.Point pt = after.get(i);
      assertTrue(pt.late());
      assertEquals(times.get(times.size() - 3 + i), pt.model().path("event_time").asText());
      assertEquals(List.of(GlobalViewsFeed.BEHIND), pt.differing().stream().map(GlobalSnapshots.View::partition).toList());
    }
    assertFalse(after.get(2).late());
  }

  static List<String> names(JsonNode s) {
    List<String> out = new ArrayList<>();
    s.path("columns").forEach(c -> out.add(c.path("name").asText()));
    s.path("global_model").path("other_partitions_columns").forEach(c -> out.add(c.path("name").asText()));
    return out;
  }
}
