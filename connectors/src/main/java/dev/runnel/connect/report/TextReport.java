package dev.runnel.connect.report;

import dev.runnel.connect.text.TerminalText;
import dev.runnel.core.evaluate.BacktestResult;
import dev.runnel.core.evaluate.DieboldMariano;
import dev.runnel.core.evaluate.Metrics;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.List;
import java.util.Locale;

/** The backtest report as a plain-text table for the terminal. */
public final class TextReport {

  private TextReport() { }

  /** The configurations sorted by overall RMSE (best first; ties keep the given order). */
  public static List<BacktestResult.VariantResult> ranking(BacktestResult r) {
    List<BacktestResult.VariantResult> vs = new ArrayList<>(r.variants());
    vs.sort(Comparator.comparingDouble(v -> Double.isNaN(v.overall().rmse()) ? Double.MAX_VALUE : v.overall().rmse()));
    return vs;
  }

  /** The report as text, lines ending in \n; labels and levels from the data have their control characters escaped. */
  public static String render(BacktestResult r) {
    StringBuilder sb = new StringBuilder(4096);
    int w = 8;
    for (BacktestResult.VariantResult v : r.variants()) {
      w = Math.max(w, v.label().length());
    }
    String fmt = "%-" + w + "s %10s %10s %10s %10s %9s %10s %9s%n";
    sb.append(String.format(Locale.ROOT, "backtest of %,d records over %d partition(s); prequential (a priori) errors%n%n",
        r.records(), r.partitions()));
    sb.append(String.format(Locale.ROOT, fmt, "config", "scored", "MAE", "RMSE", "bias", "coverage", "rejected", "rank"));
    List<BacktestResult.VariantResult> rank = ranking(r);
    for (BacktestResult.VariantResult v : r.variants()) {
      Metrics m = v.overall();
      sb.append(String.format(Locale.ROOT, fmt, v.label(), String.format(Locale.ROOT, "%,d", m.count()),
          num(m.mae()), num(m.rmse()), num(m.bias()), pct(m.coverage()), String.format(Locale.ROOT, "%,d", v.rejected()),
          String.valueOf(rank.indexOf(v) + 1)));
    }
    for (BacktestResult.VariantResult v : r.variants()) {
      if (!v.rejectsByReason().isEmpty()) {
        sb.append(String.format(Locale.ROOT, "  rejects of %s: %s%n", v.label(), new java.util.TreeMap<>(v.rejectsByReason())));
      }
    }
    sharingLines(sb, r);
    if (r.segmentField() != null && !r.variants().isEmpty()) {
      sb.append(String.format(Locale.ROOT, "%nRMSE per %s%n", r.segmentField()));
      segmentTable(sb, r);
    }
    sb.append(String.format(Locale.ROOT, "%nRMSE per local hour of day%n"));
    sb.append(String.format(Locale.ROOT, "%-6s", "hour"));
    for (BacktestResult.VariantResult v : r.variants()) {
      sb.append(String.format(Locale.ROOT, " %" + Math.max(10, v.label().length()) + "s", v.label()));
    }
    sb.append('\n');
    for (int h = 0; h < 24; h++) {
      sb.append(String.format(Locale.ROOT, "%02d    ", h));
      for (BacktestResult.VariantResult v : r.variants()) {
        sb.append(String.format(Locale.ROOT, " %" + Math.max(10, v.label().length()) + "s", num(v.byHour().get(h).rmse())));
      }
      sb.append('\n');
    }
    if (!r.comparisons().isEmpty()) {
      sb.append(String.format(Locale.ROOT, "%nDiebold–Mariano tests (two-sided; HAC variance, Newey–West Bartlett kernel; "
          + "p from Student t with the Harvey–Leybourne–Newbold correction)%n"));
      sb.append(String.format(Locale.ROOT, "loss difference = first's loss − second's: below zero, the first did better%n"));
      String f2 = "%-" + (2 * w + 4) + "s %-8s %8s %7s %13s %11s %10s%n";
      sb.append(String.format(Locale.ROOT, f2, "first vs second", "loss", "n", "HAC lag", "mean diff.", "statistic", "p"));
      for (BacktestResult.Comparison c : r.comparisons()) {
        for (DieboldMariano.Result t : List.of(c.squared(), c.absolute())) {
          sb.append(String.format(Locale.ROOT, f2, c.a() + " vs " + c.b(), t.loss().id(),
              String.format(Locale.ROOT, "%,d", t.n()), t.lag(), num(t.meanDifference()), num(t.correctedStatistic()),
              pValue(t.correctedPValue())));
        }
      }
      sb.append('\n');
      for (BacktestResult.Comparison c : r.comparisons()) {
        sb.append("  ").append(c.squaredVerdict()).append('\n');
        sb.append("  ").append(c.absoluteVerdict()).append('\n');
      }
    }
    if (!r.horizons().isEmpty()) {
      horizonTables(sb, r, w);
      breakdownTables(sb, r);
    }
    return TerminalText.lines(sb);
  }

  /**
   * One line per configuration with {@code model.scope: global}: shares made and folded, in all and
   * per partition ({@code p0 made/folded}). Nothing when no configuration is global.
   */
  static void sharingLines(StringBuilder sb, BacktestResult r) {
    for (BacktestResult.VariantResult v : r.variants()) {
      BacktestResult.Sharing s = v.sharing();
      if (!s.global()) {
        continue;
      }
      sb.append(String.format(Locale.ROOT, "  model.scope of %s: global, %,d shares made, %,d folded", v.label(),
          s.sharesMade(), s.sharesFolded()));
      if (s.partitions().size() > 1) {
        sb.append(" (made/folded by partition:");
        for (BacktestResult.PartitionShares p : s.partitions()) {
          sb.append(String.format(Locale.ROOT, " p%d %,d/%,d", p.partition(), p.sharesMade(), p.sharesFolded()));
        }
        sb.append(')');
      }
      sb.append('\n');
    }
  }

  /** Errors and tests per horizon of the simulated forecasts. */
  private static void horizonTables(StringBuilder sb, BacktestResult r, int w) {
    sb.append(String.format(Locale.ROOT, "%nErrors by horizon: forecasts simulated h before each actual's target time,"
        + " from what was known then%n"));
    String fmt = "%-9s %-" + w + "s %10s %10s %10s %10s %9s %11s %10s%n";
    sb.append(String.format(Locale.ROOT, fmt, "horizon", "config", "settled", "MAE", "RMSE", "bias", "coverage",
        "not settled", "skipped"));
    for (BacktestResult.HorizonResult h : r.horizons()) {
      String hz = java.time.Duration.ofMillis(h.horizonMillis()).toString();
      for (BacktestResult.HorizonVariant v : h.variants()) {
        Metrics m = v.metrics();
        sb.append(String.format(Locale.ROOT, fmt, hz, v.label(), String.format(Locale.ROOT, "%,d", m.count()),
            num(m.mae()), num(m.rmse()), num(m.bias()), pct(m.coverage()),
            String.format(Locale.ROOT, "%,d", v.notSettled() + v.warmingUp()),
            String.format(Locale.ROOT, "%,d", v.beyondLookahead() + v.notIssued())));
      }
    }
    boolean any = false;
    for (BacktestResult.HorizonResult h : r.horizons()) {
      any |= !h.comparisons().isEmpty();
    }
    if (!any) {
      return;
    }
    sb.append(String.format(Locale.ROOT, "%nDiebold–Mariano tests by horizon (steps k = horizon / mean spacing of the"
        + " compared series; HAC lag at least k − 1)%n"));
    String f2 = "%-9s %-" + (2 * w + 4) + "s %-8s %8s %6s %7s %13s %11s %10s%n";
    sb.append(String.format(Locale.ROOT, f2, "horizon", "first vs second", "loss", "n", "steps", "HAC lag", "mean diff.",
        "statistic", "p"));
    for (BacktestResult.HorizonResult h : r.horizons()) {
      String hz = java.time.Duration.ofMillis(h.horizonMillis()).toString();
      for (BacktestResult.HorizonComparison hc : h.comparisons()) {
        BacktestResult.Comparison c = hc.comparison();
        for (DieboldMariano.Result t : List.of(c.squared(), c.absolute())) {
          sb.append(String.format(Locale.ROOT, f2, hz, c.a() + " vs " + c.b(), t.loss().id(),
              String.format(Locale.ROOT, "%,d", t.n()), t.horizon(), t.lag(), num(t.meanDifference()),
              num(t.correctedStatistic()), pValue(t.correctedPValue())));
        }
      }
    }
    sb.append('\n');
    for (BacktestResult.HorizonResult h : r.horizons()) {
      String hz = java.time.Duration.ofMillis(h.horizonMillis()).toString();
      for (BacktestResult.HorizonComparison hc : h.comparisons()) {
        sb.append("  ").append(hz).append(": ").append(hc.comparison().squaredVerdict()).append('\n');
      }
    }
  }

  /**
   * Where within each horizon the error is: one compact table per horizon, its settled forecasts
   * by entity, by local hour of day (hours with forecasts only) and by period of the target time,
   * five columns per configuration.
   */
  private static void breakdownTables(StringBuilder sb, BacktestResult r) {
    BacktestResult.Breakdown first = r.horizons().get(0).variants().get(0).breakdown();
    List<String> fields = entityFields(r);
    sb.append(String.format(Locale.ROOT, "%nWhere the error is, per horizon: the settled forecasts by %s, by hour of day"
        + " and by %s of the target time (local, in each configuration's time_zone)%n",
        fields.isEmpty() ? "entity (none: no input.forecast)" : String.join(", ", fields) + " (the " + first.topEntities()
            + " with the most; the rest as (other: n))", periodName(first.period())));
    String block = "%9s %9s %9s %9s %9s";
    for (BacktestResult.HorizonResult h : r.horizons()) {
      List<BacktestResult.HorizonVariant> vs = h.variants();
      int kw = 12;
      for (BacktestResult.HorizonVariant v : vs) {
        for (BacktestResult.EntityGroup g : v.breakdown().byEntity()) {
          kw = Math.max(kw, rowLabel(g).length() + 2);
        }
      }
      String hz = java.time.Duration.ofMillis(h.horizonMillis()).toString();
      StringBuilder head = new StringBuilder(String.format(Locale.ROOT, "%-" + kw + "s", hz));
      for (BacktestResult.HorizonVariant v : vs) {
        head.append(String.format(Locale.ROOT, " | %-49s", v.label()));
      }
      sb.append('\n').append(head.toString().stripTrailing()).append('\n').append(String.format(Locale.ROOT, "%-" + kw + "s", ""));
      for (int i = 0; i < vs.size(); i++) {
        sb.append(" | ").append(String.format(Locale.ROOT, block, "count", "MAE", "RMSE", "bias", "coverage"));
      }
      sb.append('\n');
      if (!fields.isEmpty()) {
        sb.append(String.join(", ", fields)).append('\n');
        int rows = 0;
        for (BacktestResult.HorizonVariant v : vs) {
          rows = Math.max(rows, v.breakdown().byEntity().size());
        }
        for (int i = 0; i < rows; i++) {
          String label = null;
          List<Metrics> ms = new ArrayList<>();
          for (BacktestResult.HorizonVariant v : vs) {
            List<BacktestResult.EntityGroup> es = v.breakdown().byEntity();
            if (i < es.size()) {
              label = label != null ? label : rowLabel(es.get(i));
              ms.add(es.get(i).metrics());
            } else {
              ms.add(null);
            }
          }
          breakdownRow(sb, kw, label, ms);
        }
      }
      sb.append("hour of day\n");
      for (int hr = 0; hr < 24; hr++) {
        List<Metrics> ms = new ArrayList<>();
        long any = 0;
        for (BacktestResult.HorizonVariant v : vs) {
          Metrics m = v.breakdown().byHour().get(hr).metrics();
          ms.add(m);
          any += m.count();
        }
        if (any > 0) {
          breakdownRow(sb, kw, String.format(Locale.ROOT, "%02d", hr), ms);
        }
      }
      sb.append(periodName(first.period())).append('\n');
      List<BacktestResult.Group> periods = vs.get(0).breakdown().byPeriod();
      for (int i = 0; i < periods.size(); i++) {
        List<Metrics> ms = new ArrayList<>();
        for (BacktestResult.HorizonVariant v : vs) {
          ms.add(v.breakdown().byPeriod().get(i).metrics());
        }
        breakdownRow(sb, kw, periods.get(i).label(), ms);
      }
    }
  }

  /** The entity fields of the first configuration that has them (empty when none has). */
  static List<String> entityFields(BacktestResult r) {
    for (BacktestResult.HorizonVariant v : r.horizons().get(0).variants()) {
      if (!v.breakdown().entityFields().isEmpty()) {
        return v.breakdown().entityFields();
      }
    }
    return List.of();
  }

  /** "ISO 8601 week" or "month". */
  static String periodName(dev.runnel.core.evaluate.BreakdownPeriod p) {
    return p == dev.runnel.core.evaluate.BreakdownPeriod.WEEK ? "ISO 8601 week" : "month";
  }

  /** An entity row's label: its values, or "(other: n)" for the entities left over. */
  static String rowLabel(BacktestResult.EntityGroup g) {
    return g.other() ? "(other: " + g.entities() + ")" : g.label();
  }

  private static void breakdownRow(StringBuilder sb, int kw, String label, List<Metrics> ms) {
    sb.append(String.format(Locale.ROOT, "  %-" + (kw - 2) + "s", label));
    for (Metrics m : ms) {
      if (m == null) {
        m = Metrics.EMPTY;
      }
      sb.append(" | ").append(String.format(Locale.ROOT, "%9s %9s %9s %9s %9s", String.format(Locale.ROOT, "%,d", m.count()),
          num(m.mae()), num(m.rmse()), num(m.bias()), pct(m.coverage())));
    }
    sb.append('\n');
  }

  private static void segmentTable(StringBuilder sb, BacktestResult r) {
    List<String> levels = new ArrayList<>();
    for (BacktestResult.VariantResult v : r.variants()) {
      for (BacktestResult.Segment s : v.segments()) {
        if (!levels.contains(s.level())) {
          levels.add(s.level());
        }
      }
    }
    int lw = 6;
    for (String l : levels) {
      lw = Math.max(lw, l.length());
    }
    sb.append(String.format(Locale.ROOT, "%-" + lw + "s", "level"));
    for (BacktestResult.VariantResult v : r.variants()) {
      sb.append(String.format(Locale.ROOT, " %" + Math.max(10, v.label().length()) + "s", v.label()));
    }
    sb.append('\n');
    for (String l : levels) {
      sb.append(String.format(Locale.ROOT, "%-" + lw + "s", l));
      for (BacktestResult.VariantResult v : r.variants()) {
        double x = Double.NaN;
        for (BacktestResult.Segment s : v.segments()) {
          if (s.level().equals(l)) {
            x = s.metrics().rmse();
          }
        }
        sb.append(String.format(Locale.ROOT, " %" + Math.max(10, v.label().length()) + "s", num(x)));
      }
      sb.append('\n');
    }
  }

  static String num(double x) {
    if (Double.isNaN(x)) {
      return "-";
    }
    if (Double.isInfinite(x)) {
      return x > 0 ? "inf" : "-inf";
    }
    return String.format(Locale.ROOT, "%.4g", x);
  }

  static String pct(double x) {
    return Double.isNaN(x) ? "-" : String.format(Locale.ROOT, "%.1f%%", 100 * x);
  }

  static String pValue(double p) {
    if (Double.isNaN(p)) {
      return "-";
    }
    if (p < 1e-12) {
      return "<1e-12";
    }
    return p < 0.001 ? String.format(Locale.ROOT, "%.1e", p) : String.format(Locale.ROOT, "%.4f", p);
  }
}
