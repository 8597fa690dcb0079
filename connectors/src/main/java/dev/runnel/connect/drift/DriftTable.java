package dev.runnel.connect.drift;

import com.fasterxml.jackson.databind.JsonNode;
import dev.runnel.connect.output.GlobalSnapshots;
import dev.runnel.connect.text.TerminalText;
import java.time.Instant;
import java.time.format.DateTimeParseException;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;

/**
 * Turns coefficient snapshots (the JSON of {@code <name>.coefficients}, in offset order per
 * partition) into one compact line each: time, index, noise sd, prequential error, the weights that
 * moved most since the baseline in standard errors, and the raised alarms; for a pipeline with
 * {@code input.forecast}, the settled forecasts' errors by horizon under it ({@link HorizonTable}). One thread.
 *
 * <p>The score is the pipeline's own: {@code (w − w_b) / √(se² + se_b²)} on raw-unit weights.
 * With the baseline {@code pipeline}, the snapshot's own {@code drift_score} (against the configured
 * {@code drift.baseline}) is shown as published.
 */
public final class DriftTable {

  /** A bound or a baseline given as a snapshot index or an ISO 8601 time. */
  public record Point(long index, Instant time) {
    /**
     * @param text a whole number (a snapshot index) or an ISO 8601 instant such as 2026-02-01T00:00:00Z
     * @param option the option's name for the message
     * @throws IllegalArgumentException if it is neither
     */
    public static Point parse(String text, String option) {
      if (text.matches("\\d{1,18}")) {
        return new Point(Long.parseLong(text), null);
      }
      try {
        return new Point(-1, Instant.parse(text));
      } catch (DateTimeParseException e) {
        throw new IllegalArgumentException(option + ": \"" + text + "\" is not allowed; use a snapshot index (a whole"
            + " number) or an ISO 8601 time such as 2026-02-01T00:00:00Z");
      }
    }

    boolean reachedBy(JsonNode s) {
      return time == null ? s.path("index").asLong(-1) >= index : !timeOf(s).isBefore(time);
    }

    boolean passedBy(JsonNode s) {
      return time == null ? s.path("index").asLong(-1) > index : timeOf(s).isAfter(time);
    }
  }

  private final String baseline;
  private final Point baselinePoint;
  private final int top;
  private final Point from;
  private final Point to;
  private final Map<Integer, Map<String, JsonNode>> first = new HashMap<>();
  private final Map<Integer, JsonNode> previous = new HashMap<>();
  private final Map<Integer, JsonNode> chosen = new HashMap<>();
  /** The key of the one model's history in the maps above ({@code model.scope: global}). */
  private static final int MODEL = Integer.MIN_VALUE;
  private GlobalSnapshots global;

  /**
   * @param baseline {@code pipeline}, {@code first}, {@code previous}, a snapshot index or an ISO 8601 time
   * @param top how many moved weights to show per snapshot, at least 1
   * @param from first snapshot to print, or null
   * @param to last snapshot to print, or null
   * @throws IllegalArgumentException if {@code baseline} or {@code top} is not allowed
   */
  public DriftTable(String baseline, int top, Point from, Point to) {
    if (top < 1 || top > 1000) {
      throw new IllegalArgumentException("--top: " + top + " is not allowed; use a whole number from 1 to 1000");
    }
    this.baseline = baseline;
    this.baselinePoint = switch (baseline) {
      case "pipeline", "first", "previous" -> null;
      default -> Point.parse(baseline, "--baseline");
    };
    this.top = top;
    this.from = from;
    this.to = to;
  }

  /** The column header. */
  public static String header() {
    return String.format(Locale.ROOT, "%-5s %-17s %4s %8s %10s %11s  %s", "snap", "event time (UTC)", "part", "noise_sd",
        "recent_MAE", "recent_RMSE", "moved most since the baseline (raw units, score in standard errors) | alarms");
  }

  /** Whether a snapshot is past {@code --to} (a follower can stop). */
  public boolean pastEnd(JsonNode s) {
    return to != null && to.passedBy(s);
  }

  /**
   * Takes the next snapshot.
   *
   * @param s a snapshot. Not modified.
   * @return the line to print (control characters from the data escaped, see {@link TerminalText}),
   *     or null when it is outside {@code --from}/{@code --to}
   */
  public String take(JsonNode s) {
    if (GlobalSnapshots.isGlobal(s)) {
      if (global == null) {
        global = new GlobalSnapshots();
      }
      return lines(global.take(s));
    }
    return line(s, s.path("partition").asInt(), null);
  }

  /**
   * The lines still held at the end of the input: with {@code model.scope: global}, the model's points whose snapshot
   * time not every partition had reached ({@link GlobalSnapshots}). Call once when the input ends.
   *
   * @return the lines, or null when none are held
   */
  public String finish() {
    return global == null ? null : lines(global.flush());
  }

  /**
   * With {@code model.scope: global}, for a follower that has read everything published so far: the lines of every
   * held time but the newest ({@link GlobalSnapshots#settle()}); a partition that has not reached them is behind in
   * publishing and its views of them come as late lines.
   *
   * @return the lines, or null when none
   */
  public String settle() {
    return global == null ? null : lines(global.settle());
  }

  /** One line per point of the one model (its views' differences after it); late views that differ on a line of their own. */
  private String lines(List<GlobalSnapshots.Point> points) {
    StringBuilder out = new StringBuilder();
    for (GlobalSnapshots.Point pt : points) {
      String l = pt.late() ? lateLine(pt) : line(pt.model(), MODEL, pt);
      if (l != null) {
        out.append(out.length() == 0 ? "" : "\n").append(l);
      }
    }
    return out.length() == 0 ? null : out.toString();
  }

  private String lateLine(GlobalSnapshots.Point pt) {
    JsonNode m = pt.model();
    if ((from != null && !from.reachedBy(m)) || (to != null && to.passedBy(m))) {
      return null;
    }
    StringBuilder sb = new StringBuilder(String.format(Locale.ROOT, "%-5s %-17s %4s  ", "late",
        shortTime(m.path("event_time").asText("")), "-"));
    appendViews(sb, pt.views(), "a view read after its time");
    return TerminalText.safe(sb);
  }

  /** " | views: ..." for one point: the partitions whose view differs, by how much, or that all agree. */
  private static void appendViews(StringBuilder sb, List<GlobalSnapshots.View> views, String lead) {
    List<GlobalSnapshots.View> differ = new ArrayList<>();
    for (GlobalSnapshots.View v : views) {
      if (v.differs()) {
        differ.add(v);
      }
    }
    sb.append("  | ").append(lead).append(": ");
    if (differ.isEmpty()) {
      sb.append(String.format(Locale.ROOT, "%d agree within %.1f se", views.size(), GlobalSnapshots.DIFFER_SE));
      return;
    }
    for (int i = 0; i < differ.size(); i++) {
      GlobalSnapshots.View v = differ.get(i);
      sb.append(i == 0 ? "" : "; ").append("part ").append(v.partition()).append(" differs: ");
      List<GlobalSnapshots.Difference> ds = v.differences();
      for (int j = 0; j < Math.min(3, ds.size()); j++) {
        GlobalSnapshots.Difference d = ds.get(j);
        sb.append(j == 0 ? "" : ", ").append(d.column()).append(' ').append(sig(d.weight())).append(" vs ")
            .append(sig(d.modelWeight())).append(String.format(Locale.ROOT, " (%+.1f se)", d.inStdErrors()));
      }
      if (ds.size() > 3) {
        sb.append(", ").append(ds.size() - 3).append(" more");
      }
    }
  }

  /**
   * One snapshot's line.
   *
   * @param key the history it belongs to: its partition, or {@link #MODEL} for the one model of a global pipeline
   * @param point with {@code model.scope: global}, the model's point (its views follow the line); null otherwise
   */
  private String line(JsonNode s, int key, GlobalSnapshots.Point point) {
    int part = key;
    int shown = s.path("partition").asInt();
    JsonNode prev = previous.put(part, s);
    if (baselinePoint != null && !chosen.containsKey(part) && baselinePoint.reachedBy(s)) {
      chosen.put(part, s);
    }
    if ((from != null && !from.reachedBy(s)) || (to != null && to.passedBy(s))) {
      return null;
    }
    // "first": per column, the first snapshot in which it had a finite weight and standard error
    Map<String, JsonNode> firstCols = first.computeIfAbsent(part, k -> new HashMap<>());
    JsonNode base = switch (baseline) {
      case "pipeline", "first" -> null;
      case "previous" -> prev;
      default -> chosen.get(part);
    };
    StringBuilder sb = new StringBuilder(String.format(Locale.ROOT, "%-5d %-17s %4d %8s %10s %11s  ",
        s.path("index").asLong(-1), shortTime(s.path("event_time").asText("")), shown, num(s.path("noise_sd")),
        num(s.path("metrics").path("recent").path("mae")), num(s.path("metrics").path("recent").path("rmse"))));
    List<double[]> scores = new ArrayList<>();
    List<String> texts = new ArrayList<>();
    Map<String, JsonNode> before = baseline.equals("first") ? new HashMap<>(firstCols) : new HashMap<>();
    if (base != null) {
      for (JsonNode c : base.path("columns")) {
        before.put(c.path("name").asText(), c);
      }
    }
    for (JsonNode c : s.path("columns")) {
      String name = c.path("name").asText();
      double score;
      double w0;
      if (baseline.equals("pipeline")) {
        if (!c.path("drift_score").isNumber()) {
          continue;
        }
        score = c.path("drift_score").asDouble();
        w0 = Double.NaN;
      } else {
        JsonNode b = before.get(name);
        if (b == null || base == s || !isNum(b, "raw_weight") || !isNum(c, "raw_weight")) {
          continue;
        }
        double se = c.path("raw_std_error").asDouble(Double.NaN);
        double seb = b.path("raw_std_error").asDouble(Double.NaN);
        double den = Math.sqrt(se * se + seb * seb);
        if (!(den > 0)) {
          continue;
        }
        w0 = b.path("raw_weight").asDouble();
        score = (c.path("raw_weight").asDouble() - w0) / den;
      }
      scores.add(new double[] {Math.abs(score), texts.size()});
      double w = c.path("raw_weight").asDouble(Double.NaN);
      texts.add(Double.isNaN(w0)
          ? String.format(Locale.ROOT, "%s %s (%+.1f)", name, sig(w), score)
          : String.format(Locale.ROOT, "%s %s→%s (%+.1f)", name, sig(w0), sig(w), score));
    }
    if (s.path("ready").asBoolean(false)) {
      for (JsonNode c : s.path("columns")) {
        if (c.path("raw_weight").isNumber() && c.path("raw_std_error").isNumber()) {
          firstCols.putIfAbsent(c.path("name").asText(), c);
        }
      }
    }
    scores.sort((x, y) -> Double.compare(y[0], x[0]));
    if (scores.isEmpty()) {
      boolean waiting = base == null && !baseline.equals("pipeline") && !baseline.equals("first");
      sb.append(waiting ? "(before the baseline)" : "(no scores yet)");
    }
    for (int i = 0; i < Math.min(top, scores.size()); i++) {
      if (i > 0) {
        sb.append(", ");
      }
      sb.append(texts.get((int) scores.get(i)[1]));
    }
    appendContrasts(sb, s.path("contrasts"));
    JsonNode alarms = s.path("alarms");
    if (alarms.size() > 0) {
      sb.append("  | ALARM");
      for (JsonNode a : alarms) {
        sb.append(' ');
        String kind = a.path("kind").asText();
        if (kind.equals("weight")) {
          sb.append(a.path("column").asText()).append(' ').append(a.path("direction").asText());
        } else if (kind.equals("changed_weight") || kind.equals("weight_break")) {
          // the column the before/after comparison (or the weight-break scan) named: weight before → after, z in standard errors
          double z = a.path("score").asDouble(Double.NaN) * (a.path("direction").asText().equals("down") ? -1 : 1);
          sb.append(kind.equals("weight_break") ? "BREAK " : "CHANGED ").append(a.path("column").asText()).append(' ')
              .append(sig(a.path("baseline_value").asDouble(Double.NaN))).append("→")
              .append(sig(a.path("current_value").asDouble(Double.NaN)))
              .append(String.format(Locale.ROOT, " (%+.1f)", z));
        } else {
          sb.append("error level ").append(a.path("direction").asText()).append(" at ")
              .append(shortTime(a.path("fired_at").asText("")));
        }
        JsonNode by = a.path("partitions");
        if (point != null && by.isArray() && by.size() < point.members().size()) {
          // the one model's alarm, raised by some views only: name them
          sb.append(" (part");
          by.forEach(x -> sb.append(' ').append(x.asInt()));
          sb.append(" only)");
        }
        sb.append(';');
      }
      sb.setLength(sb.length() - 1);
    }
    if (point != null) {
      appendViews(sb, point.views(), "views");
    }
    // names and levels come from the data: no control character reaches the terminal
    String line = TerminalText.safe(sb);
    if (HorizonTable.present(s)) {
      // with input.forecast: the settled forecasts' errors by horizon, overall, under the line
      StringBuilder more = new StringBuilder(line);
      for (String l : HorizonTable.lines(s, "      ", 0)) {
        more.append('\n').append(TerminalText.safe(l));
      }
      return more.toString();
    }
    return line;
  }

  /**
   * Per one-hot feature with contrasts in the snapshot (drift.contrast_levels): the three levels
   * furthest from the mean of the levels in standard errors, as {@code level effect±se}.
   */
  private static void appendContrasts(StringBuilder sb, JsonNode contrasts) {
    for (JsonNode c : contrasts) {
      List<JsonNode> levels = new ArrayList<>();
      for (JsonNode l : c.path("levels")) {
        if (l.path("effect").isNumber() && l.path("std_error").isNumber() && l.path("std_error").asDouble() > 0) {
          levels.add(l);
        }
      }
      if (levels.isEmpty()) {
        continue;
      }
      levels.sort((a, b) -> Double.compare(Math.abs(b.path("effect").asDouble() / b.path("std_error").asDouble()),
          Math.abs(a.path("effect").asDouble() / a.path("std_error").asDouble())));
      sb.append("  | ").append(c.path("feature").asText()).append(" vs mean:");
      for (int i = 0; i < Math.min(3, levels.size()); i++) {
        JsonNode l = levels.get(i);
        sb.append(i == 0 ? " " : ", ").append(l.path("level").asText()).append(' ')
            .append(String.format(Locale.ROOT, "%+.3g±%.2g", l.path("effect").asDouble(), l.path("std_error").asDouble()));
      }
    }
  }

  private static Instant timeOf(JsonNode s) {
    try {
      return Instant.parse(s.path("event_time").asText());
    } catch (DateTimeParseException e) {
      return Instant.MIN;
    }
  }

  private static boolean isNum(JsonNode c, String k) {
    return c.path(k).isNumber();
  }

  private static String shortTime(String iso) {
    return iso.length() >= 16 ? iso.substring(0, 16) + "Z" : iso;
  }

  private static String num(JsonNode v) {
    return v.isNumber() ? sig(v.asDouble()) : "-";
  }

  private static String sig(double v) {
    if (Double.isNaN(v)) {
      return "-";
    }
    double a = Math.abs(v);
    return String.format(Locale.ROOT, a >= 100 ? "%.1f" : a >= 1 ? "%.3f" : "%.4f", v);
  }
}
