package dev.runnel.core.config;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import org.junit.jupiter.api.Test;

/** {@code input.clock}: defaults, values, and messages that name the key, the value and the fix. */
class ClockConfigTest {

  static final String BASE = "name: c\ninput:\n  fields: {y: number, at: time}\n  event_time: {field: at}\n%s"
      + "target: y\nfeatures:\n  - {kind: cyclic, cycle: hour_of_day}\n";

  static PipelineConfig parse(String clock) {
    return ConfigLoader.parse(String.format(BASE, clock), "c.yaml");
  }

  @Test void absentSectionGivesTheDocumentedDefaults() {
    PipelineConfig.Clock c = parse("").input().clock();
    assertEquals(PipelineConfig.Clock.DEFAULTS, c);
    assertEquals(86_400_000L, c.maxAheadMillis()); // P1D, docs/configuration.md
    assertEquals(3, c.confirmRecords());
  }

  @Test void keysAreRead() {
    PipelineConfig.Clock c = parse("  clock: {max_ahead: PT6H, confirm_records: 5}\n").input().clock();
    assertEquals(6 * 3_600_000L, c.maxAheadMillis());
    assertEquals(5, c.confirmRecords());
    assertEquals(3, parse("  clock: {max_ahead: P7D}\n").input().clock().confirmRecords());
  }

  @Test void badValuesNameTheKey() {
    String m = assertThrows(ConfigException.class, () -> parse("  clock: {max_ahead: 3}\n")).getMessage();
    assertTrue(m.contains("input.clock.max_ahead") && m.contains("ISO 8601 duration"), m);
    m = assertThrows(ConfigException.class, () -> parse("  clock: {confirm_records: 0}\n")).getMessage();
    assertTrue(m.contains("input.clock.confirm_records"), m);
    m = assertThrows(ConfigException.class, () -> parse("  clock: {max_jump: P1D}\n")).getMessage();
    assertTrue(m.contains("max_jump"), m);
  }
}
