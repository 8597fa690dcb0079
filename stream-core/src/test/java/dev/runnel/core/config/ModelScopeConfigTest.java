package dev.runnel.core.config;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import org.junit.jupiter.api.Test;

/** The key {@code model.scope}: its default, the global choice's warning and check, and the fingerprint text. */
class ModelScopeConfigTest {

  static final String BASE = "name: m\ninput:\n  fields: {y: number, x: number}\ntarget: y\n"
      + "features:\n  - {kind: numeric, field: x}\n";

  /** The record {@link PipelineConfig.Model} was before {@code scope}: its text is the fingerprint's. */
  record Model(boolean constantTerm, double priorVariance, boolean diffuse, double forgettingFactor,
               long forgettingHalfLifeMillis, boolean windupGuard, double intervalLevel,
               double noiseHalfLifeRecords) { }

  @Test
  void theDefaultIsAModelPerPartitionWithTheFormerText() {
    PipelineConfig c = ConfigLoader.parse(BASE, "m.yaml");
    assertEquals(ModelScope.PARTITION, c.model().scope());
    assertTrue(c.warnings().stream().noneMatch(w -> w.key().equals("model.scope")), c.warnings().toString());
    PipelineConfig.Model m = new PipelineConfig.Model(true, 1.0, false, 0.999, 3_600_000L, true, 0.9, 500);
    Model former = new Model(true, 1.0, false, 0.999, 3_600_000L, true, 0.9, 500);
    assertEquals(former.toString(), m.toString(), "a model per partition keeps its checkpoints' fingerprint");
    PipelineConfig.Model global = new PipelineConfig.Model(true, 1.0, false, 0.999, 3_600_000L, true, 0.9, 500,
        ModelScope.GLOBAL);
    assertNotEquals(m.toString(), global.toString(), "the global scope shapes the state, so it changes the fingerprint");
  }

  @Test
  void globalLoadsWithoutAWarningAndWithItsSharePeriods() {
    PipelineConfig c = ConfigLoader.parse(BASE + "model:\n  scope: global\n  forgetting: {half_life: P4D}\n", "m.yaml");
    assertEquals(ModelScope.GLOBAL, c.model().scope());
    assertTrue(c.warnings().stream().noneMatch(w -> w.key().equals("model.scope")), c.warnings().toString());
    assertEquals(1000, c.model().shareEveryRecords());
    assertEquals(0, c.model().shareEveryMillis());
    PipelineConfig d = ConfigLoader.parse(BASE + "model:\n  scope: global\n  share_every_records: 0\n  share_every: PT1H\n",
        "m.yaml");
    assertEquals(0, d.model().shareEveryRecords());
    assertEquals(3_600_000L, d.model().shareEveryMillis());
  }

  @Test
  void globalWithStateThatCannotBeSharedIsRefusedByKeyWithTheWayOut() {
    ConfigException noConstant = assertThrows(ConfigException.class, () -> ConfigLoader.parse(
        BASE + "model:\n  scope: global\n  constant_term: false\n", "m.yaml"));
    assertTrue(noConstant.getMessage().contains("model.scope: global needs model.constant_term: true"), noConstant.getMessage());
    ConfigException never = assertThrows(ConfigException.class, () -> ConfigLoader.parse(
        BASE + "model:\n  scope: global\n  share_every_records: 0\n", "m.yaml"));
    assertTrue(never.getMessage().startsWith("model.share_every_records: 0") && never.getMessage().contains("model.share_every"),
        never.getMessage());
    ConfigException reset = assertThrows(ConfigException.class, () -> ConfigLoader.parse(
        BASE + "model:\n  scope: global\ndrift:\n  reset_to_records: 50\n", "m.yaml"));
    assertTrue(reset.getMessage().startsWith("drift.reset_to_records: 50 cannot be used with model.scope: global"),
        reset.getMessage());
    // the same settings with a model per partition load
    ConfigLoader.parse(BASE + "model:\n  constant_term: false\n", "m.yaml");
    ConfigLoader.parse(BASE + "drift:\n  reset_to_records: 50\n", "m.yaml");
  }

  @Test
  void globalWithAPerRecordFactorIsRefusedByName() {
    ConfigException e = assertThrows(ConfigException.class, () -> ConfigLoader.parse(
        BASE + "model:\n  scope: global\n  forgetting: {factor: 0.99}\n", "m.yaml"));
    assertTrue(e.getMessage().contains("model.scope: global needs forgetting by event time"), e.getMessage());
    ConfigException word = assertThrows(ConfigException.class, () -> ConfigLoader.parse(
        BASE + "model:\n  scope: everywhere\n", "m.yaml"));
    assertTrue(word.getMessage().contains("model.scope"), word.getMessage());
  }
}
