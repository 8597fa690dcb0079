package dev.runnel.core.config;

import com.fasterxml.jackson.databind.JsonNode;
import java.util.List;
import java.util.function.Function;

/**
 * One configuration key: where it lives, its type, its default, how it is read and checked, and
 * any former names it is still accepted under. Every key the loader accepts is one of these, listed
 * in {@link ConfigKeys}; the loader reads values, and the defaults of a section that is absent, only
 * through them, and {@code ConfigDocsTest} checks each against docs/configuration.md. Immutable.
 *
 * @param <T> the value's Java type
 */
public final class ConfigKey<T> {

  /** Reads a key's value from one section; absent or empty values give the default. */
  @FunctionalInterface
  interface Reader<T> {
    T read(ConfigLoader.Section s, String name, ConfigKey<T> key);
  }

  private final String scope;
  private final String name;
  private final String type;
  private final T defaultValue;
  private final String defaultText;
  private final String allowed;
  private final Reader<T> reader;
  private final List<String> formerNames;
  private final Function<? super T, String> show;

  private ConfigKey(String scope, String name, String type, T defaultValue, String defaultText, String allowed,
                    Reader<T> reader, List<String> formerNames, Function<? super T, String> show) {
    this.scope = scope;
    this.name = name;
    this.type = type;
    this.defaultValue = defaultValue;
    this.defaultText = defaultText;
    this.allowed = allowed;
    this.reader = reader;
    this.formerNames = List.copyOf(formerNames);
    this.show = show;
  }

  private ConfigKey(String scope, String name, String type, T defaultValue, String defaultText, String allowed,
                    Reader<T> reader, List<String> formerNames) {
    this(scope, name, type, defaultValue, defaultText, allowed, reader, formerNames, String::valueOf);
  }

  // ---- factories: each key in ConfigKeys is one line calling one of these ----

  /** A whole number from {@code min} to {@code max}. */
  static ConfigKey<Long> whole(String scope, String name, long def, long min, long max) {
    String allowed = max == Long.MAX_VALUE ? "use a whole number of at least " + min
        : "use a whole number from " + min + " to " + max;
    return new ConfigKey<>(scope, name, "whole number", def, null, allowed,
        (s, n, k) -> s.whole(n, k.defaultValue, min, max), List.of());
  }

  /** A whole number that fits an {@code int}, from {@code min} to {@code max}. */
  static ConfigKey<Integer> wholeInt(String scope, String name, int def, int min, int max) {
    return new ConfigKey<>(scope, name, "whole number", def, null, "use a whole number from " + min + " to " + max,
        (s, n, k) -> s.wholeInt(n, k.defaultValue, min, max), List.of());
  }

  /** A finite number in a range whose ends are open or closed; {@code allowed} says it in words. */
  static ConfigKey<Double> number(String scope, String name, double def, double min, boolean minOpen,
                                  double max, boolean maxOpen, String allowed) {
    return new ConfigKey<>(scope, name, "number", def, null, allowed,
        (s, n, k) -> s.number(n, k.defaultValue, min, minOpen, max, maxOpen, allowed), List.of());
  }

  /** {@code true} or {@code false}. */
  static ConfigKey<Boolean> flag(String scope, String name, boolean def) {
    return new ConfigKey<>(scope, name, "boolean", def, null, "use true or false",
        (s, n, k) -> s.flag(n, k.defaultValue), List.of());
  }

  /** A non-empty text. */
  static ConfigKey<String> text(String scope, String name, String def, String allowed) {
    return new ConfigKey<>(scope, name, "text", def, null, allowed,
        (s, n, k) -> {
          String v = s.text(n, k.defaultValue, allowed);
          if (s.has(n) && v.isEmpty()) throw ConfigLoader.notAllowed(s.p(n), s.get(n), allowed);
          return v;
        }, List.of());
  }

  /** A text that may be empty. */
  static ConfigKey<String> textOrEmpty(String scope, String name, String def, String allowed) {
    return new ConfigKey<>(scope, name, "text", def, null, allowed,
        (s, n, k) -> s.text(n, k.defaultValue, allowed), List.of());
  }

  /** One word of an enum's configuration words. */
  static <E extends Enum<E>> ConfigKey<E> choice(String scope, String name, E def, E[] values, Function<E, String> word) {
    StringBuilder words = new StringBuilder();
    for (E e : values) words.append(words.length() == 0 ? "" : ", ").append(word.apply(e));
    return new ConfigKey<>(scope, name, "choice", def, def == null ? "required" : null, "use one of " + words,
        (s, n, k) -> s.choice(n, k.defaultValue, values, word), List.of(), word);
  }

  /** An ISO 8601 duration of at least 1 ms, in milliseconds; absent = 0 (the docs say what absent means). */
  static ConfigKey<Long> duration(String scope, String name) {
    return new ConfigKey<>(scope, name, "ISO 8601 duration", 0L, "absent", ConfigLoader.DURATION_ALLOWED,
        (s, n, k) -> s.durationMillis(n), List.of());
  }

  /** An ISO 8601 duration with a default span; {@code defaultText} is that span as written in the docs (e.g. {@code P1D}). */
  static ConfigKey<Long> duration(String scope, String name, long defaultMillis, String defaultText) {
    return new ConfigKey<>(scope, name, "ISO 8601 duration", defaultMillis, defaultText, ConfigLoader.DURATION_ALLOWED,
        (s, n, k) -> s.has(n) ? s.durationMillis(n) : k.defaultValue, List.of());
  }

  /**
   * A key the loader reads by hand (a mapping, a list, a required text, a value with special words),
   * listed here so it is accepted, suggested and documented like every other key.
   *
   * @param defaultText what the docs give as its default, e.g. {@code required} or {@code all defaults}
   */
  static ConfigKey<JsonNode> structured(String scope, String name, String type, String defaultText) {
    return new ConfigKey<>(scope, name, type, null, defaultText, "", (s, n, k) -> s.get(n), List.of());
  }

  /**
   * A key with its own reader.
   *
   * @param show how the docs write the default value
   */
  static <T> ConfigKey<T> custom(String scope, String name, String type, T def, String allowed,
                                 Function<? super T, String> show, Reader<T> reader) {
    return new ConfigKey<>(scope, name, type, def, null, allowed, reader, List.of(), show);
  }

  /** The same key with its default described in words in the docs (e.g. {@code required}), not by its value. */
  ConfigKey<T> documentedDefault(String words) {
    return new ConfigKey<>(scope, name, type, defaultValue, words, allowed, reader, formerNames, show);
  }

  /**
   * The same key, also accepted under a former name (in the same section) with a warning that names
   * the new key.
   */
  ConfigKey<T> formerly(String formerName) {
    List<String> f = new java.util.ArrayList<>(formerNames);
    f.add(formerName);
    return new ConfigKey<>(scope, name, type, defaultValue, defaultText, allowed, reader, f, show);
  }

  /**
   * Reads this key from a section ({@code null} = the section is absent: the default). A value
   * under a former name is read with the same checks, and a warning is recorded.
   *
   * @throws ConfigException naming the key path, the bad value and what is allowed
   */
  T read(ConfigLoader.Section s) {
    if (s == null) return defaultValue;
    for (String former : formerNames) {
      if (s.has(former)) {
        if (s.has(name)) {
          throw new ConfigException(s.p(former), s.p(former) + ": both " + former + " and its new name " + name
              + " are given; keep only " + name);
        }
        s.warn(s.p(former), s.p(former) + " is renamed; write " + name + ": instead (the old name still works for now)");
        return reader.read(s, former, this);
      }
    }
    return reader.read(s, name, this);
  }

  /** The section this key lives in, e.g. {@code model}, {@code input.limits}, {@code features.onehot}; "" for the top level. */
  public String scope() { return scope; }

  /** The key's own name, e.g. {@code max_levels}. */
  public String name() { return name; }

  /**
   * The key as docs/configuration.md lists it: the full path (e.g. {@code model.interval_level}),
   * except for a feature's keys, which are listed by name under their kind's heading.
   */
  public String docKey() {
    if (scope.isEmpty() || scope.startsWith("features.")) return name;
    return scope + "." + name;
  }

  /** The type word of the docs' table, e.g. {@code whole number}. */
  public String type() { return type; }

  /** The default value, or {@code null} for a key whose default is described in words. */
  public T defaultValue() { return defaultValue; }

  /** What is allowed, as error messages say it (e.g. {@code use a whole number from 1 to 1000000}); "" for structured keys. */
  public String allowed() { return allowed; }

  /** Former names still accepted, with a warning. */
  public List<String> formerNames() { return formerNames; }

  /**
   * The default as docs/configuration.md writes it in its default column: the words for a key
   * without a plain default ({@code required}, {@code absent}, ...), else the value (a choice's word,
   * {@code true}/{@code false}, a number, a text; the empty text as {@code ""}).
   */
  public String docDefault() {
    if (defaultText != null) return defaultText;
    if (defaultValue instanceof String t) return t.isEmpty() ? "\"\"" : t;
    return show.apply(defaultValue);
  }

  @Override
  public String toString() { return (scope.isEmpty() ? "" : scope + ".") + name; }
}
