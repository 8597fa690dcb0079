/**
 * The pipeline configuration: YAML read by {@link dev.runnel.core.config.ConfigLoader} into
 * immutable values ({@link dev.runnel.core.config.PipelineConfig} and its parts), each checked
 * with a message that names the key path, the bad value and what is allowed.
 */
package dev.runnel.core.config;
