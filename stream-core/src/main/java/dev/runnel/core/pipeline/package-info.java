/**
 * The per-record job of one stream: decode, featurize, predict a priori, update the model, keep
 * prequential metrics and drift monitors, and say when a coefficient snapshot is due
 * ({@link dev.runnel.core.pipeline.PipelineStep}); the snapshot and output record formats
 * ({@link dev.runnel.core.pipeline.Snapshot}, {@link dev.runnel.core.pipeline.OutputJson}); and the
 * checkpoint that restores a stream bit for bit. Pure Java, one thread, no I/O.
 */
package dev.runnel.core.pipeline;
