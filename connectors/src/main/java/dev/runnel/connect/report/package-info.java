/**
 * The backtest report writers: a terminal table, a JSON file and a self-contained HTML page with
 * SVG plots. They only format what {@link dev.runnel.core.evaluate.BacktestResult} holds.
 */
package dev.runnel.connect.report;
