package dev.runnel.connect.report;

import dev.runnel.core.evaluate.BacktestResult;
import dev.runnel.core.evaluate.DieboldMariano;
import dev.runnel.core.evaluate.Metrics;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Map;

/**
 * The backtest report as one self-contained HTML page: inline CSS and inline SVG, no scripts, no
 * external assets. Plots: RMSE per period for each configuration; the chosen coefficient paths
 * with ±2 standard-error bands.
 */
public final class HtmlReport {

  private static final String[] COLOURS = {"#1f5fa8", "#c2481f", "#2e8b57", "#8a3ea8", "#a88a1f", "#333333"};
  private static final int W = 1040;
  private static final int H = 260;
  private static final int ML = 64;
  private static final int MR = 16;
  private static final int MT = 16;
  private static final int MB = 34;

  private HtmlReport() { }

  /** Writes the page to {@code file}. */
  public static void write(BacktestResult r, Map<String, Object> run, Path file) throws IOException {
    Files.writeString(file, render(r, run), StandardCharsets.UTF_8);
  }

  /** The page. */
  public static String render(BacktestResult r, Map<String, Object> run) {
    StringBuilder sb = new StringBuilder(64 * 1024);
    sb.append("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>Runnel backtest</title>\n<style>\n")
        .append("body{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;margin:24px auto;max-width:1080px;color:#222}\n")
        .append("h1{font-size:22px;margin:0 0 4px}h2{font-size:17px;margin:26px 0 8px;border-bottom:1px solid #ddd;padding-bottom:3px}\n")
        .append("table{border-collapse:collapse;font-size:13px;margin:6px 0}td,th{padding:3px 10px;border-bottom:1px solid #eee;text-align:right}\n")
        .append("th{background:#f4f4f4}td:first-child,th:first-child{text-align:left}.meta{color:#666;font-size:13px}\n")
        .append(".verdict{font-size:14px;margin:4px 0}.sig{color:#1b6e2f;font-weight:600}.ns{color:#8a6d00}.key span{display:inline-block;width:14px;height:4px;margin:0 4px 3px 12px}\n")
        .append("svg{background:#fcfcfc;border:1px solid #e4e4e4}svg text{font-size:11px;fill:#444}\n")
        .append("details.breakdown{margin:6px 0}details.breakdown summary{cursor:pointer;font-size:14px}"
            + "table.breakdown th.cfg{text-align:center;border-left:1px solid #ddd}table.breakdown td.first{border-left:1px solid #ddd}"
            + "table.breakdown tr+tr th{text-align:right}\n")
        .append("</style></head><body>\n");
    sb.append("<h1>Backtest: ").append(esc(labels(r))).append("</h1>\n<p class=\"meta\">");
    for (Map.Entry<String, Object> e : run.entrySet()) {
      sb.append(esc(e.getKey())).append(": ").append(esc(String.valueOf(e.getValue()))).append(" · ");
    }
    sb.append(String.format(Locale.ROOT, "%,d records, %d partition(s). Errors are prequential: each record is predicted "
        + "before the model learns from it.</p>\n", r.records(), r.partitions()));
    key(sb, r);
    sb.append("<h2>Overall</h2>\n<table><tr><th>configuration</th><th>rank</th><th>scored</th><th>MAE</th><th>RMSE</th>"
        + "<th>bias</th><th>interval coverage</th><th>rejected</th></tr>\n");
    List<BacktestResult.VariantResult> rank = TextReport.ranking(r);
    for (BacktestResult.VariantResult v : r.variants()) {
      Metrics m = v.overall();
      sb.append("<tr><td>").append(esc(v.label())).append("</td><td>").append(rank.indexOf(v) + 1)
          .append(String.format(Locale.ROOT, "</td><td>%,d</td><td>%s</td><td>%s</td><td>%s</td><td>%s</td><td>%,d %s</td></tr>%n",
              m.count(), TextReport.num(m.mae()), TextReport.num(m.rmse()), TextReport.num(m.bias()),
              TextReport.pct(m.coverage()), v.rejected(), esc(v.rejectsByReason().isEmpty() ? ""
                  : new java.util.TreeMap<>(v.rejectsByReason()).toString())));
    }
    sb.append("</table>\n");
    sharing(sb, r);
    if (!r.comparisons().isEmpty()) {
      sb.append("<h2>Is the difference real? Diebold–Mariano tests</h2>\n");
      for (BacktestResult.Comparison c : r.comparisons()) {
        verdict(sb, c.squared(), c.squaredVerdict(), r.alpha());
        verdict(sb, c.absolute(), c.absoluteVerdict(), r.alpha());
      }
      sb.append("<table><tr><th>pair (first vs second)</th><th>loss</th><th>n</th><th>HAC lag</th>"
          + "<th>mean loss, first − second</th><th>statistic</th><th>p (normal)</th><th>corrected statistic</th>"
          + "<th>p (t, n−1)</th></tr>\n");
      for (BacktestResult.Comparison c : r.comparisons()) {
        for (DieboldMariano.Result t : List.of(c.squared(), c.absolute())) {
          sb.append("<tr><td>").append(esc(c.a() + " vs " + c.b())).append("</td><td>").append(t.loss().id())
              .append(String.format(Locale.ROOT, "</td><td>%,d</td><td>%d</td><td>%s</td><td>%s</td><td>%s</td><td>%s</td><td>%s</td></tr>%n",
                  t.n(), t.lag(), TextReport.num(t.meanDifference()), TextReport.num(t.statistic()),
                  TextReport.pValue(t.pValue()), TextReport.num(t.correctedStatistic()), TextReport.pValue(t.correctedPValue())));
        }
      }
      sb.append("</table>\n<p class=\"meta\">Diebold &amp; Mariano (1995), long-run variance by the Newey &amp; West (1987) "
          + "Bartlett kernel, lag floor(4(n/100)^(2/9)) unless set; the corrected statistic applies the Harvey, Leybourne &amp; Newbold (1997) "
          + "correction and is compared with Student's t with n − 1 degrees of freedom. The difference is the first configuration's "
          + "loss minus the second's: below zero, the first did better (its loss is smaller); above zero, the second did.</p>\n");
    }
    if (!r.horizons().isEmpty()) {
      horizons(sb, r);
      breakdowns(sb, r);
    }
    sb.append("<h2>RMSE over time</h2>\n");
    overTime(sb, r);
    for (int w = 0; w < pathCount(r); w++) {
      String col = r.variants().get(0).paths().get(w).column();
      sb.append("<h2>Coefficient path: ").append(esc(col)).append(" (raw units, ±2 standard errors)</h2>\n");
      path(sb, r, w);
    }
    if (r.segmentField() != null) {
      sb.append("<h2>Per ").append(esc(r.segmentField())).append("</h2>\n");
      segments(sb, r);
    }
    sb.append("<h2>Per local hour of day (RMSE)</h2>\n");
    hours(sb, r);
    sb.append("<details><summary>the numbers</summary>\n<table><tr><th>hour</th>");
    for (BacktestResult.VariantResult v : r.variants()) {
      sb.append("<th>").append(esc(v.label())).append("</th>");
    }
    sb.append("</tr>\n");
    for (int h = 0; h < 24; h++) {
      sb.append(String.format(Locale.ROOT, "<tr><td>%02d</td>", h));
      for (BacktestResult.VariantResult v : r.variants()) {
        sb.append("<td>").append(TextReport.num(v.byHour().get(h).rmse())).append("</td>");
      }
      sb.append("</tr>\n");
    }
    sb.append("</table>\n</details>\n<p class=\"meta\">Written by runnel backtest.</p>\n</body></html>\n");
    return sb.toString();
  }

  /**
   * With {@code --horizons}: the errors of the simulated forecasts per horizon and configuration,
   * and the Diebold–Mariano tests per horizon, the same numbers as the terminal table and
   * {@code backtest.json}'s {@code horizons[]}.
   */
  private static void horizons(StringBuilder sb, BacktestResult r) {
    sb.append("<h2>Errors by horizon</h2>\n<p class=\"meta\">Forecasts simulated h before each actual's target time, "
        + "from what was known then. Each horizon covers different actuals: compare configurations within one horizon.</p>\n"
        + "<table class=\"horizons\"><tr><th>horizon</th><th>configuration</th><th>settled</th><th>MAE</th><th>RMSE</th>"
        + "<th>bias</th><th>interval coverage</th><th>not settled</th><th>skipped</th></tr>\n");
    for (BacktestResult.HorizonResult h : r.horizons()) {
      String hz = java.time.Duration.ofMillis(h.horizonMillis()).toString();
      for (BacktestResult.HorizonVariant v : h.variants()) {
        Metrics m = v.metrics();
        sb.append("<tr><td>").append(hz).append("</td><td>").append(esc(v.label()))
            .append(String.format(Locale.ROOT, "</td><td>%,d</td><td>%s</td><td>%s</td><td>%s</td><td>%s</td><td>%,d</td>"
                + "<td>%,d</td></tr>%n", m.count(), TextReport.num(m.mae()), TextReport.num(m.rmse()), TextReport.num(m.bias()),
                TextReport.pct(m.coverage()), v.notSettled() + v.warmingUp(), v.beyondLookahead() + v.notIssued()));
      }
    }
    sb.append("</table>\n<p class=\"meta\">Not settled: warming up, or no actual settled the forecast; skipped: "
        + "beyond the look-ahead, or not issued (backtest.json counts each apart).</p>\n");
    boolean any = false;
    for (BacktestResult.HorizonResult h : r.horizons()) {
      any |= !h.comparisons().isEmpty();
    }
    if (!any) {
      return;
    }
    sb.append("<h2>Diebold–Mariano tests by horizon</h2>\n");
    for (BacktestResult.HorizonResult h : r.horizons()) {
      String hz = java.time.Duration.ofMillis(h.horizonMillis()).toString();
      for (BacktestResult.HorizonComparison hc : h.comparisons()) {
        BacktestResult.Comparison c = hc.comparison();
        verdict(sb, c.squared(), hz + ": " + c.squaredVerdict(), r.alpha());
        verdict(sb, c.absolute(), hz + ": " + c.absoluteVerdict(), r.alpha());
      }
    }
    sb.append("<table class=\"horizon-tests\"><tr><th>horizon</th><th>pair (first vs second)</th><th>loss</th><th>n</th>"
        + "<th>steps</th><th>HAC lag</th><th>mean loss, first − second</th><th>statistic</th><th>p (normal)</th>"
        + "<th>corrected statistic</th><th>p (t, n−1)</th></tr>\n");
    for (BacktestResult.HorizonResult h : r.horizons()) {
      String hz = java.time.Duration.ofMillis(h.horizonMillis()).toString();
      for (BacktestResult.HorizonComparison hc : h.comparisons()) {
        BacktestResult.Comparison c = hc.comparison();
        for (DieboldMariano.Result t : List.of(c.squared(), c.absolute())) {
          sb.append("<tr><td>").append(hz).append("</td><td>").append(esc(c.a() + " vs " + c.b())).append("</td><td>")
              .append(t.loss().id())
              .append(String.format(Locale.ROOT, "</td><td>%,d</td><td>%d</td><td>%d</td><td>%s</td><td>%s</td><td>%s</td>"
                  + "<td>%s</td><td>%s</td></tr>%n", t.n(), t.horizon(), t.lag(), TextReport.num(t.meanDifference()),
                  TextReport.num(t.statistic()), TextReport.pValue(t.pValue()), TextReport.num(t.correctedStatistic()),
                  TextReport.pValue(t.correctedPValue())));
        }
      }
    }
    sb.append("</table>\n<p class=\"meta\">Steps k = horizon / mean spacing in target time of the compared series "
        + "(the actuals both configurations settled); the HAC lag is at least k − 1 and k sets the Harvey, Leybourne &amp; "
        + "Newbold correction (docs/backtesting.md, \"Horizons\").</p>\n");
  }

  /**
   * With {@code --horizons}: where within each horizon the error is. One folded section per horizon
   * (details/summary) with three compact tables, by entity, by local hour of day (hours with
   * forecasts only) and by period of the target time, five columns per configuration; the same
   * numbers as {@code backtest.json}'s {@code by_entity}, {@code by_target_hour} and
   * {@code by_target_period}.
   */
  private static void breakdowns(StringBuilder sb, BacktestResult r) {
    List<String> fields = TextReport.entityFields(r);
    BacktestResult.Breakdown first = r.horizons().get(0).variants().get(0).breakdown();
    String period = TextReport.periodName(first.period());
    sb.append("<h2>Where the error is, by horizon</h2>\n<p class=\"meta\">Each horizon's settled forecasts by ")
        .append(fields.isEmpty() ? "entity (none here: no <code>input.forecast</code>)" : esc(String.join(", ", fields))
            + " (the " + first.topEntities() + " with the most settled forecasts; the rest as one row, (other: n))")
        .append(", by hour of day and by ").append(period).append(" of the target time, local to each configuration's "
            + "<code>input.time_zone</code>. Each table holds every settled forecast of its horizon once.</p>\n");
    for (BacktestResult.HorizonResult h : r.horizons()) {
      String hz = java.time.Duration.ofMillis(h.horizonMillis()).toString();
      List<BacktestResult.HorizonVariant> vs = h.variants();
      sb.append("<details class=\"breakdown\"><summary>").append(hz).append(": by ")
          .append(fields.isEmpty() ? "" : esc(String.join(", ", fields)) + ", by ").append("hour of day and by ")
          .append(period).append("</summary>\n");
      if (!fields.isEmpty()) {
        breakdownHead(sb, esc(String.join(", ", fields)), vs);
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
              label = label != null ? label : TextReport.rowLabel(es.get(i));
              ms.add(es.get(i).metrics());
            } else {
              ms.add(Metrics.EMPTY);
            }
          }
          breakdownRow(sb, label, ms);
        }
        sb.append("</table>\n");
      }
      breakdownHead(sb, "hour", vs);
      for (int hr = 0; hr < 24; hr++) {
        List<Metrics> ms = new ArrayList<>();
        long any = 0;
        for (BacktestResult.HorizonVariant v : vs) {
          Metrics m = v.breakdown().byHour().get(hr).metrics();
          ms.add(m);
          any += m.count();
        }
        if (any > 0) {
          breakdownRow(sb, String.format(Locale.ROOT, "%02d", hr), ms);
        }
      }
      sb.append("</table>\n");
      breakdownHead(sb, period, vs);
      List<BacktestResult.Group> periods = vs.get(0).breakdown().byPeriod();
      for (int i = 0; i < periods.size(); i++) {
        List<Metrics> ms = new ArrayList<>();
        for (BacktestResult.HorizonVariant v : vs) {
          ms.add(v.breakdown().byPeriod().get(i).metrics());
        }
        breakdownRow(sb, periods.get(i).label(), ms);
      }
      sb.append("</table>\n</details>\n");
    }
  }

  private static void breakdownHead(StringBuilder sb, String key, List<BacktestResult.HorizonVariant> vs) {
    sb.append("<table class=\"breakdown\"><tr><th rowspan=\"2\">").append(key).append("</th>");
    for (BacktestResult.HorizonVariant v : vs) {
      sb.append("<th class=\"cfg\" colspan=\"5\">").append(esc(v.label())).append("</th>");
    }
    sb.append("</tr>\n<tr>");
    for (int i = 0; i < vs.size(); i++) {
      sb.append("<th>count</th><th>MAE</th><th>RMSE</th><th>bias</th><th>coverage</th>");
    }
    sb.append("</tr>\n");
  }

  private static void breakdownRow(StringBuilder sb, String label, List<Metrics> ms) {
    sb.append("<tr><td>").append(esc(label)).append("</td>");
    for (Metrics m : ms) {
      sb.append(String.format(Locale.ROOT, "<td class=\"first\">%,d</td><td>%s</td><td>%s</td><td>%s</td><td>%s</td>",
          m.count(), TextReport.num(m.mae()), TextReport.num(m.rmse()), TextReport.num(m.bias()), TextReport.pct(m.coverage())));
    }
    sb.append("</tr>\n");
  }

  private static String labels(BacktestResult r) {
    List<String> l = new ArrayList<>();
    for (BacktestResult.VariantResult v : r.variants()) {
      l.add(v.label());
    }
    return String.join(" vs ", l);
  }

  private static void key(StringBuilder sb, BacktestResult r) {
    sb.append("<p class=\"key\">");
    for (int i = 0; i < r.variants().size(); i++) {
      sb.append("<span style=\"background:").append(colour(i)).append("\"></span>").append(esc(r.variants().get(i).label()));
    }
    sb.append("</p>\n");
  }

  private static void verdict(StringBuilder sb, DieboldMariano.Result t, String text, double alpha) {
    boolean sig = t.n() >= 2 && t.significant(alpha);
    sb.append("<p class=\"verdict ").append(sig ? "sig" : "ns").append("\">").append(esc(text)).append("</p>\n");
  }

  private static int pathCount(BacktestResult r) {
    return r.variants().isEmpty() ? 0 : r.variants().get(0).paths().size();
  }

  private static void overTime(StringBuilder sb, BacktestResult r) {
    double x0 = Double.MAX_VALUE;
    double x1 = -Double.MAX_VALUE;
    double y1 = 0;
    for (BacktestResult.VariantResult v : r.variants()) {
      for (BacktestResult.Bucket b : v.overTime()) {
        x0 = Math.min(x0, b.startLocalMillis());
        x1 = Math.max(x1, b.startLocalMillis());
        if (Double.isFinite(b.metrics().rmse())) {
          y1 = Math.max(y1, b.metrics().rmse());
        }
      }
    }
    if (x0 > x1) {
      sb.append("<p>No scored records.</p>\n");
      return;
    }
    Frame f = new Frame(x0, x1 == x0 ? x0 + 1 : x1, 0, y1 == 0 ? 1 : y1);
    f.open(sb, "RMSE", true);
    for (int i = 0; i < r.variants().size(); i++) {
      StringBuilder pts = new StringBuilder();
      for (BacktestResult.Bucket b : r.variants().get(i).overTime()) {
        if (Double.isFinite(b.metrics().rmse())) {
          pts.append(String.format(Locale.ROOT, "%.1f,%.1f ", f.x(b.startLocalMillis()), f.y(b.metrics().rmse())));
        }
      }
      sb.append("<polyline fill=\"none\" stroke-width=\"1.6\" stroke=\"").append(colour(i)).append("\" points=\"")
          .append(pts).append("\"/>\n");
    }
    sb.append("</svg>\n");
  }

  private static void path(StringBuilder sb, BacktestResult r, int w) {
    double x0 = Double.MAX_VALUE;
    double x1 = -Double.MAX_VALUE;
    double y0 = Double.MAX_VALUE;
    double y1 = -Double.MAX_VALUE;
    for (BacktestResult.VariantResult v : r.variants()) {
      for (BacktestResult.PathPoint p : v.paths().get(w).points()) {
        if (!Double.isFinite(p.weight())) {
          continue;
        }
        double se = Double.isFinite(p.standardError()) ? p.standardError() : 0;
        x0 = Math.min(x0, p.eventTimeMillis());
        x1 = Math.max(x1, p.eventTimeMillis());
        y0 = Math.min(y0, p.weight() - 2 * se);
        y1 = Math.max(y1, p.weight() + 2 * se);
      }
    }
    if (x0 > x1) {
      sb.append("<p>The column was not in the model of any configuration.</p>\n");
      return;
    }
    double pad = (y1 - y0) * 0.05 + 1e-9;
    Frame f = new Frame(x0, x1 == x0 ? x0 + 1 : x1, y0 - pad, y1 + pad);
    f.open(sb, "weight", false);
    for (int i = 0; i < r.variants().size(); i++) {
      List<BacktestResult.PathPoint> pts = new ArrayList<>();
      for (BacktestResult.PathPoint p : r.variants().get(i).paths().get(w).points()) {
        if (Double.isFinite(p.weight())) {
          pts.add(p);
        }
      }
      if (pts.isEmpty()) {
        continue;
      }
      StringBuilder band = new StringBuilder();
      for (BacktestResult.PathPoint p : pts) {
        double se = Double.isFinite(p.standardError()) ? p.standardError() : 0;
        band.append(String.format(Locale.ROOT, "%.1f,%.1f ", f.x(p.eventTimeMillis()), f.y(p.weight() + 2 * se)));
      }
      for (int k = pts.size() - 1; k >= 0; k--) {
        BacktestResult.PathPoint p = pts.get(k);
        double se = Double.isFinite(p.standardError()) ? p.standardError() : 0;
        band.append(String.format(Locale.ROOT, "%.1f,%.1f ", f.x(p.eventTimeMillis()), f.y(p.weight() - 2 * se)));
      }
      sb.append("<polygon stroke=\"none\" fill-opacity=\"0.16\" fill=\"").append(colour(i)).append("\" points=\"")
          .append(band).append("\"/>\n");
      StringBuilder line = new StringBuilder();
      for (BacktestResult.PathPoint p : pts) {
        line.append(String.format(Locale.ROOT, "%.1f,%.1f ", f.x(p.eventTimeMillis()), f.y(p.weight())));
      }
      sb.append("<polyline fill=\"none\" stroke-width=\"1.6\" stroke=\"").append(colour(i)).append("\" points=\"")
          .append(line).append("\"/>\n");
    }
    sb.append("</svg>\n");
  }

  /** RMSE per local hour of day as grouped bars, one colour per configuration. */
  private static void hours(StringBuilder sb, BacktestResult r) {
    double top = 0;
    for (BacktestResult.VariantResult v : r.variants()) {
      for (int h = 0; h < 24; h++) {
        double x = v.byHour().get(h).rmse();
        if (Double.isFinite(x)) {
          top = Math.max(top, x);
        }
      }
    }
    if (top == 0) {
      sb.append("<p>No scored records.</p>\n");
      return;
    }
    double[] ticks = niceTicks(0, top, 4);
    double y1 = ticks[ticks.length - 1];
    double plotH = H - MT - MB;
    double slot = (W - ML - MR) / 24.0;
    int n = r.variants().size();
    double bar = Math.max(1, (slot * 0.8) / n);
    sb.append(String.format(Locale.ROOT, "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"%d\" height=\"%d\" viewBox=\"0 0 %d %d\" "
        + "class=\"hours\">%n", W, H, W, H));
    for (double t : ticks) {
      double yy = MT + (y1 - t) / y1 * plotH;
      sb.append(String.format(Locale.ROOT, "<line x1=\"%d\" y1=\"%.1f\" x2=\"%d\" y2=\"%.1f\" stroke=\"#eee\"/>"
          + "<text x=\"%d\" y=\"%.1f\" text-anchor=\"end\">%s</text>%n", ML, yy, W - MR, yy, ML - 6, yy + 4, tickLabel(t, ticks)));
    }
    for (int h = 0; h < 24; h++) {
      double x0 = ML + h * slot + slot * 0.1;
      for (int i = 0; i < n; i++) {
        double v = r.variants().get(i).byHour().get(h).rmse();
        if (!Double.isFinite(v)) {
          continue;
        }
        double hh = v / y1 * plotH;
        sb.append(String.format(Locale.ROOT, "<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\" fill=\"%s\">"
            + "<title>%02d h, %s: RMSE %s</title></rect>%n", x0 + i * bar, MT + plotH - hh, bar, hh, colour(i), h,
            esc(r.variants().get(i).label()), TextReport.num(v)));
      }
      sb.append(String.format(Locale.ROOT, "<text x=\"%.1f\" y=\"%d\" text-anchor=\"middle\">%02d</text>%n",
          ML + (h + 0.5) * slot, H - MB + 16, h));
    }
    sb.append(String.format(Locale.ROOT, "<line x1=\"%d\" y1=\"%d\" x2=\"%d\" y2=\"%d\" stroke=\"#999\"/>%n", ML, H - MB, W - MR, H - MB));
    sb.append(String.format(Locale.ROOT, "<text x=\"12\" y=\"%d\" transform=\"rotate(-90 12 %d)\" text-anchor=\"middle\">RMSE</text>%n",
        (H - MB + MT) / 2, (H - MB + MT) / 2));
    sb.append(String.format(Locale.ROOT, "<text x=\"%d\" y=\"%d\" text-anchor=\"end\">local hour of day</text>%n", W - MR, H - 4));
    sb.append("</svg>\n");
  }

  /**
   * Round tick values covering [lo, hi]: the step is 1, 2 or 5 times a power of ten, the smallest
   * such that about {@code target} steps span the range (the "nice numbers" rule, common practice),
   * and the first and last ticks are multiples of the step at or beyond lo and hi.
   * Package-private for tests.
   *
   * @return ascending ticks, at least two
   */
  static double[] niceTicks(double lo, double hi, int target) {
    if (!(hi > lo)) {
      hi = lo + (lo == 0 ? 1 : Math.abs(lo));
    }
    double raw = (hi - lo) / target;
    double power = Math.pow(10, Math.floor(Math.log10(raw)));
    double f = raw / power;
    double step = (f <= 1 ? 1 : f <= 2 ? 2 : f <= 5 ? 5 : 10) * power;
    long first = (long) Math.floor(lo / step + 1e-9);
    long last = (long) Math.ceil(hi / step - 1e-9);
    double[] t = new double[(int) (last - first + 1)];
    for (int i = 0; i < t.length; i++) {
      t[i] = (first + i) * step;
      if (Math.abs(t[i]) < step * 1e-9) {
        t[i] = 0; // no "-0"
      }
    }
    return t;
  }

  /** A tick's label with just the decimals the step needs. */
  static String tickLabel(double v, double[] ticks) {
    double step = ticks.length > 1 ? ticks[1] - ticks[0] : 1;
    int decimals = Math.max(0, (int) -Math.floor(Math.log10(step) + 1e-9));
    return String.format(Locale.ROOT, "%." + decimals + "f", v);
  }

  private static void segments(StringBuilder sb, BacktestResult r) {
    List<String> levels = new ArrayList<>();
    for (BacktestResult.VariantResult v : r.variants()) {
      for (BacktestResult.Segment s : v.segments()) {
        if (!levels.contains(s.level())) {
          levels.add(s.level());
        }
      }
    }
    sb.append("<table><tr><th>level</th>");
    for (BacktestResult.VariantResult v : r.variants()) {
      sb.append("<th>").append(esc(v.label())).append(" MAE</th><th>RMSE</th><th>bias</th><th>coverage</th>");
    }
    sb.append("</tr>\n");
    for (String l : levels) {
      sb.append("<tr><td>").append(esc(l)).append("</td>");
      for (BacktestResult.VariantResult v : r.variants()) {
        Metrics m = Metrics.EMPTY;
        for (BacktestResult.Segment s : v.segments()) {
          if (s.level().equals(l)) {
            m = s.metrics();
          }
        }
        sb.append("<td>").append(TextReport.num(m.mae())).append("</td><td>").append(TextReport.num(m.rmse()))
            .append("</td><td>").append(TextReport.num(m.bias())).append("</td><td>").append(TextReport.pct(m.coverage()))
            .append("</td>");
      }
      sb.append("</tr>\n");
    }
    sb.append("</table>\n");
  }

  private static String colour(int i) {
    return COLOURS[i % COLOURS.length];
  }

  /**
   * The shares of the configurations with {@code model.scope: global}, in all and per partition
   * (docs/backtesting.md, "Global scope"); nothing when none is global.
   */
  static void sharing(StringBuilder sb, BacktestResult r) {
    boolean any = false;
    for (BacktestResult.VariantResult v : r.variants()) {
      any |= v.sharing().global();
    }
    if (!any) {
      return;
    }
    sb.append("<h2>Shares (model.scope: global)</h2>\n<p class=\"meta\">A share is what a partition learned since its "
        + "last share; every other partition folds it before its next record. Folded counts each share once per "
        + "partition that folded it.</p>\n<table class=\"shares\"><tr><th>configuration</th><th>partition</th>"
        + "<th>shares made</th><th>shares folded</th></tr>\n");
    for (BacktestResult.VariantResult v : r.variants()) {
      BacktestResult.Sharing s = v.sharing();
      if (!s.global()) {
        continue;
      }
      sb.append("<tr><td>").append(esc(v.label())).append(String.format(Locale.ROOT,
          "</td><td>all</td><td>%,d</td><td>%,d</td></tr>%n", s.sharesMade(), s.sharesFolded()));
      for (BacktestResult.PartitionShares p : s.partitions()) {
        sb.append("<tr><td>").append(esc(v.label())).append(String.format(Locale.ROOT,
            "</td><td>%d</td><td>%,d</td><td>%,d</td></tr>%n", p.partition(), p.sharesMade(), p.sharesFolded()));
      }
    }
    sb.append("</table>\n");
  }

  static String esc(String s) {
    return s.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace("\"", "&quot;");
  }

  /** A plot area with axes: x is time (epoch or local millis), y is a value. */
  private static final class Frame {
    final double x0;
    final double x1;
    final double y0;
    final double y1;
    final double[] ticks;

    /** A frame whose y range is widened to round ticks ({@link #niceTicks}) around [y0, y1]. */
    Frame(double x0, double x1, double y0, double y1) {
      this.x0 = x0;
      this.x1 = x1;
      this.ticks = niceTicks(y0, y1, 4);
      this.y0 = ticks[0];
      this.y1 = ticks[ticks.length - 1];
    }

    double x(double t) {
      return ML + (t - x0) / (x1 - x0) * (W - ML - MR);
    }

    double y(double v) {
      return MT + (y1 - v) / (y1 - y0) * (H - MT - MB);
    }

    void open(StringBuilder sb, String yLabel, boolean localTime) {
      sb.append(String.format(Locale.ROOT, "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"%d\" height=\"%d\" viewBox=\"0 0 %d %d\">%n",
          W, H, W, H));
      sb.append(String.format(Locale.ROOT, "<line x1=\"%d\" y1=\"%d\" x2=\"%d\" y2=\"%d\" stroke=\"#999\"/>%n", ML, H - MB, W - MR, H - MB));
      sb.append(String.format(Locale.ROOT, "<line x1=\"%d\" y1=\"%d\" x2=\"%d\" y2=\"%d\" stroke=\"#999\"/>%n", ML, MT, ML, H - MB));
      for (double v : ticks) {
        double yy = y(v);
        sb.append(String.format(Locale.ROOT, "<line x1=\"%d\" y1=\"%.1f\" x2=\"%d\" y2=\"%.1f\" stroke=\"#eee\"/>"
            + "<text x=\"%d\" y=\"%.1f\" text-anchor=\"end\">%s</text>%n", ML, yy, W - MR, yy, ML - 6, yy + 4, tickLabel(v, ticks)));
      }
      if (y0 < 0 && y1 > 0) {
        sb.append(String.format(Locale.ROOT, "<line x1=\"%d\" y1=\"%.1f\" x2=\"%d\" y2=\"%.1f\" stroke=\"#bbb\" stroke-dasharray=\"4 3\"/>%n",
            ML, y(0), W - MR, y(0)));
      }
      for (int k = 0; k <= 5; k++) {
        double t = x0 + (x1 - x0) * k / 5;
        String label = Instant.ofEpochMilli((long) t).toString().substring(0, 10);
        // the first and last labels are anchored inside the plot, so neither is clipped at the edge
        String anchor = k == 0 ? "start" : k == 5 ? "end" : "middle";
        sb.append(String.format(Locale.ROOT, "<text x=\"%.1f\" y=\"%d\" text-anchor=\"%s\">%s</text>%n", x(t), H - MB + 16,
            anchor, label));
      }
      sb.append(String.format(Locale.ROOT, "<text x=\"12\" y=\"%d\" transform=\"rotate(-90 12 %d)\" text-anchor=\"middle\">%s</text>%n",
          (H - MB + MT) / 2, (H - MB + MT) / 2, esc(yLabel + (localTime ? " (per period, local time)" : ""))));
    }
  }
}
