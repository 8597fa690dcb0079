package dev.runnel.connect.cli;

import dev.runnel.connect.backtest.Loader;
import java.nio.file.Path;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Option;

/** Publishes a JSON Lines file (plain or a recording) to a topic. */
@Command(name = "load", mixinStandardHelpOptions = true,
    description = {"Publish a JSON Lines file to a topic: a plain file one record per line; a recording (from "
        + "`runnel record`) with its partitions, keys and timestamps kept.",
        "Creates the topic when missing (as many partitions as the recording had, else --partitions)."})
public final class LoadCommand implements Callable<Integer> {

  @Option(names = "--source", required = true, paramLabel = "FILE", description = "The file to publish.")
  Path source;

  @Option(names = "--topic", required = true, paramLabel = "TOPIC", description = "The topic to publish to.")
  String topic;

  @Option(names = "--bootstrap-servers", paramLabel = "HOST:PORT", defaultValue = "127.0.0.1:9092",
      description = "Kafka cluster (default: ${DEFAULT-VALUE}, e.g. a `runnel broker`).")
  String bootstrap;

  @Option(names = "--partitions", paramLabel = "N", defaultValue = "1",
      description = "Partitions of a new topic for a plain file (default: ${DEFAULT-VALUE}).")
  int partitions;

  @Override
  public Integer call() throws Exception {
    long n = Loader.load(source, bootstrap, topic, partitions);
    System.out.printf("published %,d records from %s to %s%n", n, source, topic);
    return 0;
  }
}
