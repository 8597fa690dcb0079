package dev.runnel.connect.kafka;

import java.util.Map;
import java.util.Objects;
import java.util.regex.Pattern;

/**
 * Settings of one {@link ExactlyOnceRunner}. Immutable; checked at construction.
 *
 * @param name pipeline name; output topics are {@code <name>.predictions}, {@code .coefficients}, {@code .rejects}, {@code .settled}, {@code .state}
 * @param inputTopic the topic to consume
 * @param bootstrapServers {@code host:port[,host:port]}
 * @param clientProperties Kafka client settings applied to consumer, producer and admin (a key prefixed
 *     {@code consumer.}, {@code producer.} or {@code admin.} goes to that client only, prefix removed);
 *     values may contain {@code ${ENV_VAR}}. Copied.
 * @param commitIntervalMs commit at least this often while records flow (milliseconds, ≥ 1)
 * @param commitIntervalRecords commit after this many records since the last commit (≥ 1)
 * @param transactionalIdPrefix the transactional id is {@code <prefix>-<name>-<instanceId>}
 * @param instanceId stable per running instance and unique among instances: names the transactional id
 *     and the static group member ({@code group.instance.id = <name>-<instanceId>})
 * @param groupId consumer group; {@code runnel.<name>} by default
 */
public record RunnerSettings(String name, String inputTopic, String bootstrapServers, Map<String, String> clientProperties,
    long commitIntervalMs, int commitIntervalRecords, String transactionalIdPrefix, String instanceId, String groupId) {

  /** Default commit interval in milliseconds: the default of {@code kafka.commit_interval_ms}. */
  public static final long DEFAULT_COMMIT_INTERVAL_MS = dev.runnel.core.config.ConfigKeys.COMMIT_INTERVAL_MS.defaultValue();
  /** Default commit interval in records: the default of {@code kafka.commit_interval_records}. */
  public static final int DEFAULT_COMMIT_INTERVAL_RECORDS =
      Math.toIntExact(dev.runnel.core.config.ConfigKeys.COMMIT_INTERVAL_RECORDS.defaultValue());
  /** Default transactional id prefix. */
  public static final String DEFAULT_TRANSACTIONAL_ID_PREFIX = "runnel";

  private static final Pattern TOPIC_CHARS = Pattern.compile("[a-zA-Z0-9._-]+");

  public RunnerSettings {
    requireName("name", name);
    requireName("inputTopic", inputTopic);
    if (bootstrapServers == null || bootstrapServers.isBlank()) {
      throw new IllegalArgumentException("bootstrapServers must be host:port[,host:port...], got " + bootstrapServers);
    }
    clientProperties = Map.copyOf(Objects.requireNonNull(clientProperties, "clientProperties must not be null"));
    if (commitIntervalMs < 1) throw new IllegalArgumentException("commitIntervalMs must be >= 1, got " + commitIntervalMs);
    if (commitIntervalRecords < 1) throw new IllegalArgumentException("commitIntervalRecords must be >= 1, got " + commitIntervalRecords);
    requireName("transactionalIdPrefix", transactionalIdPrefix);
    requireName("instanceId", instanceId);
    if (groupId == null || groupId.isBlank()) throw new IllegalArgumentException("groupId must not be blank, got " + groupId);
    if (name.length() > 200) throw new IllegalArgumentException("name must be at most 200 characters, got " + name.length());
  }

  private static void requireName(String what, String v) {
    if (v == null || !TOPIC_CHARS.matcher(v).matches()) {
      throw new IllegalArgumentException(what + " must be non-empty and use only letters, digits, '.', '_' and '-', got " + v);
    }
  }

  /** Defaults: no client properties, 1 s / 5,000 records (the configuration's defaults), prefix "runnel", instance "0", group {@code runnel.<name>}. */
  public static RunnerSettings of(String name, String inputTopic, String bootstrapServers) {
    return new RunnerSettings(name, inputTopic, bootstrapServers, Map.of(), DEFAULT_COMMIT_INTERVAL_MS,
        DEFAULT_COMMIT_INTERVAL_RECORDS, DEFAULT_TRANSACTIONAL_ID_PREFIX, "0", "runnel." + name);
  }

  public RunnerSettings withClientProperties(Map<String, String> p) {
    return new RunnerSettings(name, inputTopic, bootstrapServers, p, commitIntervalMs, commitIntervalRecords, transactionalIdPrefix, instanceId, groupId);
  }

  public RunnerSettings withCommitInterval(long ms, int records) {
    return new RunnerSettings(name, inputTopic, bootstrapServers, clientProperties, ms, records, transactionalIdPrefix, instanceId, groupId);
  }

  public RunnerSettings withInstanceId(String id) {
    return new RunnerSettings(name, inputTopic, bootstrapServers, clientProperties, commitIntervalMs, commitIntervalRecords, transactionalIdPrefix, id, groupId);
  }

  public RunnerSettings withTransactionalIdPrefix(String prefix) {
    return new RunnerSettings(name, inputTopic, bootstrapServers, clientProperties, commitIntervalMs, commitIntervalRecords, prefix, instanceId, groupId);
  }

  public RunnerSettings withGroupId(String g) {
    return new RunnerSettings(name, inputTopic, bootstrapServers, clientProperties, commitIntervalMs, commitIntervalRecords, transactionalIdPrefix, instanceId, g);
  }

  public String predictionsTopic() { return name + ".predictions"; }
  public String coefficientsTopic() { return name + ".coefficients"; }
  public String rejectsTopic() { return name + ".rejects"; }
  public String stateTopic() { return name + ".state"; }
  /** Settled forecasts (docs/forecasting.md); created with the others, empty without {@code input.forecast}. */
  public String settledTopic() { return name + ".settled"; }
  /** Model shares with {@code model.scope: global}: created only when a processor shares its model. */
  public String sharesTopic() { return name + ".shares"; }
  public String transactionalId() { return transactionalIdPrefix + "-" + name + "-" + instanceId; }
  public String groupInstanceId() { return name + "-" + instanceId; }
}
