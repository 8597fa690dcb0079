/**
 * Backtest by replay: sources (a recorded topic with a start and end, a plain or recorded JSON
 * Lines file), the recorder and loader between topics and files, and the report writers (terminal
 * table, JSON, self-contained HTML with SVG plots). Every number comes from
 * {@link dev.runnel.core.evaluate}.
 */
package dev.runnel.connect.backtest;
