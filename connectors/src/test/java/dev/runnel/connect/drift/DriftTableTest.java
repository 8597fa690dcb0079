package dev.runnel.connect.drift;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.time.Instant;
import java.util.Locale;
import org.junit.jupiter.api.Test;

/** The drift table on hand-made snapshots with hand-computed scores. */
class DriftTableTest {

  private static final ObjectMapper JSON = new ObjectMapper();

  static JsonNode snap(int index, double wa, double sea, double wb, double seb, String alarms) throws Exception {
    String t = Instant.parse("2026-02-01T00:00:00Z").plusSeconds(3600L * index).toString();
    return JSON.readTree(String.format(Locale.ROOT, "{\"partition\":0,\"index\":%d,\"event_time\":\"%s\",\"ready\":true,"
        + "\"noise_sd\":1.5,\"metrics\":{\"recent\":{\"mae\":1.2,\"rmse\":1.6}},"
        + "\"columns\":[{\"name\":\"a\",\"raw_weight\":%s,\"raw_std_error\":%s,\"drift_score\":0.5},"
        + "{\"name\":\"b\",\"raw_weight\":%s,\"raw_std_error\":%s,\"drift_score\":-7.25}],\"alarms\":[%s]}",
        index, t, wa, sea, wb, seb, alarms));
  }

  @Test
  void scoresAgainstTheFirstSnapshotWorkedByHand() throws Exception {
    DriftTable t = new DriftTable("first", 2, null, null);
    assertTrue(t.take(snap(0, 1.0, 0.3, 2.0, 0.4, "")).contains("(no scores yet)"));
    // a: (1.6 − 1.0)/√(0.3² + 0.4²) = 0.6/0.5 = +1.2;  b: (0.8 − 2.0)/√(0.4² + 0.3²) = −1.2/0.5 = −2.4
    String line = t.take(snap(1, 1.6, 0.4, 0.8, 0.3, ""));
    assertTrue(line.contains("b 2.000→0.8000 (-2.4), a 1.000→1.600 (+1.2)"), line);
  }

  @Test
  void pipelineBaselineShowsThePublishedScoresAndAlarms() throws Exception {
    DriftTable t = new DriftTable("pipeline", 1, null, null);
    String line = t.take(snap(3, 1, 0.1, 2, 0.1,
        "{\"kind\":\"weight\",\"column\":\"b\",\"direction\":\"down\"},"
            + "{\"kind\":\"error_level\",\"direction\":\"up\",\"fired_at\":\"2026-02-01T02:17:00Z\"}"));
    assertTrue(line.startsWith("3     2026-02-01T03:00Z    0    1.500      1.200       1.600  b 2.000 (-7.3)"), line);
    assertTrue(line.endsWith("| ALARM b down; error level up at 2026-02-01T02:17Z"), line);
  }

  @Test
  void aChangedWeightAlarmShowsTheNamedColumnBeforeAfterAndItsScore() throws Exception {
    DriftTable t = new DriftTable("pipeline", 1, null, null);
    String line = t.take(snap(5, 1, 0.1, 2, 0.1,
        "{\"kind\":\"error_level\",\"direction\":\"up\",\"fired_at\":\"2026-02-01T02:17:00Z\"},"
            + "{\"kind\":\"changed_weight\",\"column\":\"price_per_kwh\",\"direction\":\"down\",\"score\":9.14,"
            + "\"baseline_value\":-15.5,\"current_value\":-46.25}"));
    assertTrue(line.endsWith("| ALARM error level up at 2026-02-01T02:17Z; CHANGED price_per_kwh -15.500→-46.250 (-9.1)"), line);
  }

  @Test
  void contrastsShowTheLevelsFurthestFromTheMeanInStandardErrors() throws Exception {
    JsonNode s = JSON.readTree("{\"partition\":0,\"index\":1,\"event_time\":\"2026-02-01T00:00:00Z\",\"ready\":true,"
        + "\"columns\":[],\"alarms\":[],\"contrasts\":[{\"feature\":\"gate\",\"reference\":\"mean_of_levels\","
        + "\"levels_total\":4,\"levels\":["
        + "{\"level\":\"A\",\"effect\":0.5,\"std_error\":0.5},"    // z 1
        + "{\"level\":\"B\",\"effect\":-1.2,\"std_error\":0.2},"   // z 6
        + "{\"level\":\"C\",\"effect\":0.9,\"std_error\":0.3},"    // z 3
        + "{\"level\":\"D\",\"effect\":-0.2,\"std_error\":0.1}]}]}"); // z 2
    String line = new DriftTable("pipeline", 1, null, null).take(s);
    assertTrue(line.endsWith("| gate vs mean: B -1.20±0.20, C +0.900±0.30, D -0.200±0.10"), line);
  }

  @Test
  void fromToAndAChosenBaselineByIndexAndTime() throws Exception {
    DriftTable t = new DriftTable("2", 1, DriftTable.Point.parse("2026-02-01T01:00:00Z", "--from"),
        DriftTable.Point.parse("3", "--to"));
    assertNull(t.take(snap(0, 1, 0.1, 1, 0.1, "")), "before --from");
    assertTrue(t.take(snap(1, 1, 0.1, 1, 0.1, "")).contains("(before the baseline)"));
    assertTrue(t.take(snap(2, 1, 0.1, 1, 0.1, "")).contains("(no scores yet)"), "the baseline itself");
    // a: (1.3 − 1)/√(0.1² + 0.1²) = 2.1213
    assertTrue(t.take(snap(3, 1.3, 0.1, 1, 0.1, "")).contains("a 1.000→1.300 (+2.1)"));
    assertNull(t.take(snap(4, 1, 0.1, 1, 0.1, "")), "after --to");
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> new DriftTable("yesterday", 3, null, null));
    assertTrue(e.getMessage().startsWith("--baseline: \"yesterday\" is not allowed"), e.getMessage());
  }

  @Test
  void controlCharactersPlantedInALevelAreEscaped() throws Exception {
    // issue #14 item 8: a category level carrying ESC [ 2 J (clear screen) reached the terminal as is
    String level = "hub=QM\\u001b[2J\\u001b[H"; // JSON escapes: the decoded level holds two ESC characters
    JsonNode s = JSON.readTree("{\"partition\":0,\"index\":1,\"event_time\":\"2026-02-01T00:00:00Z\",\"ready\":true,"
        + "\"columns\":[{\"name\":\"" + level + "\",\"raw_weight\":1.0,\"raw_std_error\":0.1,\"drift_score\":5.0}],"
        + "\"alarms\":[{\"kind\":\"weight\",\"column\":\"" + level + "\",\"direction\":\"up\"}]}");
    String line = new DriftTable("pipeline", 1, null, null).take(s);
    assertTrue(line.indexOf('\u001b') < 0, line);
    assertTrue(line.contains("hub=QM\\x1B[2J\\x1B[H 1.000 (+5.0)"), line);
    assertTrue(line.endsWith("ALARM hub=QM\\x1B[2J\\x1B[H up"), line);
  }
}
