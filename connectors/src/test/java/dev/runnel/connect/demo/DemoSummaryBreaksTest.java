package dev.runnel.connect.demo;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.runnel.demo.ChangeSchedule;
import dev.runnel.demo.Settings;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * The demo summary lists the weight-break alarms carried in the snapshots (issue 17): each once although a
 * snapshot carries it for several snapshots, in words (time, column, weight before -> after with units, z), and
 * puts a temperature_c break after the planned °F hours down to that incident (the generator's schedule), and
 * nothing else.
 */
class DemoSummaryBreaksTest {

  private static final ObjectMapper JSON = new ObjectMapper();
  private static final Settings SETTINGS = Settings.defaults().withDays(28);

  private static ObjectNode snapshot(Instant t, JsonNode... alarms) {
    ObjectNode s = JSON.createObjectNode();
    s.put("event_time", t.toString());
    s.put("ready", false);
    s.putArray("alarms").addAll(List.of(alarms));
    return s;
  }

  private static ObjectNode alarm(String kind, String column, String direction, Instant firedAt, double score,
                                  double before, double after) {
    ObjectNode a = JSON.createObjectNode();
    a.put("kind", kind);
    if (column != null) {
      a.put("column", column);
    }
    a.put("direction", direction);
    a.put("fired_at", firedAt.toString());
    a.put("score", score);
    a.put("threshold", 4.75);
    a.put("baseline_value", before);
    a.put("current_value", after);
    return a;
  }

  @Test
  void weightBreaksAreListedOnceInWordsAndTheFahrenheitOneIsPutDownToTheIncident() {
    ChangeSchedule sch = ChangeSchedule.of(SETTINGS);
    Instant fTo = ChangeSchedule.localTime(SETTINGS, sch.fahrenheitFirstHour() + sch.fahrenheitHours()).toInstant();
    Instant fFrom = ChangeSchedule.localTime(SETTINGS, sch.fahrenheitFirstHour()).toInstant();
    Instant tariff = ChangeSchedule.localTime(SETTINGS, sch.tariffChangeHour()).toInstant();
    Instant breakAt = fTo.plus(Duration.ofHours(30));
    // a break on another column before the incident: listed, put down to no planned change
    Instant earlyAt = fFrom.minus(Duration.ofDays(2));
    JsonNode early = alarm("weight_break", "hub=QM-07", "up", earlyAt, 5.0, 1.25, 2.5);
    JsonNode temp = alarm("weight_break", "temperature_c", "down", breakAt, 5.2, 0.5, 0.004);
    // the changed-weight alarm is a different kind: not a weight break
    JsonNode changed = alarm("changed_weight", "price_per_kwh", "down", tariff.plus(Duration.ofDays(2)), 4.8, -18, -36);
    List<JsonNode> snaps = new ArrayList<>();
    snaps.add(snapshot(earlyAt.plus(Duration.ofHours(6)), early));
    snaps.add(snapshot(earlyAt.plus(Duration.ofHours(12)), early));
    snaps.add(snapshot(breakAt.plus(Duration.ofHours(6)), temp));
    snaps.add(snapshot(breakAt.plus(Duration.ofHours(12)), temp));
    snaps.add(snapshot(breakAt.plus(Duration.ofHours(18)), temp));
    snaps.add(snapshot(tariff.plus(Duration.ofDays(2)), changed));
    DemoSummary s = DemoSummary.of(SETTINGS, 100, snaps, List.of(), List.of(), List.of());

    assertEquals(2, s.breaks().size(), "each break once: " + s.breaks());
    DemoSummary.WeightBreak b = s.breakAfter(DemoSummary.FAHRENHEIT_INCIDENT);
    assertEquals("temperature_c", b.column());
    assertEquals(breakAt, b.firedAt());
    assertEquals(-5.2, b.z(), 0.0, "signed: the weight fell");
    assertEquals(0.5, b.before(), 0.0);
    assertEquals(0.004, b.after(), 0.0);
    assertNull(s.breaks().get(0).follows(), "a break before the incident follows no planned change");
    assertNull(s.breakAfter(DemoSummary.TARIFF_CHANGE), "the changed-weight alarm is not a weight break");

    String text = DemoSummaryHorizonsTest.printed(s);
    assertTrue(text.contains("weight-break scan (kept all the time): 2 columns named"), text);
    assertTrue(text.contains("temperature_c 0.5000 -> 0.0040 sessions per °C (z -5.2)"), text);
    assertTrue(text.contains("hub=QM-07 1.250 -> 2.500 sessions (level vs the others) (z +5.0), after no planned change"), text);
    assertTrue(text.matches("(?s).*temperatures sent in °F.*\\n.*\\n.*weight break .*temperature_c.*, 30 h after the last °F hour\\n.*"),
        "under the incident's row: " + text);
    assertTrue(text.contains("no weight break on the price within 7 days"), text);
  }

  @Test
  void aTemperatureBreakLongAfterTheIncidentIsNotPutDownToIt() {
    ChangeSchedule sch = ChangeSchedule.of(SETTINGS);
    Instant fTo = ChangeSchedule.localTime(SETTINGS, sch.fahrenheitFirstHour() + sch.fahrenheitHours()).toInstant();
    Instant late = fTo.plus(Duration.ofDays(DemoSummary.BREAK_AFTER_FAHRENHEIT_DAYS)).plus(Duration.ofHours(1));
    DemoSummary s = DemoSummary.of(SETTINGS, 100,
        List.of(snapshot(late, alarm("weight_break", "temperature_c", "up", late, 6.0, 0.2, 0.6))), List.of(), List.of(), List.of());
    assertEquals(1, s.breaks().size());
    assertNull(s.breakAfter(DemoSummary.FAHRENHEIT_INCIDENT));
    String text = DemoSummaryHorizonsTest.printed(s);
    assertTrue(text.contains("no weight break on temperature_c within 3 days") && text.contains("after no planned change"), text);
  }
}
