package dev.runnel.connect.cli;

import dev.runnel.connect.recording.Loader;
import java.nio.file.Path;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Option;

/** Publishes a JSON Lines file (plain or a recording) to a topic. */
@Command(name = "load", mixinStandardHelpOptions = true,
    description = {"Publish a JSON Lines file to a topic: a plain file one record per line; a recording (from "
        + "`runnel record`) with its partitions, keys and timestamps kept; a CSV file (*.csv, a header row) one JSON"
        + " record per row, its cells typed by the input.fields of --config.",
        "Creates the topic when missing (as many partitions as the recording had, else --partitions), keeping its records"
            + " for good (retention.ms=-1: recorded timestamps are old); refuses an existing topic whose retention would delete them.",
        "The cluster: --bootstrap-servers, else kafka.bootstrap_servers of --config, else " + RecordCommand.DEFAULT_SERVERS
            + " (e.g. a `runnel broker`). Client properties with a producer. or admin. prefix go to that client only."})
public final class LoadCommand implements Callable<Integer> {

  @Option(names = "--source", required = true, paramLabel = "FILE", description = "The file to publish.")
  Path source;

  @Option(names = "--topic", required = true, paramLabel = "TOPIC", description = "The topic to publish to.")
  String topic;

  @Mixin Options.Cluster cluster;
  @Mixin Options.ClientFile clientFile;

  @Option(names = "--partitions", paramLabel = "N", defaultValue = "1",
      description = "Partitions of a new topic for a plain file (default: ${DEFAULT-VALUE}).")
  int partitions;

  @Override
  public Integer call() throws Exception {
    Launch.Cluster kafka = Launch.cluster(clientFile.config, cluster.bootstrapServers, RecordCommand.DEFAULT_SERVERS);
    java.util.Map<String, dev.runnel.core.record.FieldType> csvTypes = clientFile.config == null ? null
        : dev.runnel.core.config.ConfigLoader.load(clientFile.config).input().schema().fields();
    long n = Loader.load(source, csvTypes, kafka.bootstrapServers(), kafka.clientProperties(), topic, partitions);
    System.out.printf("published %,d records from %s to %s%n", n, source, topic);
    return 0;
  }
}
