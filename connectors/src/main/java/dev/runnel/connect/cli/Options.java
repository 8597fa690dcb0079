package dev.runnel.connect.cli;

import java.nio.file.Path;
import picocli.CommandLine.Option;

/**
 * The options several verbs share, as picocli mixins: each is declared once, with one wording, and
 * a verb takes the ones it needs with {@code @Mixin}.
 */
final class Options {

  private Options() { }

  /** {@code --config FILE}, required: the pipeline the verb runs. */
  static final class PipelineFile {
    @Option(names = "--config", required = true, paramLabel = "FILE", description = "Pipeline configuration (YAML).")
    Path config;
  }

  /** {@code --config FILE}, optional: where a verb that runs no pipeline finds the cluster and client settings. */
  static final class ClientFile {
    @Option(names = "--config", paramLabel = "FILE",
        description = "Pipeline configuration: gives the bootstrap servers and the client properties "
            + "(kafka.client_properties: SASL, TLS; $${ENV} resolved), as for run and backtest.")
    Path config;
  }

  /** {@code --bootstrap-servers HOST:PORT}. */
  static final class Cluster {
    @Option(names = "--bootstrap-servers", paramLabel = "HOST:PORT",
        description = "Kafka cluster; overrides kafka.bootstrap_servers of the configuration.")
    String bootstrapServers;
  }

  /** {@code --quiet}. */
  static final class Quiet {
    @Option(names = "--quiet", description = "No progress line.")
    boolean quiet;
  }

  /** {@code --data-dir DIR}: the embedded broker's data folder, when the verb starts one. */
  static final class BrokerData {
    @Option(names = "--data-dir", paramLabel = "DIR",
        description = "Data folder of the embedded broker, started when no cluster is named (overrides kafka.embedded.data_dir).")
    Path dataDir;
  }
}
