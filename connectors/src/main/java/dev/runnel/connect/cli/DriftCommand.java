package dev.runnel.connect.cli;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.connect.drift.DriftTable;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import java.io.BufferedReader;
import java.io.IOException;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.Properties;
import java.util.concurrent.Callable;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.consumer.KafkaConsumer;
import org.apache.kafka.common.PartitionInfo;
import org.apache.kafka.common.TopicPartition;
import org.apache.kafka.common.serialization.ByteArrayDeserializer;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Option;

/** Follows a pipeline's coefficient snapshots and prints, per snapshot, the weights that moved most since a baseline. */
@Command(name = "drift", mixinStandardHelpOptions = true,
    description = {"Read <name>.coefficients (committed records only, no consumer group), or a replay's "
        + "coefficients.jsonl with --file, and print one line per "
        + "snapshot: time, index, input partition, noise sd, recent prequential MAE and RMSE, the weights that moved most since the "
        + "baseline in standard errors ((w - w_b) / sqrt(se^2 + se_b^2), raw units), and the raised alarms. For a pipeline "
        + "with input.forecast, the errors of settled forecasts by horizon bucket follow each line (docs/forecasting.md). "
        + "With model.scope: global, one line per snapshot time for the one model, with the partitions whose view "
        + "differs from it (docs/operations.md, \"Scaling\").",
        "Reads to the current end and stops, or keeps following with --follow. With --config, the pipeline name "
            + "comes from the configuration too."})
public final class DriftCommand implements Callable<Integer> {

  @Option(names = "--pipeline", paramLabel = "NAME", description = "Pipeline name: reads NAME.coefficients.")
  String pipeline;

  @Option(names = "--topic", paramLabel = "TOPIC", description = "The coefficients topic itself (instead of --pipeline).")
  String topic;

  @Option(names = "--file", paramLabel = "FILE",
      description = "A file of snapshots, one JSON object per line, such as the coefficients.jsonl that `runnel replay` "
          + "writes, or its coefficients.avro (outputs.encoding: avro) (instead of --pipeline or --topic; no Kafka).")
  Path file;

  @Mixin Options.Cluster cluster;
  @Mixin Options.ClientFile clientFile;

  @Option(names = "--baseline", defaultValue = "pipeline", paramLabel = "WHICH",
      description = "pipeline (the snapshot's own drift_score against drift.baseline), first, previous, a snapshot "
          + "index or an ISO 8601 time (the first snapshot at or after it) (default: ${DEFAULT-VALUE}).")
  String baseline;

  @Option(names = "--from", paramLabel = "INDEX|TIME", description = "First snapshot to print: an index or an ISO 8601 time.")
  String from;

  @Option(names = "--to", paramLabel = "INDEX|TIME", description = "Last snapshot to print: an index or an ISO 8601 time.")
  String to;

  @Option(names = "--top", defaultValue = "3", paramLabel = "N", description = "Moved weights shown per snapshot (default: ${DEFAULT-VALUE}).")
  int top;

  @Option(names = "--follow", description = "Keep following new snapshots until Ctrl-C.")
  boolean follow;

  private static final ObjectMapper JSON = new ObjectMapper();

  @Override
  public Integer call() throws Exception {
    DriftTable table = new DriftTable(baseline, top,
        from == null ? null : DriftTable.Point.parse(from, "--from"),
        to == null ? null : DriftTable.Point.parse(to, "--to"));
    if (file != null) {
      if (pipeline != null || topic != null || clientFile.config != null || cluster.bootstrapServers != null) {
        throw new IllegalArgumentException("--file reads snapshots from a file; leave out --pipeline, --topic, --config "
            + "and --bootstrap-servers (they name a Kafka topic)");
      }
      if (follow) {
        throw new IllegalArgumentException("--follow: a file is read to its end once; leave it out with --file");
      }
      return printFile(file, table, System.out);
    }
    Map<String, String> props = Map.of();
    String name = pipeline;
    String servers = cluster.bootstrapServers;
    if (clientFile.config != null) {
      PipelineConfig cfg = ConfigLoader.load(clientFile.config);
      props = cfg.kafka().clientProperties();
      if (name == null) {
        name = cfg.name();
      }
      if (servers == null || servers.isBlank()) {
        servers = cfg.kafka().bootstrapServers();
      }
    }
    if ((name == null) == (topic == null)) {
      throw new IllegalArgumentException("give exactly one of --pipeline NAME (or --config FILE), --topic TOPIC and --file FILE");
    }
    if (servers == null || servers.isBlank()) {
      throw new IllegalArgumentException("--bootstrap-servers: missing; give the cluster (for the embedded broker, the"
          + " address that run or broker printed, e.g. --bootstrap-servers 127.0.0.1:9092)");
    }
    String t = topic != null ? topic : name + ".coefficients";
    return print(servers, props, t, table, follow, System.out);
  }

  /**
   * Reads a file of snapshots (JSON Lines, or an Avro container file {@code .avro}) and prints the table; package-private for tests.
   *
   * @return 0, or 1 when no line was printed
   */
  static int printFile(Path file, DriftTable table, PrintStream out) throws IOException {
    if (!Files.isRegularFile(file)) {
      throw new IllegalArgumentException("--file " + file + ": no such file; give a coefficients.jsonl (or .avro) written by "
          + "`runnel replay` (its --out folder)");
    }
    out.println(DriftTable.header());
    int lines = 0;
    if (file.getFileName().toString().endsWith(".avro")) {
      // the coefficients.avro of a replay with outputs.encoding: avro, read back into the JSON layout
      long n = 0;
      for (JsonNode s : dev.runnel.connect.output.OutputRecords.readFile(file)) {
        n++;
        if (!s.isObject() || !s.has("columns")) {
          out.println("(record " + n + ": not a snapshot, skipped)");
          continue;
        }
        String line = table.take(s);
        if (line != null) {
          out.println(line);
          lines++;
        }
        if (table.pastEnd(s)) {
          break;
        }
      }
      lines += finish(table, out);
      out.flush();
      return lines == 0 ? 1 : 0;
    }
    long lineNo = 0;
    try (BufferedReader in = Files.newBufferedReader(file, StandardCharsets.UTF_8)) {
      for (String l = in.readLine(); l != null; l = in.readLine()) {
        lineNo++;
        if (l.isBlank()) {
          continue;
        }
        JsonNode s;
        try {
          s = JSON.readTree(l);
        } catch (IOException e) {
          out.println("(line " + lineNo + ": not a snapshot, skipped)");
          continue;
        }
        if (!s.isObject() || !s.has("columns")) {
          out.println("(line " + lineNo + ": not a snapshot, skipped)");
          continue;
        }
        String line = table.take(s);
        if (line != null) {
          out.println(line);
          lines++;
        }
        if (table.pastEnd(s)) {
          break;
        }
      }
    }
    lines += finish(table, out);
    out.flush();
    return lines == 0 ? 1 : 0;
  }

  /** Prints the lines the table still holds at the end of the input (model.scope: global); returns how many. */
  private static int finish(DriftTable table, PrintStream out) {
    String held = table.finish();
    if (held == null) {
      return 0;
    }
    out.println(held);
    return 1;
  }

  /** Reads the topic and prints the table; package-private for tests. */
  static int print(String servers, Map<String, String> props, String t, DriftTable table, boolean follow, PrintStream out) {
    Properties p = dev.runnel.connect.kafka.ClientConfig.groupLessReader(servers, props, "runnel-drift");
    try (KafkaConsumer<byte[], byte[]> c = new KafkaConsumer<>(p, new ByteArrayDeserializer(), new ByteArrayDeserializer())) {
      List<PartitionInfo> infos = c.partitionsFor(t, Duration.ofSeconds(30));
      if (infos == null || infos.isEmpty()) {
        throw new IllegalArgumentException("--pipeline/--topic: topic " + t + " does not exist at " + servers
            + "; check the name (the topic is <name>.coefficients) and that the pipeline has run");
      }
      List<TopicPartition> tps = new ArrayList<>();
      for (PartitionInfo i : infos) {
        tps.add(new TopicPartition(t, i.partition()));
      }
      c.assign(tps);
      c.seekToBeginning(tps);
      Map<TopicPartition, Long> end = c.endOffsets(tps, Duration.ofSeconds(30));
      out.println(DriftTable.header());
      int lines = 0;
      while (true) {
        boolean allPast = false;
        org.apache.kafka.clients.consumer.ConsumerRecords<byte[], byte[]> polled = c.poll(Duration.ofMillis(300));
        if (polled.isEmpty() && follow) {
          // caught up: with model.scope: global the held times but the newest need not wait for a quiet partition
          String settled = table.settle();
          if (settled != null) {
            out.println(settled);
            lines++;
          }
        }
        for (ConsumerRecord<byte[], byte[]> r : polled) {
          JsonNode s;
          try {
            s = dev.runnel.connect.output.OutputRecords.read(r.headers(), r.value()); // JSON or Avro snapshots
          } catch (IOException e) {
            out.println("(offset " + r.offset() + ": not a snapshot, skipped)");
            continue;
          }
          String line = table.take(s);
          if (line != null) {
            out.println(line);
            lines++;
          }
          allPast = table.pastEnd(s);
        }
        if (!follow && reachedEnd(c, end)) {
          break;
        }
        if (allPast && tps.size() == 1) {
          break;
        }
      }
      lines += finish(table, out);
      out.flush();
      return lines == 0 ? 1 : 0;
    }
  }

  private static boolean reachedEnd(KafkaConsumer<byte[], byte[]> c, Map<TopicPartition, Long> end) {
    for (Map.Entry<TopicPartition, Long> e : end.entrySet()) {
      if (c.position(e.getKey()) < e.getValue()) {
        return false;
      }
    }
    return true;
  }
}
