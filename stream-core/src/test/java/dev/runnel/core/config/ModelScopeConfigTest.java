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
  void globalLoadsWithAWarningThatTheRunnerDoesNotShareYet() {
    PipelineConfig c = ConfigLoader.parse(BASE + "model:\n  scope: global\n  forgetting: {half_life: P4D}\n", "m.yaml");
    assertEquals(ModelScope.GLOBAL, c.model().scope());
    ConfigWarning w = c.warnings().stream().filter(x -> x.key().equals("model.scope")).findFirst().orElseThrow();
    assertTrue(w.message().contains("does not share between partitions yet"), w.message());
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
