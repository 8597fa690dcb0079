/**
 * What a backtest computes, pure and deterministic: prequential error metrics overall, over time
 * and per segment, the Diebold–Mariano test of equal predictive accuracy with a
 * heteroskedasticity-and-autocorrelation-consistent variance, and the one-pass replay of several
 * configurations through the same {@link dev.runnel.core.pipeline.PipelineStep} that runs live
 * ({@link dev.runnel.core.evaluate.Backtest}). No I/O: sources and report writers live in the
 * connectors module.
 */
package dev.runnel.core.evaluate;
