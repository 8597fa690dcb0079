package dev.runnel.core.feature;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.record.EventRecord;
import java.time.DayOfWeek;
import java.time.Instant;
import java.time.LocalDate;
import java.time.LocalDateTime;
import java.time.ZoneId;
import java.time.ZonedDateTime;
import java.util.Random;
import org.junit.jupiter.api.Test;

/** Cyclic time encodings against java.time and the IANA zone rules (via java.time). */
class TimeEncodingTest {

  private static final ZoneId AMS = ZoneId.of("Europe/Amsterdam");

  private static Featurizer featurizer(String zone) {
    PipelineConfig c = TestConfigs.parse("name: t\n"
        + "input:\n  fields: {y: number}\n  time_zone: " + zone + "\n"
        + "target: y\n"
        + "features:\n"
        + "  - {kind: cyclic, cycle: hour_of_day, harmonics: 2}\n"
        + "  - {kind: cyclic, cycle: day_of_week}\n"
        + "  - {kind: cyclic, cycle: day_of_year}\n");
    return new Featurizer(c);
  }

  private static double[] row(Featurizer f, long t) {
    double[] out = new double[f.maxDimension()];
    f.encode(new EventRecord(f.config().input().schema()), t, out);
    return out;
  }

  @Test void layout_namesSinCosPairsPerHarmonic() {
    Featurizer f = featurizer("UTC");
    assertEquals(java.util.List.of("constant", "hour_of_day.sin1", "hour_of_day.cos1", "hour_of_day.sin2", "hour_of_day.cos2",
        "day_of_week.sin1", "day_of_week.cos1", "day_of_year.sin1", "day_of_year.cos1"), f.columnNames());
  }

  @Test void weekday_isIsoNumberingOverTenYears() {
    // Reference: java.time DayOfWeek.getValue() (ISO 8601: Monday = 1).
    Featurizer f = featurizer("Europe/Amsterdam");
    LocalCalendar cal = new LocalCalendar(AMS);
    for (LocalDate d = LocalDate.of(2020, 1, 1); d.isBefore(LocalDate.of(2030, 1, 1)); d = d.plusDays(1)) {
      for (int hour : new int[] {0, 12, 23}) {
        ZonedDateTime z = d.atTime(hour, 15).atZone(AMS);
        long t = z.toInstant().toEpochMilli();
        int iso = z.getDayOfWeek().getValue();
        assertEquals(iso, cal.isoDayOfWeek(t), z.toString());
        double[] r = row(f, t);
        assertEquals(StrictMath.sin(2 * Math.PI * (iso - 1) / 7.0), r[5], 0.0, z.toString());
        assertEquals(StrictMath.cos(2 * Math.PI * (iso - 1) / 7.0), r[6], 0.0, z.toString());
      }
    }
    assertEquals(1, DayOfWeek.MONDAY.getValue());
    assertEquals(1, cal.isoDayOfWeek(Instant.parse("2026-03-30T10:00:00Z").toEpochMilli()));
  }

  @Test void dstTransitions_encodeTheLocalHour() {
    // Reference: IANA rules for Europe/Amsterdam through java.time. Spring 2026-03-29: 01:00 UTC
    // goes from +01:00 to +02:00; autumn 2026-10-25: 01:00 UTC goes back to +01:00.
    Featurizer f = featurizer("Europe/Amsterdam");
    long spring = Instant.parse("2026-03-29T01:30:00Z").toEpochMilli();
    double[] r = row(f, spring);
    assertEquals(Math.sin(2 * Math.PI * 3.5 / 24), r[1], 1e-15, "01:30 UTC is 03:30 local");
    assertEquals(Math.cos(2 * Math.PI * 3.5 / 24), r[2], 1e-15);
    double[] before = row(f, Instant.parse("2026-03-29T00:30:00Z").toEpochMilli());
    assertEquals(Math.sin(2 * Math.PI * 1.5 / 24), before[1], 1e-15, "00:30 UTC is 01:30 local");
    long a1 = Instant.parse("2026-10-25T00:30:00Z").toEpochMilli();
    long a2 = Instant.parse("2026-10-25T01:30:00Z").toEpochMilli();
    double[] r1 = row(f, a1);
    double[] r2 = row(f, a2);
    assertEquals(Math.sin(2 * Math.PI * 2.5 / 24), r1[1], 1e-15, "00:30 UTC is 02:30 CEST");
    assertEquals(r1[1], r2[1], 0.0, "01:30 UTC is 02:30 CET: the same local hour");
    assertEquals(r1[2], r2[2], 0.0);
  }

  @Test void localCalendar_matchesJavaTimeOnRandomInstantsInAnyOrder() {
    // Reference: java.time ZonedDateTime in Europe/Amsterdam (local time of day, day of year, year length).
    Random rnd = new Random(99L);
    LocalCalendar cal = new LocalCalendar(AMS);
    long start = Instant.parse("1975-01-01T00:00:00Z").toEpochMilli();
    long span = Instant.parse("2045-01-01T00:00:00Z").toEpochMilli() - start;
    long t = start;
    for (int i = 0; i < 50_000; i++) {
      // mostly forward steps of up to 3 h, sometimes a jump anywhere
      t = rnd.nextInt(20) == 0 ? start + (long) (rnd.nextDouble() * span) : t + rnd.nextInt(3 * 3_600_000);
      ZonedDateTime z = Instant.ofEpochMilli(t).atZone(AMS);
      double frac = z.toLocalTime().toNanoOfDay() / 1e6 / 86_400_000.0;
      assertEquals(frac, cal.dayFraction(t), 1e-12, z.toString());
      assertEquals(z.getDayOfYear(), cal.dayOfYear(t), z.toString());
      assertEquals(z.toLocalDate().lengthOfYear(), cal.daysInYear(t), z.toString());
      assertEquals(z.getDayOfWeek().getValue(), cal.isoDayOfWeek(t), z.toString());
    }
  }

  @Test void localCalendar_backAndForthAcrossTransitions_matchesJavaTimeAndStopsAllocating() {
    // Reference: java.time ZoneRules#getOffset for each instant.
    Random rnd = new Random(7L);
    for (String zone : new String[] {"Europe/Amsterdam", "America/New_York", "Australia/Lord_Howe", "Asia/Kolkata", "UTC"}) {
      java.time.ZoneId id = java.time.ZoneId.of(zone);
      LocalCalendar cal = new LocalCalendar(id);
      long base = Instant.parse("2026-03-01T00:00:00Z").toEpochMilli();
      long window = 400L * 86_400_000L; // about three transitions in zones with daylight saving time
      for (int i = 0; i < 40_000; i++) {
        long t = base + (long) (rnd.nextDouble() * window);
        if (i % 7 == 0) t = base + (long) (rnd.nextDouble() * 200L * 365 * 86_400_000L) - 100L * 365 * 86_400_000L;
        long expected = t + id.getRules().getOffset(Instant.ofEpochMilli(t)).getTotalSeconds() * 1000L;
        assertEquals(expected, cal.localMillis(t), zone + " at " + Instant.ofEpochMilli(t));
      }
      java.lang.management.ThreadMXBean tmx = java.lang.management.ManagementFactory.getThreadMXBean();
      if (!(tmx instanceof com.sun.management.ThreadMXBean sun) || !sun.isThreadAllocatedMemorySupported()) continue;
      long[] times = new long[4096];
      for (int i = 0; i < times.length; i++) times[i] = base + (long) (rnd.nextDouble() * window);
      long tid = Thread.currentThread().getId();
      long least = Long.MAX_VALUE;
      // the least of five measurements: the JVM's own work (compiling, deoptimizing) can be counted
      // once, an allocation per call would show in every measurement (20 * 4096 calls)
      for (int attempt = 0; attempt < 5; attempt++) {
        long before = sun.getThreadAllocatedBytes(tid);
        long sum = sweep(cal, times, 20);
        least = Math.min(least, sun.getThreadAllocatedBytes(tid) - before);
        assertTrue(sum != 0);
      }
      // measured 0 bytes; the bound leaves room for the counter itself
      assertTrue(least < 1024, zone + ": allocated " + least + " bytes");
    }
  }

  private static long sweep(LocalCalendar cal, long[] times, int rounds) {
    long sum = 0;
    for (int k = 0; k < rounds; k++) {
      for (int i = 0; i < times.length; i++) sum += cal.localMillis(times[i]);
    }
    return sum;
  }

  @Test void lateEveningAndEarlyMorning_landCloseOnTheCircle() {
    // Common practice: one hour apart on a 24 h circle is a chord of 2 sin(pi/24).
    Featurizer f = featurizer("UTC");
    double[] late = row(f, Instant.parse("2026-06-01T23:30:00Z").toEpochMilli());
    double[] early = row(f, Instant.parse("2026-06-02T00:30:00Z").toEpochMilli());
    double[] noon = row(f, Instant.parse("2026-06-02T11:30:00Z").toEpochMilli());
    double d = Math.hypot(late[1] - early[1], late[2] - early[2]);
    assertTrue(d <= 2 * Math.sin(Math.PI / 24) + 1e-12, "distance " + d);
    assertTrue(Math.hypot(late[1] - noon[1], late[2] - noon[2]) > 1.99, "opposite hours are far apart");
  }

  @Test void encodings_areExactlyPeriodic() {
    Featurizer f = featurizer("UTC");
    Random rnd = new Random(3L);
    for (int i = 0; i < 1_000; i++) {
      long t = 1_500_000_000_000L + (long) (rnd.nextDouble() * 1e12);
      double[] a = row(f, t);
      double[] day = row(f, t + 86_400_000L);
      double[] week = row(f, t + 7 * 86_400_000L);
      for (int k = 1; k <= 4; k++) assertEquals(a[k], day[k], 0.0, "hour encoding, column " + k);
      assertEquals(a[5], week[5], 0.0);
      assertEquals(a[6], week[6], 0.0);
      for (int k = 1; k <= 4; k++) assertEquals(a[k], week[k], 0.0);
    }
  }

  @Test void dayOfYear_usesTheLengthOfThatYear() {
    // Reference: java.time LocalDate.getDayOfYear / lengthOfYear; 2024 is a leap year (common practice).
    Featurizer f = featurizer("UTC");
    LocalCalendar cal = new LocalCalendar(ZoneId.of("UTC"));
    long lastOfLeap = LocalDateTime.of(2024, 12, 31, 12, 0).toInstant(java.time.ZoneOffset.UTC).toEpochMilli();
    assertEquals(366, cal.dayOfYear(lastOfLeap));
    assertEquals(366, cal.daysInYear(lastOfLeap));
    assertEquals(60, cal.dayOfYear(LocalDateTime.of(2024, 2, 29, 0, 0).toInstant(java.time.ZoneOffset.UTC).toEpochMilli()));
    long lastOfCommon = LocalDateTime.of(2023, 12, 31, 12, 0).toInstant(java.time.ZoneOffset.UTC).toEpochMilli();
    assertEquals(365, cal.dayOfYear(lastOfCommon));
    assertEquals(365, cal.daysInYear(lastOfCommon));
    assertEquals(StrictMath.sin(2 * Math.PI * 365 / 366.0), row(f, lastOfLeap)[7], 0.0);
    assertEquals(Math.sin(2 * Math.PI * 364 / 365.0), row(f, lastOfCommon)[7], 0.0);
    long firstOfYear = LocalDateTime.of(2025, 1, 1, 0, 0).toInstant(java.time.ZoneOffset.UTC).toEpochMilli();
    assertEquals(0.0, row(f, firstOfYear)[7], 0.0);
    assertEquals(1.0, row(f, firstOfYear)[8], 0.0);
  }
}
