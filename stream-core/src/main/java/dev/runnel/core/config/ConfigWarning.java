package dev.runnel.core.config;

/**
 * A configuration that loads but probably does not do what its author meant (a key left out whose
 * default is surprising, a former key name). The commands print these once at start, on stderr.
 *
 * @param key the key path the warning is about, e.g. {@code input.event_time}
 * @param message the whole line: starts with the key path, says what happens and how to fix it
 */
public record ConfigWarning(String key, String message) {
  @Override public String toString() { return message; }
}
