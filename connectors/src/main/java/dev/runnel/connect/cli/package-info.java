/** The {@code runnel} command line: verbs {@code run}, {@code demo}, {@code replay}, {@code broker}, {@code backtest}, {@code record}, {@code load}. */
package dev.runnel.connect.cli;
