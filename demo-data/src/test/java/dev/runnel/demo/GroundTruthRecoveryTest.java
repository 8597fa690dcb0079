// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
package dev.runnel.demo;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.time.DayOfWeek;
import java.time.OffsetDateTime;
import java.time.ZonedDateTime;
import java.util.ArrayList;
import java.util.List;
import org.apache.commons.math3.stat.regression.OLSMultipleLinearRegression;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/**
 * The published lines follow the documented ground truth: a batch least-squares fit on the documented
 * design recovers the documented weights. Reference: Apache Commons Math 3.6.1
 * {@link OLSMultipleLinearRegression} (QR), a general-purpose library, with its own standard errors.
 *
 * <p>Tolerance: each weight within 4 of the regression's standard errors of its documented value. The
 * model is exactly the truth (only the rounding of sessions to 0.1 adds variance 1/1200, 0.04 % of
 * the noise variance), so the error of each estimate is normal with that standard error; |z| > 4 has
 * probability 6.3e-5 per weight, below 0.2 % for all 24 together (Bonferroni). The target is the
 * first reading less the hub's hidden daily level (documented; it is what history features learn),
 * and the holiday flag is a column. With n about 52,000
 * rows and noise sd 1.5, the standard errors are about 0.02-0.05 for the dummies and about 0.3 for the
 * price weight (see the assertion messages).
 */
class GroundTruthRecoveryTest {
  private static final Settings YEAR = Settings.defaults().withForecasts(false);
  private static final String[] WEATHER_DUMMIES = {"cloudy", "rain", "snow"};
  private static List<SchemaCheck.Row> rows;
  private static List<Integer> hours;
  private static List<Double> levels;
  private static List<Boolean> fahrenheit;
  private static ChangeSchedule schedule;

  @BeforeAll static void generate() {
    QuillmarshGenerator g = new QuillmarshGenerator(YEAR);
    schedule = g.schedule();
    ZonedDateTime start = YEAR.start().atZone(GroundTruth.ZONE);
    rows = new ArrayList<>();
    hours = new ArrayList<>();
    levels = new ArrayList<>();
    fahrenheit = new ArrayList<>();
    g.records().forEach(rec -> {
      SchemaCheck.Row r = SchemaCheck.parse(rec.line());
      if (r != null && !r.forecast() && !r.correction()) {   // first readings: the formula's
        rows.add(r);
        hours.add((int) ((r.observedAt().toEpochSecond() - start.toEpochSecond()) / 3600L));
        levels.add(rec.level());
        fahrenheit.add(schedule.isFahrenheitHour(rec.issueHour()));   // degF lines: those that arrive in the incident   // the hub's hidden daily level (documented), taken out of the target
      }
    });
  }

  /** Fit result: coefficients in design order (intercept first), standard errors, residual sd, n. */
  private record Fit(double[] beta, double[] se, double sigma, int n, List<String> names) {
    double coef(String name) { return beta[names.indexOf(name)]; }
    double stderr(String name) { return se[names.indexOf(name)]; }
  }

  /** The documented design, built here from the published fields only (local time through java.time). */
  private static Fit fit(int fromHour, int toHour, List<String> hubs) {
    List<String> names = new ArrayList<>();
    names.add("intercept");
    for (int j = 1; j < hubs.size(); j++) {
      names.add(hubs.get(j));
    }
    for (int k = 1; k <= 3; k++) {
      names.add("sin" + k);
      names.add("cos" + k);
    }
    names.add("weekend");
    names.add("holiday");
    for (String w : WEATHER_DUMMIES) {
      names.add(w);
    }
    names.add("temperature");
    names.add("price");
    List<double[]> xs = new ArrayList<>();
    List<Double> ys = new ArrayList<>();
    for (int i = 0; i < rows.size(); i++) {
      int h = hours.get(i);
      SchemaCheck.Row r = rows.get(i);
      if (h < fromHour || h >= toHour || fahrenheit.get(i) || !hubs.contains(r.hub())) {
        continue;
      }
      double[] x = new double[names.size() - 1];
      int c = 0;
      for (int j = 1; j < hubs.size(); j++) {
        x[c++] = r.hub().equals(hubs.get(j)) ? 1 : 0;
      }
      OffsetDateTime local = r.observedAt().atZoneSameInstant(GroundTruth.ZONE).toOffsetDateTime();
      int hod = local.getHour();
      for (int k = 1; k <= 3; k++) {
        x[c++] = Math.sin(2 * Math.PI * k * hod / 24.0);
        x[c++] = Math.cos(2 * Math.PI * k * hod / 24.0);
      }
      DayOfWeek d = local.getDayOfWeek();
      x[c++] = d == DayOfWeek.SATURDAY || d == DayOfWeek.SUNDAY ? 1 : 0;
      x[c++] = GroundTruth.isHoliday(local.toLocalDate()) ? 1 : 0;
      for (String w : WEATHER_DUMMIES) {
        x[c++] = r.weather().equals(w) ? 1 : 0;
      }
      x[c++] = r.temperature();
      x[c++] = r.price();
      xs.add(x);
      ys.add(r.sessions() - levels.get(i));
    }
    double[][] xm = xs.toArray(new double[0][]);
    double[] y = new double[ys.size()];
    for (int i = 0; i < y.length; i++) {
      y[i] = ys.get(i);
    }
    OLSMultipleLinearRegression ols = new OLSMultipleLinearRegression();
    ols.newSampleData(y, xm);
    return new Fit(ols.estimateRegressionParameters(), ols.estimateRegressionParametersStandardErrors(),
        ols.estimateRegressionStandardError(), y.length, names);
  }

  private static List<String> hubIds(int from, int toExclusive, int skip) {
    List<String> out = new ArrayList<>();
    for (int j = from; j < toExclusive; j++) {
      if (j != skip) {
        out.add(GroundTruth.HUBS.get(j).id());
      }
    }
    return out;
  }

  private static void near(Fit f, String name, double truth) {
    double b = f.coef(name);
    double se = f.stderr(name);
    assertTrue(Math.abs(b - truth) <= 4 * se,
        name + ": fitted " + b + " vs documented " + truth + ", se " + se + ", z " + (b - truth) / se);
  }

  @Test void stationaryStretchBeforeTariffChange_recoversDocumentedWeights() {
    List<String> hubs = hubIds(0, 12, -1);   // QM-01..QM-12: present from the start to the tariff change
    Fit f = fit(0, schedule.tariffChangeHour(), hubs);
    assertTrue(f.n() > 50_000, "rows " + f.n());
    near(f, "intercept", GroundTruth.BASE_SESSIONS);
    for (int j = 1; j < hubs.size(); j++) {
      near(f, hubs.get(j), GroundTruth.HUBS.get(j).sessionsEffect());
    }
    for (int k = 1; k <= 3; k++) {
      near(f, "sin" + k, GroundTruth.HOUR_SIN[k - 1]);
      near(f, "cos" + k, GroundTruth.HOUR_COS[k - 1]);
    }
    near(f, "weekend", GroundTruth.WEEKEND_EFFECT);
    near(f, "holiday", GroundTruth.HOLIDAY_EFFECT);
    near(f, "cloudy", GroundTruth.weatherEffect(Weather.CLOUDY));
    near(f, "rain", GroundTruth.weatherEffect(Weather.RAIN));
    near(f, "snow", GroundTruth.weatherEffect(Weather.SNOW));
    near(f, "temperature", GroundTruth.TEMPERATURE_EFFECT_PER_C);
    near(f, "price", GroundTruth.PRICE_EFFECT_PER_EUR);
    // Residual sd: noise sd with the rounding variance added; the sd of a sample sd is about
    // sigma / sqrt(2 (n - p)) for normal errors (common practice); 4 of those.
    double sigmaEff = Math.sqrt(GroundTruth.NOISE_SD * GroundTruth.NOISE_SD + 0.01 / 12);
    double tol = 4 * sigmaEff / Math.sqrt(2.0 * (f.n() - f.beta().length));
    assertEquals(sigmaEff, f.sigma(), tol, "residual sd");
  }

  @Test void afterTariffChange_priceWeightDoubles() {
    Fit before = fit(0, schedule.tariffChangeHour(), hubIds(0, 12, -1));
    // QM-13 is present all along after the tariff change; QM-05 closes later, so it is left out.
    List<String> hubs = hubIds(0, 13, GroundTruth.CLOSING_HUB);
    Fit after = fit(schedule.tariffChangeHour(), schedule.totalHours(), hubs);
    near(after, "price", GroundTruth.PRICE_EFFECT_AFTER_TARIFF_PER_EUR);
    near(after, "temperature", GroundTruth.TEMPERATURE_EFFECT_PER_C);
    near(after, "QM-13", GroundTruth.HUBS.get(GroundTruth.OPENING_HUB).sessionsEffect());
    double diff = after.coef("price") - 2 * before.coef("price");
    double seDiff = Math.sqrt(after.stderr("price") * after.stderr("price") + 4 * before.stderr("price") * before.stderr("price"));
    assertTrue(Math.abs(diff) <= 4 * seDiff, "after - 2 before = " + diff + ", se " + seDiff);
    double ratio = after.coef("price") / before.coef("price");
    assertTrue(ratio > 1.8 && ratio < 2.2, "ratio " + ratio);
  }

  @Test void expectedSessionsStayFarAboveZero_soNoClampIsNeeded() {
    double[] min = {Double.POSITIVE_INFINITY, Double.POSITIVE_INFINITY};
    new QuillmarshGenerator(YEAR.withCorrupt(false)).records().forEach(r -> {
      min[0] = Math.min(min[0], r.expectedSessions());
      min[1] = Math.min(min[1], r.sessions());
    });
    assertTrue(min[0] > 6 * GroundTruth.NOISE_SD, "smallest expected sessions " + min[0]);
    assertTrue(min[1] > 0, "smallest sessions " + min[1]);
  }
}
