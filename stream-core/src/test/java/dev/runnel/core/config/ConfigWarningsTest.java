package dev.runnel.core.config;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.List;
import org.junit.jupiter.api.Test;

/** The warnings a configuration loads with, and the former key names that still work. */
class ConfigWarningsTest {

  private static final String FIELDS = "name: m\ninput:\n  fields: {y: number, x: number, at: time}\n";
  private static final String EVENT_TIME = "  event_time: {field: at}\n";
  private static final String REST = "target: y\nfeatures:\n  - {kind: numeric, field: x}\n";
  private static final String CYCLIC = "  - {kind: cyclic, cycle: hour_of_day}\n";

  private static List<String> keys(PipelineConfig c) {
    return c.warnings().stream().map(ConfigWarning::key).toList();
  }

  @Test void noEventTime_warnsNamingTheKeyWhatHappensAndTheFix() {
    PipelineConfig c = ConfigLoader.parse(FIELDS + REST, "m.yaml");
    assertEquals(List.of("input.event_time"), keys(c));
    String m = c.warnings().get(0).message();
    assertTrue(m.startsWith("input.event_time: not given"), m);
    assertTrue(m.contains("1970-01-01"), m);
    assertTrue(m.contains("event_time: {field: observed_at, format: iso8601}"), m);
  }

  @Test void calendarFeatureWithoutTimeZone_warnsThatUtcIsUsed() {
    PipelineConfig c = ConfigLoader.parse(FIELDS + EVENT_TIME + REST + CYCLIC, "m.yaml");
    assertEquals(List.of("input.time_zone"), keys(c));
    String m = c.warnings().get(0).message();
    assertTrue(m.contains("(hour_of_day)") && m.contains("UTC") && m.contains("time_zone: Europe/Amsterdam"), m);
  }

  @Test void explicitTimeZoneOrNoCalendarFeature_noTimeZoneWarning() {
    assertEquals(List.of(), keys(ConfigLoader.parse(FIELDS + EVENT_TIME + "  time_zone: UTC\n" + REST + CYCLIC, "m.yaml")));
    assertEquals(List.of(), keys(ConfigLoader.parse(FIELDS + EVENT_TIME + REST, "m.yaml")));
  }

  @Test void bothMissing_bothWarnings_inOrder() {
    assertEquals(List.of("input.event_time", "input.time_zone"), keys(ConfigLoader.parse(FIELDS + REST + CYCLIC, "m.yaml")));
  }

  @Test void formerKeyWindupGuard_stillWorks_withAWarningNamingTheNewKey() {
    PipelineConfig c = ConfigLoader.parse(FIELDS + EVENT_TIME + REST + "model: {windup_guard: false}\n", "m.yaml");
    assertFalse(c.model().windupGuard());
    assertEquals(List.of("model.windup_guard"), keys(c));
    assertEquals("model.windup_guard is renamed; write forget_towards_prior: instead (the old name still works for now)",
        c.warnings().get(0).message());
    assertFalse(ConfigLoader.parse(FIELDS + EVENT_TIME + REST + "model: {forget_towards_prior: false}\n", "m.yaml")
        .model().windupGuard());
  }

  @Test void formerKeyAndNewKeyTogether_isAnError() {
    ConfigException e = assertThrows(ConfigException.class, () -> ConfigLoader.parse(
        FIELDS + EVENT_TIME + REST + "model: {windup_guard: false, forget_towards_prior: true}\n", "m.yaml"));
    assertEquals("model.windup_guard: both windup_guard and its new name forget_towards_prior are given; keep only forget_towards_prior",
        e.getMessage());
  }

  @Test void formerKey_isCheckedLikeTheNewOne_andNamedInTheError() {
    ConfigException e = assertThrows(ConfigException.class, () -> ConfigLoader.parse(
        FIELDS + EVENT_TIME + REST + "model: {windup_guard: 3}\n", "m.yaml"));
    assertEquals("model.windup_guard: 3 is not allowed; use true or false", e.getMessage());
  }

  @Test void formerWordDiffuse_stillMeansNoPrior_withAWarning() {
    PipelineConfig c = ConfigLoader.parse(FIELDS + EVENT_TIME + REST + "model: {prior_variance: diffuse}\n", "m.yaml");
    assertTrue(c.model().diffuse());
    assertEquals(Double.POSITIVE_INFINITY, c.model().priorVariance());
    assertEquals(List.of("model.prior_variance"), keys(c));
    assertTrue(c.warnings().get(0).message().contains("write prior_variance: no_prior"), c.warnings().get(0).message());
    PipelineConfig n = ConfigLoader.parse(FIELDS + EVENT_TIME + REST + "model: {prior_variance: no_prior}\n", "m.yaml");
    assertEquals(c.model(), n.model());
    assertEquals(List.of(), keys(n));
  }

  @Test void warningsSurviveARename() {
    PipelineConfig c = ConfigLoader.parse(FIELDS + REST, "m.yaml").withNameAndTopic("other", "t");
    assertEquals(List.of("input.event_time"), keys(c));
  }
}
