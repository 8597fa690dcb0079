// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
package dev.runnel.demo;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.core.json.JsonReadFeature;
import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.json.JsonMapper;
import java.time.DayOfWeek;
import java.time.ZonedDateTime;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.TreeSet;
import java.util.stream.Collectors;
import org.junit.jupiter.api.Test;

/** The planned changes are in the stream where the documentation puts them. */
class PlannedChangesTest {
  private static final Settings FOUR_WEEKS = Settings.defaults().withDays(28);

  /** H as documented: elapsed hours between the start and start + days, in the zone (java.time as reference). */
  private static int totalHours(Settings s) {
    ZonedDateTime a = s.start().atZone(GroundTruth.ZONE);
    ZonedDateTime b = s.start().plusDays(s.days()).atZone(GroundTruth.ZONE);
    return (int) ((b.toEpochSecond() - a.toEpochSecond()) / 3600);
  }

  private static int hourOf(Settings s, SchemaCheck.Row r) {
    return (int) ((r.observedAt().toEpochSecond() - s.start().atZone(GroundTruth.ZONE).toEpochSecond()) / 3600);
  }

  @Test void schedule_followsTheDocumentedFractions() {
    for (Settings s : List.of(FOUR_WEEKS, Settings.sample(), Settings.defaults())) {
      int h = totalHours(s);
      ChangeSchedule c = new QuillmarshGenerator(s).schedule();
      assertEquals(h, c.totalHours());
      assertEquals((int) Math.floor(0.35 * h), c.openingHour());
      assertEquals((int) Math.floor(0.65 * h), c.closingHour());
      assertEquals((int) Math.floor(0.42 * h), c.fahrenheitFirstHour());
      assertEquals(6, c.fahrenheitHours());
      int half = (int) Math.floor(0.50 * h);
      int tariff = c.tariffChangeHour();
      assertTrue(tariff >= half && tariff < half + 25, "tariff hour " + tariff);
      assertEquals(0, ChangeSchedule.localTime(s, tariff).getHour(), "tariff change at local midnight");
      double[] f = {0.15, 0.30, 0.45, 0.70, 0.85};
      for (int k = 0; k < f.length; k++) {
        assertEquals((int) Math.floor(f[k] * h), c.corrupt().get(k).hour());
      }
    }
    // The default year: 52 weeks with one 23-hour and one 25-hour day.
    assertEquals(364 * 24, totalHours(Settings.defaults()));
  }

  @Test void openingHubAppearsOnlyFromItsOpening_closingHubDisappears() {
    // no late actuals: a late actual of the last day would fall after the stream's end and leave a gap
    QuillmarshGenerator g = new QuillmarshGenerator(FOUR_WEEKS.withLateShare(0));
    ChangeSchedule c = g.schedule();
    Map<Integer, Set<String>> actualHubsByHour = new HashMap<>();
    g.lines().map(SchemaCheck::parse).filter(r -> r != null).forEach(r -> {
      int h = hourOf(FOUR_WEEKS, r);
      if (r.hub().equals("QM-13")) {
        assertTrue(h >= c.openingHour(), "QM-13 at hour " + h + " before opening " + c.openingHour());
      }
      if (r.hub().equals("QM-05")) {
        assertTrue(h < c.closingHour(), "QM-05 at hour " + h + " after closing " + c.closingHour());
      }
      if (!r.forecast()) {
        actualHubsByHour.computeIfAbsent(h, k -> new TreeSet<>()).add(r.hub());
      }
    });
    for (int h = 0; h < c.totalHours(); h++) {
      Set<String> hubs = actualHubsByHour.get(h);
      assertNotNull(hubs, "hour " + h);
      boolean corruptHour = false;
      for (ChangeSchedule.CorruptPosition p : c.corrupt()) {
        corruptHour |= p.hour() == h;
      }
      int expected = 12 + (h >= c.openingHour() ? 1 : 0) - (h >= c.closingHour() ? 1 : 0) - (corruptHour ? 1 : 0);
      assertEquals(expected, hubs.size(), "hubs at hour " + h + ": " + hubs);
      if (!corruptHour) {
        assertEquals(h >= c.openingHour(), hubs.contains("QM-13"), "QM-13 at hour " + h);
        assertEquals(h < c.closingHour(), hubs.contains("QM-05"), "QM-05 at hour " + h);
      }
    }
  }

  @Test void fahrenheitHours_carryFahrenheitOfTheHiddenCelsius_andSessionsFollowCelsius() {
    // no late actuals or corrections: the actuals arriving in the incident are those of its hours minus 2
    QuillmarshGenerator g = new QuillmarshGenerator(FOUR_WEEKS.withCorrupt(false).withLateShare(0).withCorrectionShare(0));
    ChangeSchedule c = g.schedule();
    List<GeneratedRecord> inIncident = new ArrayList<>();
    g.records().forEach(r -> {
      SchemaCheck.Row row = SchemaCheck.parse(r.line());
      assertNotNull(row, r.line());
      if (c.isFahrenheitHour(r.issueHour())) {
        // degF = degC * 9/5 + 32 (definition of the Fahrenheit scale), written with 2 decimals.
        assertEquals(r.temperatureC() * 9.0 / 5.0 + 32.0, row.temperature(), 0.005 + 1e-9, r.line());
        if (!r.forecast()) {
          inIncident.add(r);
        }
      } else {
        assertEquals(r.temperatureC(), row.temperature(), 1e-9, r.line());
      }
    });
    int h = totalHours(FOUR_WEEKS);
    int expectedCount = 0;
    for (int t = (int) Math.floor(0.42 * h) - 2; t < (int) Math.floor(0.42 * h) + 4; t++) {
      expectedCount += 12 + (t >= (int) Math.floor(0.35 * h) ? 1 : 0) - (t >= (int) Math.floor(0.65 * h) ? 1 : 0);
    }
    assertEquals(expectedCount, inIncident.size());
    // Sessions follow degC: the mean residual against the documented formula with degC is noise
    // (|mean| < 4 sd/sqrt(n)); with the degF value it would be off by 0.2 * (32 + 0.8 c), several sessions.
    double sumC = 0;
    double sumF = 0;
    for (GeneratedRecord r : inIncident) {
      SchemaCheck.Row row = SchemaCheck.parse(r.line());
      double hidden = r.level() + (r.holiday() ? GroundTruth.HOLIDAY_EFFECT : 0.0);
      sumC += row.sessions() - hidden - documented(row, r.temperatureC(), c.isAfterTariffChange(r.targetHour()));
      sumF += row.sessions() - hidden - documented(row, row.temperature(), c.isAfterTariffChange(r.targetHour()));
    }
    int n = inIncident.size();
    assertTrue(Math.abs(sumC / n) < 4 * GroundTruth.NOISE_SD / Math.sqrt(n), "mean residual with degC " + sumC / n);
    assertTrue(sumF / n < -3.0, "mean residual with degF " + sumF / n);
  }

  /** The documented formula, written out here from the constants (GroundTruth's class doc). */
  private static double documented(SchemaCheck.Row r, double tempC, boolean afterTariff) {
    var local = r.observedAt().atZoneSameInstant(GroundTruth.ZONE);
    int h = local.getHour();
    double y = GroundTruth.BASE_SESSIONS + GroundTruth.HUBS.get(Integer.parseInt(r.hub().substring(3)) - 1).sessionsEffect();
    for (int k = 1; k <= 3; k++) {
      y += GroundTruth.HOUR_SIN[k - 1] * Math.sin(2 * Math.PI * k * h / 24.0) + GroundTruth.HOUR_COS[k - 1] * Math.cos(2 * Math.PI * k * h / 24.0);
    }
    DayOfWeek d = local.getDayOfWeek();
    y += d == DayOfWeek.SATURDAY || d == DayOfWeek.SUNDAY ? GroundTruth.WEEKEND_EFFECT : 0;
    y += GroundTruth.weatherEffect(Weather.valueOf(r.weather().toUpperCase(java.util.Locale.ROOT)));
    y += GroundTruth.TEMPERATURE_EFFECT_PER_C * tempC;
    y += (afterTariff ? 2 * GroundTruth.PRICE_EFFECT_PER_EUR : GroundTruth.PRICE_EFFECT_PER_EUR) * r.price();
    return y;
  }

  @Test void corruptLines_failTheSchemaExactlyAtTheDocumentedPositions() throws Exception {
    for (Settings s : List.of(FOUR_WEEKS, Settings.sample())) {
      QuillmarshGenerator g = new QuillmarshGenerator(s);
      List<String> lines = g.lines().collect(Collectors.toList());
      List<Long> failing = new ArrayList<>();
      for (int i = 0; i < lines.size(); i++) {
        if (SchemaCheck.parse(lines.get(i)) == null) {
          failing.add(i + 1L);
        }
      }
      long[] documented = g.corruptLineNumbers();
      assertArrayEquals(documented, failing.stream().mapToLong(Long::longValue).toArray(), s.toString());
      // The truth JSON names the same lines.
      JsonNode truth = new ObjectMapper().readTree(GroundTruth.toJson(s));
      JsonNode listed = truth.get("changes").get("corrupt_lines");
      for (int k = 0; k < documented.length; k++) {
        assertEquals(documented[k], listed.get(k).get("line").asLong());
      }
      List<String> good = new QuillmarshGenerator(s.withCorrupt(false)).lines().collect(Collectors.toList());
      for (int k = 0; k < documented.length; k++) {
        String bad = lines.get((int) documented[k] - 1);
        SchemaCheck.Row original = SchemaCheck.parse(good.get((int) documented[k] - 1));
        ChangeSchedule.CorruptPosition p = g.schedule().corrupt().get(k);
        assertFalse(original.forecast());
        assertEquals(p.hubId(), original.hub());
        assertEquals(ChangeSchedule.localTime(s, p.hour()).toInstant(), original.observedAt().toInstant());
        checkKind(p.kind(), bad);
      }
    }
  }

  private static void checkKind(CorruptKind kind, String bad) throws Exception {
    ObjectMapper strict = new ObjectMapper();
    switch (kind) {
      case TRUNCATED_JSON:
        assertEquals(GroundTruth.TRUNCATE_AT_CHARS, bad.length());
        assertFalse(bad.endsWith("}"));
        assertThrowsAny(() -> strict.readTree(bad));
        break;
      case STRING_TEMPERATURE:
        assertTrue(strict.readTree(bad).get("temperature_c").isTextual(), bad);
        break;
      case NAN_TOKEN: {
        assertThrowsAny(() -> strict.readTree(bad));
        // Jackson's ALLOW_NON_NUMERIC_NUMBERS reads the bare token as NaN (Jackson docs, JsonReadFeature).
        ObjectMapper lenient = JsonMapper.builder().enable(JsonReadFeature.ALLOW_NON_NUMERIC_NUMBERS).build();
        assertTrue(Double.isNaN(lenient.readTree(bad).get("sessions").asDouble()), bad);
        break;
      }
      case MISSING_HUB:
        assertNull(strict.readTree(bad).get("hub"), bad);
        break;
      case ABSURD_YEAR:
        assertEquals(9026, java.time.OffsetDateTime.parse(strict.readTree(bad).get("observed_at").asText()).getYear());
        break;
      default:
        throw new AssertionError(kind);
    }
  }

  private interface Action { void run() throws Exception; }

  private static void assertThrowsAny(Action a) {
    try {
      a.run();
    } catch (Exception e) {
      return;
    }
    throw new AssertionError("expected a parse failure");
  }

  @Test void requests_haveNoSessions_hourAheadEveryHour_dayAheadAt18ForTheWholeNextDay() {
    Settings s = FOUR_WEEKS.withCorrupt(false);
    QuillmarshGenerator g = new QuillmarshGenerator(s);
    Map<String, Double> actualPrice = new HashMap<>();
    Map<String, Double> requestPrice = new HashMap<>();
    Map<java.time.LocalDate, Set<String>> dayAheadTargets = new HashMap<>();
    int hourAhead = 0;
    for (String line : g.lines().collect(Collectors.toList())) {
      SchemaCheck.Row r = SchemaCheck.parse(line);
      assertNotNull(r, line);
      int h = hourOf(s, r);
      if (!r.forecast()) {
        assertTrue(line.contains("\"sessions\":"), line);
        actualPrice.put(r.hub() + "@" + h, r.price());
        continue;
      }
      assertFalse(line.contains("sessions"), line);
      long ahead = (r.observedAt().toEpochSecond() - r.issuedAt().toEpochSecond()) / 3600;
      var issuedLocal = r.issuedAt().atZoneSameInstant(GroundTruth.ZONE);
      var targetLocal = r.observedAt().atZoneSameInstant(GroundTruth.ZONE);
      if (ahead == 1) {
        hourAhead++;
      } else {
        // a day-ahead request: issued at 18:00 local, for an hour of the next local day
        assertEquals(18, issuedLocal.getHour(), line);
        assertEquals(issuedLocal.toLocalDate().plusDays(1), targetLocal.toLocalDate(), line);
        dayAheadTargets.computeIfAbsent(targetLocal.toLocalDate(), d -> new TreeSet<>()).add(r.hub() + "@" + targetLocal);
      }
      requestPrice.put(r.hub() + "@" + h, r.price());
    }
    // every target day after the first has a request for each of its local hours and each active hub (12 or 13)
    java.time.LocalDate first = s.start().toLocalDate();
    for (int d = 1; d < s.days(); d++) {
      java.time.LocalDate day = first.plusDays(d);
      Set<String> got = dayAheadTargets.get(day);
      assertNotNull(got, "day-ahead requests for " + day);
      int hours = (int) ((day.plusDays(1).atStartOfDay(GroundTruth.ZONE).toEpochSecond()
          - day.atStartOfDay(GroundTruth.ZONE).toEpochSecond()) / 3600);   // 23, 24 or 25 (java.time)
      assertTrue(got.size() >= 12 * hours - 2 && got.size() <= 13 * hours, day + ": " + got.size() + " for " + hours + " hours");
    }
    assertTrue(hourAhead > 12 * 24 * (s.days() - 1), "hour-ahead requests " + hourAhead);
    // Documented: a request's price is the published price of its target hour. An actual missing from
    // the stream can only be a late one of the last day (due after the stream's last arrival).
    int lastHour = totalHours(s) - 1;
    for (Map.Entry<String, Double> e : requestPrice.entrySet()) {
      Double actual = actualPrice.get(e.getKey());
      if (actual == null) {
        int h = Integer.parseInt(e.getKey().substring(e.getKey().indexOf('@') + 1));
        assertTrue(h > lastHour - GroundTruth.LATE_EXTRA_HOURS - 2, "no actual for " + e.getKey());
        continue;
      }
      assertEquals(actual, e.getValue(), 1e-12, e.getKey());
    }
  }
}
