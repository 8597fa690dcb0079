package dev.runnel.connect.cli;

import dev.runnel.connect.broker.EmbeddedBroker;
import dev.runnel.core.config.PipelineConfig;
import java.io.IOException;
import java.io.PrintStream;
import java.nio.file.Path;

/** Shared steps of the verbs that read or write a cluster: the broker to use, the servers and client properties. */
final class Launch {

  private Launch() { }

  /**
   * Prints the configuration's warnings ({@link PipelineConfig#warnings()}), one line each, as
   * {@code runnel: warning: <file>: <message>}. The verbs that run a pipeline call it once, right
   * after loading, before any work starts.
   *
   * @return {@code cfg}, for chaining after {@code ConfigLoader.load}
   */
  static PipelineConfig warn(PipelineConfig cfg, PrintStream err) {
    for (dev.runnel.core.config.ConfigWarning w : cfg.warnings()) {
      err.println("runnel: warning: " + cfg.sourceName() + ": " + w.message());
    }
    return cfg;
  }

  /**
   * Starts the embedded broker when the configuration names no bootstrap servers.
   *
   * @return the broker started, or null when an external cluster is configured
   */
  static EmbeddedBroker brokerIfNeeded(PipelineConfig cfg, Path dataDirOverride, PrintStream err) throws IOException {
    if (!cfg.kafka().bootstrapServers().isBlank()) {
      return null;
    }
    Path dir = dataDirOverride != null ? dataDirOverride : Path.of(cfg.kafka().embedded().dataDir());
    EmbeddedBroker broker = new EmbeddedBroker(dir, cfg.kafka().embedded().port(), 0, java.util.Map.of(),
        EmbeddedBroker.DEFAULT_START_TIMEOUT, "768m");
    err.printf("runnel: no kafka.bootstrap_servers configured; starting the embedded broker (data in %s)...%n",
        broker.folder());
    broker.start();
    err.printf("runnel: embedded broker ready at %s (log: %s)%n", broker.bootstrapServers(), broker.logFile());
    return broker;
  }

  /** Where a verb without a pipeline of its own connects: servers and client properties (security). */
  record Cluster(String bootstrapServers, java.util.Map<String, String> clientProperties) { }

  /**
   * The cluster of the verbs that only move records ({@code record}, {@code load}): the
   * {@code --bootstrap-servers} option, else {@code kafka.bootstrap_servers} of {@code --config},
   * else {@code fallback}; client properties from {@code kafka.client_properties} of
   * {@code --config} (as {@code run} and {@code backtest} use them), none without one.
   *
   * @param config a pipeline configuration, or null
   * @param bootstrapOption the option's value, or null
   * @param fallback servers when neither names any
   */
  static Cluster cluster(Path config, String bootstrapOption, String fallback) {
    java.util.Map<String, String> props = java.util.Map.of();
    String servers = bootstrapOption;
    if (config != null) {
      PipelineConfig cfg = dev.runnel.core.config.ConfigLoader.load(config);
      props = cfg.kafka().clientProperties();
      if (servers == null || servers.isBlank()) {
        servers = cfg.kafka().bootstrapServers();
      }
    }
    if (servers == null || servers.isBlank()) {
      servers = fallback;
    }
    return new Cluster(servers, props);
  }
}
