package dev.runnel.core.feature;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;

/** Builds configurations for feature tests from YAML. */
final class TestConfigs {
  private TestConfigs() { }

  static PipelineConfig parse(String yaml) { return ConfigLoader.parse(yaml, "test.yaml"); }
}
