// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
package dev.runnel.demo;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.time.LocalDate;
import java.time.LocalDateTime;
import java.util.ArrayList;
import java.util.List;
import java.util.Set;
import java.util.TreeSet;
import org.junit.jupiter.api.Test;

/**
 * Local offsets follow the IANA rules for Europe/Amsterdam. Reference (from memory, EU summer-time
 * rule, common practice): clocks go from 02:00 +01:00 to 03:00 +02:00 on the last Sunday of March
 * (2026-03-29) and back from 03:00 +02:00 to 02:00 +01:00 on the last Sunday of October (2026-10-25).
 */
class DaylightSavingTest {

  private static List<String> observedAtOfHub(Settings s, String hub) {
    List<String> out = new ArrayList<>();
    new QuillmarshGenerator(s).lines().map(SchemaCheck::parse)
        .filter(r -> r != null && !r.forecast() && r.hub().equals(hub))
        .forEach(r -> out.add(r.observedAt().toString()));
    return out;
  }

  // no late actuals or corrections: the actuals of one hub then come in hour order, once each
  private static final Settings BASE = Settings.defaults().withCorrupt(false).withForecasts(false).withLateShare(0).withCorrectionShare(0);

  @Test void springForwardDay_has23LocalHours() {
    Settings s = BASE.withStart(LocalDateTime.of(2026, 3, 28, 0, 0)).withDays(3);
    assertEquals(LocalDate.of(2026, 3, 29).getDayOfWeek(), java.time.DayOfWeek.SUNDAY);
    List<String> at = observedAtOfHub(s, "QM-01");
    List<String> day = new ArrayList<>();
    for (String a : at) {
      if (a.startsWith("2026-03-29")) {
        day.add(a);
      }
    }
    assertEquals(23, day.size());
    assertEquals("2026-03-29T01:00+01:00", day.get(1));
    assertEquals("2026-03-29T03:00+02:00", day.get(2));   // 02:00 does not exist locally
    assertEquals(24 + 23 + 24, at.size());
  }

  @Test void fallBackDay_has25LocalHours_with0200Twice() {
    Settings s = BASE.withStart(LocalDateTime.of(2026, 10, 24, 0, 0)).withDays(3);
    List<String> day = new ArrayList<>();
    for (String a : observedAtOfHub(s, "QM-07")) {
      if (a.startsWith("2026-10-25")) {
        day.add(a);
      }
    }
    assertEquals(25, day.size());
    assertEquals("2026-10-25T02:00+02:00", day.get(2));
    assertEquals("2026-10-25T02:00+01:00", day.get(3));
  }

  @Test void winterAndSummerOffsetsBothAppear_inTheDefaultYear() {
    Set<String> offsets = new TreeSet<>();
    new QuillmarshGenerator(BASE).lines().forEach(l -> {
      int i = l.indexOf("\"observed_at\":\"");
      String at = l.substring(i + 15, l.indexOf('"', i + 15));
      offsets.add(at.substring(at.length() - 6));
      assertTrue(at.length() == 25, at);   // uuuu-MM-ddTHH:mm:ss+hh:mm
    });
    assertEquals(Set.of("+01:00", "+02:00"), offsets);
  }

  @Test void sampleFile_containsTheSpringForwardDay() {
    List<String> at = observedAtOfHub(Settings.sample(), "QM-01");
    assertTrue(at.contains("2026-03-29T01:00+01:00") && at.contains("2026-03-29T03:00+02:00"));
    assertTrue(at.stream().noneMatch(a -> a.startsWith("2026-03-29T02:")));
  }
}
