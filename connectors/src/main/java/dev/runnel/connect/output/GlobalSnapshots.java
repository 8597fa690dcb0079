package dev.runnel.connect.output;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.node.ArrayNode;
import com.fasterxml.jackson.databind.node.JsonNodeFactory;
import com.fasterxml.jackson.databind.node.ObjectNode;
import java.time.Instant;
import java.time.format.DateTimeParseException;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;
import java.util.TreeSet;

/**
 * The one model of a {@code model.scope: global} pipeline, followed through the snapshots its partitions publish
 * (each partition publishes its own view of the model: its own columns with the view's weights and a
 * {@code global_model} part, docs/formats.md). Used by the live page and the {@code drift} verb, so that four
 * partitions give one answer, not four.
 *
 * <p>The rules (docs/operations.md, "Scaling"):
 * <ul>
 *   <li><b>Points.</b> Snapshots are grouped by event time; the group at time T is complete (a point of the model's
 *       history) once every partition known so far has published a snapshot at T or later (a partition is known when
 *       it published, or when another partition's {@code last_folded} names it), or when more than
 *       {@link #MAX_PENDING} snapshots wait, or, for a reader that has caught up with the topic, when a later time
 *       has a snapshot ({@link #settle()}). With {@code outputs.snapshot_every} every partition publishes at the end of
 *       each period, so a group holds one snapshot per partition; every N records, the groups are the single snapshots,
 *       in event-time order.</li>
 *   <li><b>The model</b> at a point is the group's view that has taken in the most shares (its {@code shares_made}
 *       plus {@code shares_folded}; the lowest partition number of equals), with its own columns and the columns only
 *       other partitions hold ({@code other_partitions_columns}).</li>
 *   <li><b>A view differs</b> when one of its columns' raw weight is more than {@link #DIFFER_SE} of the model's
 *       standard errors away from the model's: views that have folded the same shares agree to rounding, and a share
 *       not yet folded moves a weight by a fraction of its standard error. Each partition's view compared is its
 *       latest snapshot not after the point.</li>
 *   <li><b>Alarms</b> of the group's views are reported once per kind, column and direction, with the partitions that
 *       raised them ({@code partitions}) and the earliest {@code fired_at}.</li>
 *   <li>A snapshot older than the last point (a partition read late) is not a point; it is compared with the model at
 *       its time when that point is still kept ({@link #KEPT_POINTS}), and returned as a late view when it differs.</li>
 * </ul>
 *
 * <p>One thread. Snapshots of one partition must come in their offset order.
 */
public final class GlobalSnapshots {

  /** A view differs from the model when a raw weight is more than this many of the model's standard errors away. */
  public static final double DIFFER_SE = 1.0;
  /** Snapshots waiting for a partition behind before the oldest group is taken as complete anyway. */
  public static final int MAX_PENDING = 2000;
  /** Points kept to compare late snapshots with. */
  public static final int KEPT_POINTS = 64;

  private static final JsonNodeFactory F = JsonNodeFactory.instance;

  /** One column of a view whose raw weight is more than {@link #DIFFER_SE} model standard errors from the model's. */
  public record Difference(String column, double weight, double modelWeight, double modelStdError) {
    /** The view's raw weight minus the model's. */
    public double difference() {
      return weight - modelWeight;
    }

    /** {@link #difference()} in the model's standard errors. */
    public double inStdErrors() {
      return difference() / modelStdError;
    }
  }

  /**
   * One partition's view compared with the model.
   *
   * @param partition the partition
   * @param snapshot its latest snapshot not after the point. Not modified.
   * @param model whether this view is the model
   * @param differences its columns that differ, the largest first; empty when it agrees
   */
  public record View(int partition, JsonNode snapshot, boolean model, List<Difference> differences) {
    /** Whether any column differs. */
    public boolean differs() {
      return !differences.isEmpty();
    }
  }

  /**
   * The model at one event time.
   *
   * @param eventTimeMillis the point's event time
   * @param model the model's snapshot: the chosen view's snapshot with the other partitions' columns added to
   *     {@code columns} and the group's alarms merged (each with {@code partitions}); a new object
   * @param members the partitions that published at this time, ascending
   * @param views every known partition's view, by partition; for a late point, the late view alone
   * @param late true for a snapshot read after its point was complete (returned only when it differs)
   */
  public record Point(long eventTimeMillis, ObjectNode model, List<Integer> members, List<View> views, boolean late) {
    /** The views that differ from the model. */
    public List<View> differing() {
      List<View> out = new ArrayList<>();
      for (View v : views) {
        if (v.differs()) {
          out.add(v);
        }
      }
      return out;
    }
  }

  private final TreeSet<Integer> known = new TreeSet<>();
  private final Map<Integer, Long> newestTime = new HashMap<>();
  private final TreeMap<Long, TreeMap<Integer, JsonNode>> pending = new TreeMap<>();
  private int pendingCount;
  private final TreeMap<Integer, JsonNode> latestByPartition = new TreeMap<>();
  private final LinkedHashMap<Long, ObjectNode> kept = new LinkedHashMap<>();
  private Long lastPoint;
  private Point lastEmitted;

  /** Whether a snapshot is of a {@code model.scope: global} pipeline (it has a {@code global_model} part). */
  public static boolean isGlobal(JsonNode s) {
    return s.path("global_model").isObject();
  }

  /**
   * Takes the next snapshot of one partition.
   *
   * @param s a snapshot with a {@code global_model} part. Not modified (kept).
   * @return the points completed by it, in event-time order, or a late point when it is an older view that differs;
   *     often empty
   */
  public List<Point> take(JsonNode s) {
    int p = s.path("partition").asInt();
    long t = timeOf(s);
    known.add(p);
    s.path("global_model").path("last_folded").fieldNames().forEachRemaining(k -> {
      try {
        known.add(Integer.parseInt(k));
      } catch (NumberFormatException e) {
        // not a partition number: ignored
      }
    });
    if (lastPoint != null && t <= lastPoint) {
      JsonNode before = latestByPartition.get(p);
      if (before == null || timeOf(before) <= t) {
        latestByPartition.put(p, s);
      }
      ObjectNode model = kept.get(t);
      if (model == null || model.path("partition").asInt() == p) {
        return List.of();
      }
      View v = compare(p, s, model);
      return v.differs() ? List.of(new Point(t, model, List.of(p), List.of(v), true)) : List.of();
    }
    if (pending.computeIfAbsent(t, k -> new TreeMap<>()).put(p, s) == null) {
      pendingCount++;
    }
    newestTime.merge(p, t, Math::max);
    List<Point> out = new ArrayList<>();
    while (!pending.isEmpty() && (complete(pending.firstKey()) || pendingCount > MAX_PENDING)) {
      out.add(emit());
    }
    return out;
  }

  /**
   * Takes every waiting group but the newest as complete: for a reader that has read all that was published so far
   * (a poll of a followed topic came back empty), so a partition that has not reached an older time is behind in
   * publishing (it had no records), not in reading, and the model's history need not wait for it; its snapshots of
   * those times come late.
   *
   * @return the points, in event-time order
   */
  public List<Point> settle() {
    List<Point> out = new ArrayList<>();
    while (pending.size() > 1) {
      out.add(emit());
    }
    return out;
  }

  /** Takes every waiting group as complete (the end of a file or topic). @return the points, in event-time order */
  public List<Point> flush() {
    List<Point> out = new ArrayList<>();
    while (!pending.isEmpty()) {
      out.add(emit());
    }
    return out;
  }

  /**
   * The model now: the newest group's point, complete or not (every known partition's view compared at its newest
   * snapshot not after it), or null before any snapshot. Changes nothing.
   */
  public Point current() {
    if (pending.isEmpty()) {
      return lastEmitted;
    }
    Map.Entry<Long, TreeMap<Integer, JsonNode>> newest = pending.lastEntry();
    TreeMap<Integer, JsonNode> views = new TreeMap<>(latestByPartition);
    for (TreeMap<Integer, JsonNode> g : pending.values()) {
      views.putAll(g);
    }
    return point(newest.getKey(), newest.getValue(), views);
  }

  /** Partitions known so far, ascending. */
  public List<Integer> partitions() {
    return List.copyOf(known);
  }

  private boolean complete(long t) {
    for (int q : known) {
      Long n = newestTime.get(q);
      if (n == null || n < t) {
        return false;
      }
    }
    return true;
  }

  private Point emit() {
    Map.Entry<Long, TreeMap<Integer, JsonNode>> e = pending.pollFirstEntry();
    pendingCount -= e.getValue().size();
    latestByPartition.putAll(e.getValue());
    Point pt = point(e.getKey(), e.getValue(), latestByPartition);
    lastPoint = e.getKey();
    lastEmitted = pt;
    kept.put(e.getKey(), pt.model());
    if (kept.size() > KEPT_POINTS) {
      kept.remove(kept.keySet().iterator().next());
    }
    return pt;
  }

  /** The point of one group; {@code views}: each partition's view to compare (its latest not after the point). */
  private static Point point(long t, TreeMap<Integer, JsonNode> group, TreeMap<Integer, JsonNode> views) {
    int ref = -1;
    long most = Long.MIN_VALUE;
    for (Map.Entry<Integer, JsonNode> m : group.entrySet()) {
      JsonNode g = m.getValue().path("global_model");
      long taken = g.path("shares_made").asLong(0) + g.path("shares_folded").asLong(0);
      if (taken > most) {
        most = taken;
        ref = m.getKey();
      }
    }
    ObjectNode model = modelOf(group.get(ref), group);
    List<View> vs = new ArrayList<>();
    for (Map.Entry<Integer, JsonNode> v : views.entrySet()) {
      if (v.getKey() == ref) {
        vs.add(new View(ref, group.get(ref), true, List.of()));
      } else if (timeOf(v.getValue()) <= t) {
        vs.add(compare(v.getKey(), v.getValue(), model));
      }
    }
    return new Point(t, model, List.copyOf(group.keySet()), vs, false);
  }

  /** The model's snapshot: the chosen view with the columns only others hold, and the group's alarms merged. */
  private static ObjectNode modelOf(JsonNode chosen, TreeMap<Integer, JsonNode> group) {
    ObjectNode m = ((ObjectNode) chosen).deepCopy();
    ArrayNode cols = m.putArray("columns");
    chosen.path("columns").forEach(c -> cols.add(c.deepCopy()));
    for (JsonNode c : chosen.path("global_model").path("other_partitions_columns")) {
      ObjectNode o = ((ObjectNode) c).deepCopy();
      o.put("other_partitions", true);
      if (!o.has("drift_score")) {
        o.putNull("drift_score");
      }
      cols.add(o);
    }
    LinkedHashMap<String, ObjectNode> alarms = new LinkedHashMap<>();
    for (Map.Entry<Integer, JsonNode> g : group.entrySet()) {
      for (JsonNode a : g.getValue().path("alarms")) {
        String key = a.path("kind").asText() + "|" + a.path("column").asText("") + "|" + a.path("direction").asText();
        ObjectNode merged = alarms.get(key);
        if (merged == null) {
          merged = ((ObjectNode) a).deepCopy();
          merged.putArray("partitions");
          alarms.put(key, merged);
        } else if (earlier(a.path("fired_at").asText(""), merged.path("fired_at").asText(""))) {
          ArrayNode parts = (ArrayNode) merged.get("partitions");
          merged.removeAll();
          merged.setAll((ObjectNode) a.deepCopy());
          merged.set("partitions", parts);
        }
        ((ArrayNode) merged.get("partitions")).add(g.getKey());
      }
    }
    ArrayNode al = m.putArray("alarms");
    alarms.values().forEach(al::add);
    return m;
  }

  /** A view against the model: its own and its others' columns whose raw weights differ by more than {@link #DIFFER_SE}. */
  private static View compare(int partition, JsonNode view, JsonNode model) {
    Map<String, JsonNode> byName = new HashMap<>();
    for (JsonNode c : model.path("columns")) {
      byName.put(c.path("name").asText(), c);
    }
    List<Difference> out = new ArrayList<>();
    List<JsonNode> cols = new ArrayList<>();
    view.path("columns").forEach(cols::add);
    view.path("global_model").path("other_partitions_columns").forEach(cols::add);
    java.util.Set<String> seen = new java.util.HashSet<>();
    for (JsonNode c : cols) {
      String name = c.path("name").asText();
      JsonNode mc = byName.get(name);
      if (mc == null || !seen.add(name) || !c.path("raw_weight").isNumber() || !mc.path("raw_weight").isNumber()
          || !mc.path("raw_std_error").isNumber()) {
        continue;
      }
      double se = mc.path("raw_std_error").asDouble();
      double w = c.path("raw_weight").asDouble();
      double wm = mc.path("raw_weight").asDouble();
      if (se > 0 && Double.isFinite(se) && Math.abs(w - wm) > DIFFER_SE * se) {
        out.add(new Difference(name, w, wm, se));
      }
    }
    out.sort((a, b) -> Double.compare(Math.abs(b.inStdErrors()), Math.abs(a.inStdErrors())));
    return new View(partition, view, false, List.copyOf(out));
  }

  private static boolean earlier(String a, String b) {
    try {
      return Instant.parse(a).isBefore(Instant.parse(b));
    } catch (DateTimeParseException e) {
      return false;
    }
  }

  /** A snapshot's event time in epoch milliseconds; {@code Long.MIN_VALUE} when it has none. */
  public static long timeOf(JsonNode s) {
    try {
      return Instant.parse(s.path("event_time").asText()).toEpochMilli();
    } catch (DateTimeParseException e) {
      return Long.MIN_VALUE;
    }
  }

  /** The point's views as JSON for {@code /api/state}'s {@code global_model} (docs/formats.md). */
  public static ObjectNode json(Point pt, List<Integer> partitions) {
    ObjectNode o = F.objectNode();
    o.put("scope", "global");
    ArrayNode ps = o.putArray("partitions");
    partitions.forEach(ps::add);
    o.put("model_partition", pt.model().path("partition").asInt());
    o.set("event_time", pt.model().path("event_time"));
    o.put("differ_std_errors", DIFFER_SE);
    ArrayNode vs = o.putArray("views");
    for (View v : pt.views()) {
      ObjectNode vo = vs.addObject();
      vo.put("partition", v.partition());
      vo.set("index", v.snapshot().path("index"));
      vo.set("event_time", v.snapshot().path("event_time"));
      vo.set("shares_made", v.snapshot().path("global_model").path("shares_made"));
      vo.set("shares_folded", v.snapshot().path("global_model").path("shares_folded"));
      vo.put("model", v.model());
      vo.put("differs", v.differs());
      ArrayNode ds = vo.putArray("differences");
      for (Difference d : v.differences()) {
        ObjectNode d0 = ds.addObject();
        d0.put("column", d.column());
        d0.put("raw_weight", d.weight());
        d0.put("model_raw_weight", d.modelWeight());
        d0.put("difference", d.difference());
        d0.put("std_errors", d.inStdErrors());
      }
    }
    return o;
  }
}
