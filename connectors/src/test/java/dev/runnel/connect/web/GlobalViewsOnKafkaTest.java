package dev.runnel.connect.web;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.connect.cli.DriftCommandAccess;
import dev.runnel.connect.drift.DriftTable;
import dev.runnel.connect.output.GlobalViewsFeed;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import dev.runnel.connect.testing.TestBroker;
import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;
import org.junit.jupiter.api.io.TempDir;

/**
 * The snapshots of 4 global-scope partitions ({@link GlobalViewsFeed}) on a real 4-partition {@code <name>.coefficients}
 * topic of the embedded broker, each partition's on its own partition: {@code drift} on the topic prints exactly what
 * {@code drift --file} prints for them in publishing order (one line per snapshot time, whatever the order the consumer
 * reads the partitions in), and the live view following the topic shows one model with partition 3 named.
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class GlobalViewsOnKafkaTest {

  private static final ObjectMapper JSON = new ObjectMapper();

  @Test
  void driftAndThePageFollowTheOneModelOnTheTopic(TestBroker broker, @TempDir Path dir) throws Exception {
    String bs = broker.bootstrapServers();
    String name = "globalviews";
    GlobalViewsFeed f = GlobalViewsFeed.run();
    KafkaTestSupport.createTopic(bs, name + ".coefficients", GlobalViewsFeed.PARTITIONS);
    KafkaTestSupport.createTopic(bs, name + ".predictions", GlobalViewsFeed.PARTITIONS);
    List<List<String>> byPartition = new ArrayList<>();
    List<String> file = new ArrayList<>();
    for (int p = 0; p < GlobalViewsFeed.PARTITIONS; p++) {
      byPartition.add(new ArrayList<>());
    }
    for (JsonNode s : f.snapshots) {
      String v = JSON.writeValueAsString(s);
      byPartition.get(s.path("partition").asInt()).add(v);
      file.add(v);
    }
    KafkaTestSupport.produce(bs, name + ".coefficients", byPartition);
    Path jsonl = dir.resolve("coefficients.jsonl");
    Files.write(jsonl, file);

    ByteArrayOutputStream fromFile = new ByteArrayOutputStream();
    assertEquals(0, DriftCommandAccess.printFile(jsonl, new DriftTable("first", 3, null, null),
        new PrintStream(fromFile, true, StandardCharsets.UTF_8)));
    ByteArrayOutputStream fromTopic = new ByteArrayOutputStream();
    assertEquals(0, DriftCommandAccess.print(bs, name + ".coefficients", new DriftTable("first", 3, null, null),
        new PrintStream(fromTopic, true, StandardCharsets.UTF_8)));
    String out = fromTopic.toString(StandardCharsets.UTF_8);
    assertEquals(fromFile.toString(StandardCharsets.UTF_8), out);
    assertEquals(f.times().size(), out.lines().filter(l -> l.matches("^\\d+\\s+2026-.*")).count(), out);
    assertTrue(out.contains("| views: part 3 differs: price"), out);

    try (LiveState state = new LiveState(name, bs, Map.of(), null).start()) {
      KafkaTestSupport.await("the view read every snapshot", Duration.ofSeconds(120),
          () -> state.stateJson().path("throughput").path("snapshots_read").asLong() == f.snapshots.size());
      JsonNode s = state.stateJson(List.of("price"));
      assertEquals(f.times().size(), s.path("coefficient_paths").get(0).path("points").size(), "one weight history");
      int differing = 0;
      for (JsonNode v : s.path("global_model").path("views")) {
        if (v.path("differs").asBoolean()) {
          assertEquals(GlobalViewsFeed.BEHIND, v.path("partition").asInt());
          differing++;
        }
      }
      assertEquals(1, differing, s.path("global_model").toString());
    }
  }
}
