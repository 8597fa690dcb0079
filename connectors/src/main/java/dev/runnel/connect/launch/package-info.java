/**
 * Starting a live pipeline for a person at a terminal: the broker (embedded or not), the
 * exactly-once runner, the web view, the progress line and the summary on stop, wired once for
 * {@code run} and {@code demo}.
 */
package dev.runnel.connect.launch;
