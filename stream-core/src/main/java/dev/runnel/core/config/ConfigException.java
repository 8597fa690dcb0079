package dev.runnel.core.config;

/**
 * A configuration mistake. The message has the form {@code <key path>: <what is wrong>; <what to
 * do>}, e.g. {@code features[2].max_levels: -3 is not allowed; use a whole number from 1 to 1000000}.
 */
public final class ConfigException extends RuntimeException {
  private static final long serialVersionUID = 1L;
  private final String keyPath;

  /** @param keyPath the key path the message starts with, or "" for the document */
  public ConfigException(String keyPath, String message) {
    super(message);
    this.keyPath = keyPath;
  }

  /** The key path the problem is at, e.g. {@code features[2].max_levels}; "" for the whole document. */
  public String keyPath() { return keyPath; }
}
