package dev.runnel.connect.launch;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.connect.demo.DemoRun;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.TestBroker;
import dev.runnel.connect.testing.KafkaTestSupport;
import dev.runnel.core.config.PipelineConfig;
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

/**
 * The wiring {@code run} and {@code demo} share, on the real embedded broker: the runner started
 * through it processes every record, and the summary's counts agree with the output topics.
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class LivePipelineOnKafkaTest {

  @Test
  void theSummaryCountsWhatTheTopicsHold(TestBroker broker) throws Exception {
    String name = "live-wiring";
    PipelineConfig cfg = DemoRun.demoConfig().withNameAndTopic(name, name + ".in");
    String bs = broker.bootstrapServers();
    List<String> lines = new ArrayList<>(Files.readAllLines(Path.of("../demo-data/samples/quillmarsh-small.jsonl")).subList(0, 600));
    lines.add("{not json");
    lines.add("{\"kind\":\"actual\",\"hub\":\"QM-01\",\"issued_at\":\"2026-03-25T10:00:00+01:00\",\"weather\":\"clear\","
        + "\"temperature_c\":\"warm\",\"price_per_kwh\":0.2,\"sessions\":30.0}");
    KafkaTestSupport.createTopic(bs, name + ".in", 1);
    KafkaTestSupport.produce(bs, name + ".in", List.of(lines));
    ByteArrayOutputStream said = new ByteArrayOutputStream();
    try (LivePipeline p = LivePipeline.connect(cfg, new LivePipeline.Options(bs, null, -1, "0", null, false, false, "test"),
        new PrintStream(said, true, StandardCharsets.UTF_8))) {
      assertNull(p.broker(), "a named cluster: no embedded broker of its own");
      p.startRunner();
      KafkaTestSupport.await("every record processed", Duration.ofSeconds(120), () -> {
        if (p.runner().failure() != null) {
          throw new AssertionError(p.runner().failure());
        }
        return p.runner().counters().recordsIn() >= lines.size() && p.runner().counters().commits() > 0;
      });
      p.stopRunner();
      assertNull(p.runner().failure());
      long predictions = KafkaTestSupport.readAll(bs, name + ".predictions").size();
      long snapshots = KafkaTestSupport.readAll(bs, name + ".coefficients").size();
      long rejects = KafkaTestSupport.readAll(bs, name + ".rejects").size();
      // no abort happened in this run, so the tally equals the committed outputs
      assertEquals(0, p.runner().counters().aborts());
      assertEquals(predictions, p.tally().predictions());
      assertEquals(snapshots, p.tally().snapshots());
      assertEquals(lines.size(), predictions + rejects, "one output per record");
      assertTrue(snapshots > 0, "snapshots: " + snapshots);
      assertEquals(Map.of("malformed_json", 1L, "wrong_type", 1L), p.tally().rejectsByReason());
      String summary = p.summary();
      assertTrue(summary.startsWith("pipeline live-wiring ran "), summary);
      assertTrue(summary.contains(String.format("  records in     %,d (", lines.size())), summary);
      assertTrue(summary.contains("  rejects        2: malformed_json 1, wrong_type 1"), summary);
      assertTrue(said.toString(StandardCharsets.UTF_8).contains("test: pipeline live-wiring consuming live-wiring.in from " + bs),
          said.toString(StandardCharsets.UTF_8));
    }
  }
}
