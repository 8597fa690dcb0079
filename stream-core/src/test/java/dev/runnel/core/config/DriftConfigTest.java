package dev.runnel.core.config;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;

import org.junit.jupiter.api.Test;

/** The {@code drift} section: defaults, every key, and messages naming the key. */
class DriftConfigTest {

  static final String BASE = "name: d\ninput: {fields: {x: number, y: number}}\ntarget: y\nfeatures: [{kind: numeric, field: x}]\n";

  @Test
  void defaultsWhenAbsentAndEveryKeyWhenGiven() {
    assertEquals(PipelineConfig.Drift.DEFAULTS, ConfigLoader.parse(BASE, "a.yaml").drift());
    PipelineConfig.Drift d = ConfigLoader.parse(BASE + "drift: {weight_alarm_se: 3.5, baseline: snapshots_ago,"
        + " baseline_snapshots: 12, error_test: off, error_allowance: 0.2, error_threshold: 50,"
        + " error_warmup_records: 300, alarm_hold_snapshots: 2}\n", "b.yaml").drift();
    assertEquals(new PipelineConfig.Drift(3.5, DriftBaseline.SNAPSHOTS_AGO, 12, ErrorTest.OFF, 0.2, 50, 300, 2), d);
  }

  @Test
  void wrongValuesNameTheKey() {
    assertEquals("drift.baseline: \"rolling\" is not allowed; use one of first_ready_snapshot, previous_snapshot, snapshots_ago",
        assertThrows(ConfigException.class, () -> ConfigLoader.parse(BASE + "drift: {baseline: rolling}\n", "c")).getMessage());
    assertEquals("drift.baseline_snapshots: only allowed with baseline: snapshots_ago; remove it or set baseline: snapshots_ago",
        assertThrows(ConfigException.class, () -> ConfigLoader.parse(BASE
            + "drift: {baseline: previous_snapshot, baseline_snapshots: 3}\n", "c")).getMessage());
    assertEquals("drift.error_threshold: 0 is not allowed; use a number greater than 0 (units of the absolute standardized error), e.g. 30",
        assertThrows(ConfigException.class, () -> ConfigLoader.parse(BASE + "drift: {error_threshold: 0}\n", "c")).getMessage());
    assertEquals("drift.weight_alarm: unknown key; did you mean weight_alarm_se?",
        assertThrows(ConfigException.class, () -> ConfigLoader.parse(BASE + "drift: {weight_alarm: 4}\n", "c")).getMessage());
  }
}
