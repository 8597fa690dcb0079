package dev.runnel.connect.kafka;

import java.util.Locale;
import java.util.Map;
import java.util.TreeMap;
import java.util.function.UnaryOperator;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.apache.kafka.common.config.SaslConfigs;
import org.apache.kafka.common.config.types.Password;
import org.apache.kafka.common.security.JaasContext;

/**
 * Kafka client property handling: {@code ${ENV}} resolution, per-client prefixes and masking of secrets
 * for logs. Stateless.
 */
public final class ClientConfig {
  private static final Pattern VAR = Pattern.compile("\\$\\{([A-Za-z_][A-Za-z0-9_]*)}");
  private static final String[] SECRET_WORDS = {"password", "secret", "jaas", "token", "key.pem", "credential"};

  /** Which client a property set is for. */
  public enum Kind { CONSUMER, PRODUCER, ADMIN }

  private ClientConfig() {}

  /**
   * The properties for one client: unprefixed keys, then keys prefixed {@code consumer.}/{@code producer.}/{@code admin.}
   * for {@code kind} (prefix removed; they win). Values have {@code ${VAR}} replaced from {@code env}.
   * @param props user properties. Not modified.
   * @param env environment lookup (e.g. {@code System::getenv})
   * @throws IllegalArgumentException if a referenced variable is not set (names the key and the variable, never the value),
   *     or a {@code sasl.jaas.config} value is malformed (names the key, never the value)
   */
  public static Map<String, Object> forClient(Map<String, String> props, Kind kind, UnaryOperator<String> env) {
    Map<String, Object> out = new TreeMap<>();
    String own = kind.name().toLowerCase(Locale.ROOT) + ".";
    for (Map.Entry<String, String> e : props.entrySet()) {
      String k = e.getKey();
      if (k.startsWith("consumer.") || k.startsWith("producer.") || k.startsWith("admin.")) continue;
      out.put(k, resolve(k, e.getValue(), env));
    }
    for (Map.Entry<String, String> e : props.entrySet()) {
      if (e.getKey().startsWith(own)) out.put(e.getKey().substring(own.length()), resolve(e.getKey(), e.getValue(), env));
    }
    return out;
  }

  /**
   * Properties of a consumer that reads committed records without a consumer group (it assigns
   * partitions and never commits), for replays, views and readers that must not disturb a
   * pipeline: the user's consumer properties ({@code ${ENV}} resolved from the process
   * environment), then bootstrap servers, {@code read_committed}, no auto commit, and a unique
   * client id.
   *
   * @param bootstrap bootstrap servers
   * @param props user client properties, as for {@link #forClient}. Not modified.
   * @param clientIdPrefix e.g. {@code runnel-backtest}; a random suffix is added
   */
  public static java.util.Properties groupLessReader(String bootstrap, Map<String, String> props, String clientIdPrefix) {
    java.util.Properties p = new java.util.Properties();
    p.putAll(forClient(props, Kind.CONSUMER, System::getenv));
    p.put("bootstrap.servers", bootstrap);
    p.put("isolation.level", "read_committed");
    p.put("enable.auto.commit", "false");
    p.put("client.id", clientIdPrefix + "-" + java.util.UUID.randomUUID());
    return p;
  }

  static String resolve(String key, String value, UnaryOperator<String> env) {
    if (value == null) throw new IllegalArgumentException("client property " + key + " has no value");
    Matcher m = VAR.matcher(value);
    StringBuilder sb = new StringBuilder();
    while (m.find()) {
      String v = env.apply(m.group(1));
      if (v == null) {
        throw new IllegalArgumentException("client property " + key + " refers to environment variable " + m.group(1)
            + ", which is not set");
      }
      m.appendReplacement(sb, Matcher.quoteReplacement(v));
    }
    m.appendTail(sb);
    String resolved = sb.toString();
    if (key.equals(SaslConfigs.SASL_JAAS_CONFIG) || key.endsWith("." + SaslConfigs.SASL_JAAS_CONFIG)) checkJaas(key, resolved);
    return resolved;
  }

  private static final Pattern QUOTED = Pattern.compile("'[^']*'");

  /**
   * Parses a JAAS configuration as the Kafka clients will (one login module, ending with ';'), so a
   * malformed one is reported by key at start instead of as a stack trace when a client is built.
   * The parser's words between quotes may be parts of the value (a password): they are masked.
   */
  private static void checkJaas(String key, String value) {
    try {
      JaasContext.loadClientContext(Map.of(SaslConfigs.SASL_JAAS_CONFIG, new Password(value)));
    } catch (IllegalArgumentException e) {
      String why = e.getMessage() == null ? "cannot be parsed" : QUOTED.matcher(e.getMessage()).replaceAll("'****'");
      throw new IllegalArgumentException("client property " + key + " (kafka.client_properties) is not a valid JAAS configuration: " + why
          + "; write one login module as <class> required <key>=\"<value>\" ... ending with ';', e.g."
          + " org.apache.kafka.common.security.scram.ScramLoginModule required username=\"runnel\" password=\"${KAFKA_PASSWORD}\";");
    }
  }

  /** True if a key names a secret (contains password, secret, jaas, token, ...): its value is never logged. */
  public static boolean isSecretKey(String key) {
    String k = key.toLowerCase(Locale.ROOT);
    for (String w : SECRET_WORDS) if (k.contains(w)) return true;
    return false;
  }

  /** A printable form of a property map with secret values replaced by {@code ****}. Not modified. */
  public static String masked(Map<String, ?> props) {
    StringBuilder sb = new StringBuilder("{");
    for (Map.Entry<String, ?> e : new TreeMap<>(props).entrySet()) {
      if (sb.length() > 1) sb.append(", ");
      sb.append(e.getKey()).append('=').append(isSecretKey(e.getKey()) ? "****" : String.valueOf(e.getValue()));
    }
    return sb.append('}').toString();
  }
}
