package dev.runnel.connect.cli;

import dev.runnel.connect.launch.Progress;
import dev.runnel.connect.file.Recording;
import dev.runnel.connect.replay.TopicRange;
import dev.runnel.connect.replay.TopicSource;
import java.io.BufferedOutputStream;
import java.io.IOException;
import java.io.OutputStream;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Option;

/** Writes a topic's records, with partition, offset and timestamp, to a JSON Lines recording. */
@Command(name = "record", mixinStandardHelpOptions = true,
    description = {"Write a topic's committed records (all partitions, over a range) with partition, offset, "
        + "timestamp and key to a JSON Lines recording (docs/formats.md).",
        "A backtest of the recording gives the same results as a backtest of the topic. No consumer group, no commits.",
        "The cluster: --bootstrap-servers, else kafka.bootstrap_servers of --config, else " + RecordCommand.DEFAULT_SERVERS
            + " (e.g. a `runnel broker`)."})
public final class RecordCommand implements Callable<Integer> {

  /** Servers used when neither --bootstrap-servers nor --config names any. */
  static final String DEFAULT_SERVERS = "127.0.0.1:9092";

  @Option(names = "--topic", required = true, paramLabel = "TOPIC", description = "The topic to record.")
  String topic;

  @Option(names = "--out", required = true, paramLabel = "FILE", description = "The recording to write (.jsonl).")
  Path out;

  @Mixin Options.Cluster cluster;
  @Mixin Options.ClientFile clientFile;
  @Mixin Options.Quiet quiet;

  @Option(names = "--start-offset", paramLabel = "N",
      description = "First offset to record in every partition (default: each partition's first).")
  Long startOffset;

  @Option(names = "--start-time", paramLabel = "ISO",
      description = "Record from the first record with a Kafka timestamp at or after this time, ISO 8601 with an "
          + "offset, e.g. 2026-02-01T00:00Z (instead of --start-offset).")
  String startTime;

  @Option(names = "--end-offset", paramLabel = "N",
      description = "Stop before this offset in every partition (default: the end of the topic when recording starts).")
  Long endOffset;

  @Option(names = "--end-time", paramLabel = "ISO",
      description = "Stop before the first record with a Kafka timestamp at or after this time (instead of --end-offset).")
  String endTime;


  @Override
  public Integer call() throws IOException {
    Launch.Cluster kafka = Launch.cluster(clientFile.config, cluster.bootstrapServers, DEFAULT_SERVERS);
    TopicRange range = new TopicRange(startOffset, BacktestCommand.instant("--start-time", startTime), endOffset,
        BacktestCommand.instant("--end-time", endTime));
    Progress progress = new Progress(System.err, "records", 0, quiet.quiet);
    long n;
    if (out.getParent() != null) {
      Files.createDirectories(out.getParent());
    }
    try (TopicSource src = new TopicSource(kafka.bootstrapServers(), kafka.clientProperties(), topic, range, "--topic");
         OutputStream o = new BufferedOutputStream(Files.newOutputStream(out), 1 << 16)) {
      Recording.writeHeader(o, topic, src.partitionCount());
      StringBuilder scratch = new StringBuilder(256);
      long[] count = {0};
      n = src.read(null, r -> {
        try {
          Recording.writeRecord(o, r.partition(), r.offset(), r.timestamp(), r.key(), r.value(), scratch);
        } catch (IOException e) {
          throw new UncheckedIOException(e);
        }
        if ((++count[0] & 1023) == 0) {
          progress.update(count[0], () -> "");
        }
      });
    }
    progress.finish(n, "");
    System.out.printf("recorded %,d records of %s to %s%n", n, topic, out.toAbsolutePath());
    return 0;
  }
}
