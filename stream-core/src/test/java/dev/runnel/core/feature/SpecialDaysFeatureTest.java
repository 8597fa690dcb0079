package dev.runnel.core.feature;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigException;
import dev.runnel.core.record.EventRecord;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.time.LocalDate;
import java.time.ZoneId;
import java.time.ZonedDateTime;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code kind: special_days}: listed dates with days before and after, read as local dates in
 * {@code input.time_zone} (java.time is the reference for the local date); public holidays through
 * the holiday library, checked against dates computed or remembered independently (Easter by the
 * anonymous Gregorian algorithm; the Dutch King's Day rule and Bavaria's Epiphany, from memory);
 * dates from a file; and the configuration's errors.
 */
class SpecialDaysFeatureTest {

  private static String yaml(String feature, String zone) {
    return "name: s\ninput:\n  fields: {y: number}\n  time_zone: " + zone + "\ntarget: y\nfeatures:\n  - " + feature + "\n";
  }

  private static Featurizer featurizer(String feature, String zone) {
    return new Featurizer(TestConfigs.parse(yaml(feature, zone)));
  }

  private static double[] row(Featurizer f, long t) {
    EventRecord r = new EventRecord(f.config().input().schema());
    double[] out = new double[f.maxDimension()];
    f.encode(r, t, out);
    return java.util.Arrays.copyOf(out, f.dimension());
  }

  private static long at(String iso) { return Instant.parse(iso).toEpochMilli(); }

  @Test void listedDates_withDaysBeforeAndAfter_byTheLocalDate() {
    Featurizer f = featurizer("{kind: special_days, name: xmas, dates: [2026-12-25, 2026-12-26], days_before: 2, days_after: 1}", "Europe/Amsterdam");
    assertEquals(List.of("constant", "xmas", "xmas.before1", "xmas.before2", "xmas.after1"), f.columnNames());
    // columns: [constant, day, before1 (tomorrow special), before2 (in two days), after1 (yesterday special)]
    assertArrayEquals(new double[] {1, 0, 0, 1, 0}, row(f, at("2026-12-23T12:00:00Z")));
    assertArrayEquals(new double[] {1, 0, 1, 1, 0}, row(f, at("2026-12-24T12:00:00Z")));
    // 23:30 UTC on the 24th is 00:30 on the 25th in Amsterdam (java.time: CET is UTC+1 in December)
    assertEquals(25, ZonedDateTime.ofInstant(Instant.parse("2026-12-24T23:30:00Z"), ZoneId.of("Europe/Amsterdam")).getDayOfMonth());
    assertArrayEquals(new double[] {1, 1, 1, 0, 0}, row(f, at("2026-12-24T23:30:00Z")));
    assertArrayEquals(new double[] {1, 1, 0, 0, 1}, row(f, at("2026-12-26T08:00:00Z")));
    assertArrayEquals(new double[] {1, 0, 0, 0, 1}, row(f, at("2026-12-27T08:00:00Z")));
    assertArrayEquals(new double[] {1, 0, 0, 0, 0}, row(f, at("2026-12-28T08:00:00Z")));
    // back and forth: the remembered day does not leak into another
    assertArrayEquals(new double[] {1, 0, 1, 1, 0}, row(f, at("2026-12-24T12:00:00Z")));
    // the same instant in UTC is still the 24th
    Featurizer utc = featurizer("{kind: special_days, name: xmas, dates: [2026-12-25, 2026-12-26], days_before: 2, days_after: 1}", "UTC");
    assertArrayEquals(new double[] {1, 0, 1, 1, 0}, utc.columnNames().size() == 5 ? row(utc, at("2026-12-24T23:30:00Z")) : null);
  }

  /** Easter Sunday by the anonymous Gregorian algorithm (Meeus/Jones/Butcher; common practice). */
  static LocalDate easter(int y) {
    int a = y % 19, b = y / 100, c = y % 100, d = b / 4, e = b % 4, f = (b + 8) / 25, g = (b - f + 1) / 3;
    int h = (19 * a + b - d - g + 15) % 30, i = c / 4, k = c % 4, l = (32 + 2 * e + 2 * i - h - k) % 7;
    int m = (a + 11 * h + 22 * l) / 451;
    int month = (h + l - 7 * m + 114) / 31;
    int day = ((h + l - 7 * m + 114) % 31) + 1;
    return LocalDate.of(y, month, day);
  }

  private static boolean special(Featurizer f, LocalDate d) {
    return row(f, d.atTime(12, 0).atZone(ZoneId.of("Europe/Amsterdam")).toInstant().toEpochMilli())[1] == 1.0;
  }

  @Test void publicHolidays_ofACountryAndARegion_fromTheHolidayLibrary() {
    Featurizer nl = featurizer("{kind: special_days, holiday_country: NL}", "Europe/Amsterdam");
    assertEquals(List.of("constant", "special_day"), nl.columnNames());
    int holidays = 0;
    for (int y = 2019; y <= 2030; y++) {
      assertTrue(special(nl, easter(y).plusDays(1)), "Easter Monday " + y);
      assertTrue(!special(nl, easter(y).plusDays(2)), "the Tuesday after Easter " + y);
      assertTrue(special(nl, LocalDate.of(y, 12, 25)) && special(nl, LocalDate.of(y, 12, 26)), "Christmas " + y);
      for (LocalDate d = LocalDate.of(y, 1, 1); d.getYear() == y; d = d.plusDays(1)) if (special(nl, d)) holidays++;
    }
    assertTrue(holidays >= 12 * 9 && holidays <= 12 * 12, holidays + " Dutch public holidays in 12 years");
    // King's Day is 27 April, and 26 April when the 27th is a Sunday (from memory): 2025's was on the 26th
    assertTrue(special(nl, LocalDate.of(2026, 4, 27)));
    assertTrue(special(nl, LocalDate.of(2025, 4, 26)) && !special(nl, LocalDate.of(2025, 4, 27)));
    // Epiphany (6 January) is a public holiday in Bavaria and not in Berlin (from memory)
    Featurizer by = featurizer("{kind: special_days, holiday_country: de, holiday_region: BY}", "Europe/Berlin");
    Featurizer be = featurizer("{kind: special_days, holiday_country: de, holiday_region: be}", "Europe/Berlin");
    assertTrue(special(by, LocalDate.of(2026, 1, 6)));
    assertTrue(!special(be, LocalDate.of(2026, 1, 6)));
    assertTrue(special(by, LocalDate.of(2026, 10, 3)) && special(be, LocalDate.of(2026, 10, 3)), "German Unity Day in both");
  }

  @Test void listedDatesAndHolidaysTogether_andAYearBoundary() {
    Featurizer f = featurizer("{kind: special_days, holiday_country: nl, dates: [2026-12-31], days_after: 1, days_before: 1}", "Europe/Amsterdam");
    // 31 Dec listed; 1 Jan 2027 a public holiday (next year's calendar): the 31st is also the day before one
    assertArrayEquals(new double[] {1, 1, 1, 0}, row(f, at("2026-12-31T12:00:00Z")));
    assertArrayEquals(new double[] {1, 1, 0, 1}, row(f, at("2027-01-01T12:00:00Z")));
    assertArrayEquals(new double[] {1, 0, 0, 1}, row(f, at("2027-01-02T12:00:00Z")));
  }

  @Test void datesFromAFile(@TempDir Path dir) throws IOException {
    Path file = dir.resolve("closures.txt");
    Files.writeString(file, "# hub closures (invented)\n2026-03-02\n\n2026-03-09  # maintenance\n");
    Featurizer f = featurizer("{kind: special_days, name: closed, dates_file: '" + file + "', dates: [2026-03-16]}", "UTC");
    for (String d : List.of("2026-03-02", "2026-03-09", "2026-03-16")) assertEquals(1.0, row(f, at(d + "T10:00:00Z"))[1], d);
    assertEquals(0.0, row(f, at("2026-03-03T10:00:00Z"))[1]);
    Path bad = dir.resolve("bad.txt");
    Files.writeString(bad, "2026-03-02\n2026-02-30\n");
    ConfigException e = assertThrows(ConfigException.class, () -> TestConfigs.parse(yaml("{kind: special_days, dates_file: '" + bad + "'}", "UTC")));
    assertTrue(e.getMessage().startsWith("features[0].dates_file: ") && e.getMessage().contains("line 2") && e.getMessage().contains("2026-02-30"), e.getMessage());
    ConfigException missing = assertThrows(ConfigException.class,
        () -> TestConfigs.parse(yaml("{kind: special_days, dates_file: '" + dir.resolve("none.txt") + "'}", "UTC")));
    assertTrue(missing.getMessage().startsWith("features[0].dates_file: cannot read"), missing.getMessage());
  }

  @Test void wrongSettings_nameTheKeyTheValueAndTheFix() {
    ConfigException date = assertThrows(ConfigException.class, () -> TestConfigs.parse(yaml("{kind: special_days, dates: [2026-12-25, 2026-13-01]}", "UTC")));
    assertTrue(date.getMessage().startsWith("features[0].dates[1]: ") && date.getMessage().contains("2026-13-01") && date.getMessage().contains("ISO 8601 date"), date.getMessage());
    ConfigException country = assertThrows(ConfigException.class, () -> TestConfigs.parse(yaml("{kind: special_days, holiday_country: xx}", "UTC")));
    assertTrue(country.getMessage().startsWith("features[0].holiday_country: ") && country.getMessage().contains("\"xx\"")
        && country.getMessage().contains(" nl,"), country.getMessage());
    ConfigException region = assertThrows(ConfigException.class, () -> TestConfigs.parse(yaml("{kind: special_days, holiday_country: de, holiday_region: zz}", "UTC")));
    assertTrue(region.getMessage().startsWith("features[0].holiday_region: ") && region.getMessage().contains("use a region of de: ")
        && region.getMessage().contains("by"), region.getMessage());
    ConfigException alone = assertThrows(ConfigException.class, () -> TestConfigs.parse(yaml("{kind: special_days, holiday_region: by, dates: [2026-01-01]}", "UTC")));
    assertTrue(alone.getMessage().startsWith("features[0].holiday_region: only allowed with holiday_country"), alone.getMessage());
    ConfigException nothing = assertThrows(ConfigException.class, () -> TestConfigs.parse(yaml("{kind: special_days, days_before: 1}", "UTC")));
    assertTrue(nothing.getMessage().contains("no special days"), nothing.getMessage());
    ConfigException many = assertThrows(ConfigException.class, () -> TestConfigs.parse(yaml("{kind: special_days, dates: [2026-01-01], days_after: 8}", "UTC")));
    assertTrue(many.getMessage().startsWith("features[0].days_after: "), many.getMessage());
  }
}
