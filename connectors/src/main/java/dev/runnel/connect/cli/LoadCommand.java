package dev.runnel.connect.cli;

import dev.runnel.connect.recording.Loader;
import java.nio.file.Path;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Option;

/** Publishes a JSON Lines file (plain or a recording) to a topic. */
@Command(name = "load", mixinStandardHelpOptions = true,
    description = {"Publish a JSON Lines file to a topic: a plain file one record per line; a recording (from "
        + "`runnel record`) with its partitions, keys and timestamps kept.",
        "Creates the topic when missing (as many partitions as the recording had, else --partitions), keeping its records"
            + " for good (retention.ms=-1: recorded timestamps are old); refuses an existing topic whose retention would delete them."})
public final class LoadCommand implements Callable<Integer> {

  @Option(names = "--source", required = true, paramLabel = "FILE", description = "The file to publish.")
  Path source;

  @Option(names = "--topic", required = true, paramLabel = "TOPIC", description = "The topic to publish to.")
  String topic;

  @Option(names = "--bootstrap-servers", paramLabel = "HOST:PORT",
      description = "Kafka cluster (default: kafka.bootstrap_servers of --config, else " + RecordCommand.DEFAULT_SERVERS
          + ", e.g. a `runnel broker`).")
  String bootstrap;

  @Option(names = "--config", paramLabel = "FILE",
      description = "Pipeline configuration: gives the client properties (kafka.client_properties: SASL, TLS; "
          + "$${ENV} resolved; producer./admin. prefixes for one client) and the bootstrap servers, as for run and backtest.")
  Path config;

  @Option(names = "--partitions", paramLabel = "N", defaultValue = "1",
      description = "Partitions of a new topic for a plain file (default: ${DEFAULT-VALUE}).")
  int partitions;

  @Override
  public Integer call() throws Exception {
    Launch.Cluster cluster = Launch.cluster(config, bootstrap, RecordCommand.DEFAULT_SERVERS);
    long n = Loader.load(source, cluster.bootstrapServers(), cluster.clientProperties(), topic, partitions);
    System.out.printf("published %,d records from %s to %s%n", n, source, topic);
    return 0;
  }
}
