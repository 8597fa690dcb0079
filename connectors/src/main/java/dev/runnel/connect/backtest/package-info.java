/**
 * Backtest by replay: sources (a recorded topic with a start and end, a plain or recorded JSON
 * Lines file), the replay driver (sequential, or one reader and one worker thread per configuration:
 * {@link dev.runnel.connect.backtest.ParallelReplay}), the recorder and loader between topics and
 * files, and the report writers (terminal table, JSON, self-contained HTML with SVG plots). Every
 * number comes from {@link dev.runnel.core.evaluate}.
 */
package dev.runnel.connect.backtest;
