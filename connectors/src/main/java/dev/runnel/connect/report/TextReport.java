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
    }
    return TerminalText.lines(sb);
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
