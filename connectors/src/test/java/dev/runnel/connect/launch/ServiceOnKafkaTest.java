package dev.runnel.connect.launch;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.runnel.connect.kafka.RunnerCounters;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import dev.runnel.connect.testing.TestBroker;
import dev.runnel.connect.web.Service;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import java.io.ByteArrayOutputStream;
import java.io.InputStream;
import java.io.PrintStream;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;

/**
 * The pipeline as a service, on the real embedded broker: a real run of the live pipeline (as {@code run}
 * wires it) over two input partitions, its web server scraped while it runs. {@code /metrics} holds the
 * runner's own counters, the rejects by reason, the lag and the models' numbers per partition; {@code /health}
 * and {@code /ready} answer 200 while it serves and 503 once it stopped; {@code /forecast} answers from the
 * partition Kafka put that key in, with the stream's reject reason for a bad record.
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class ServiceOnKafkaTest {

  private static final ObjectMapper JSON = new ObjectMapper();
  private static final Pattern SAMPLE = Pattern.compile("^([a-z_]+)(\\{[^}]*\\})? (\\S+)$", Pattern.MULTILINE);

  static PipelineConfig config(String name, String bootstrap, String webExtra) throws Exception {
    String yaml;
    try (InputStream in = ServiceOnKafkaTest.class.getResourceAsStream("/dev/runnel/demo/quillmarsh.yaml")) {
      yaml = new String(in.readAllBytes(), StandardCharsets.UTF_8);
    }
    yaml = yaml.replace("name: quillmarsh", "name: " + name)
        .replace("topic: quillmarsh.sessions", "topic: " + name + ".in")
        .replace("bootstrap_servers: \"\"", "bootstrap_servers: \"" + bootstrap + "\"")
        + "web:\n  port: 0\n" + (webExtra.contains("forecast_key_field") ? "" : "  forecast_key_field: hub\n") + webExtra;
    return ConfigLoader.parse(yaml, name + ".yaml");
  }

  /** Each sample line of a scrape: "name{labels}" to its value. */
  static Map<String, Double> samples(String scrape) {
    Map<String, Double> out = new HashMap<>();
    Matcher m = SAMPLE.matcher(scrape);
    while (m.find()) {
      out.put(m.group(1) + (m.group(2) == null ? "" : m.group(2)), Double.parseDouble(m.group(3)));
    }
    return out;
  }

  static HttpResponse<String> get(HttpClient http, String url) throws Exception {
    return http.send(HttpRequest.newBuilder(URI.create(url)).GET().build(), HttpResponse.BodyHandlers.ofString());
  }

  static HttpResponse<String> post(HttpClient http, String url, String body) throws Exception {
    return http.send(HttpRequest.newBuilder(URI.create(url)).POST(HttpRequest.BodyPublishers.ofString(body)).build(),
        HttpResponse.BodyHandlers.ofString());
  }

  @Test
  void scrapedDuringARealRun(TestBroker broker) throws Exception {
    String name = "service-scrape";
    String bs = broker.bootstrapServers();
    PipelineConfig cfg = config(name, bs, "");
    List<String> lines = new ArrayList<>(Files.readAllLines(Path.of("../demo-data/samples/quillmarsh-small.jsonl")).subList(0, 1200));
    KafkaTestSupport.createTopic(bs, name + ".in", 2);
    // keyed by hub, placed by Kafka's own partitioner (no partition given)
    try (KafkaProducer<byte[], byte[]> p = new KafkaProducer<>(KafkaTestSupport.producerConfig(bs))) {
      for (String l : lines) {
        Matcher hub = Pattern.compile("\"hub\":\"([^\"]+)\"").matcher(l); // the sample's bad lines too
        byte[] key = (hub.find() ? hub.group(1) : "none").getBytes(StandardCharsets.UTF_8);
        p.send(new ProducerRecord<>(name + ".in", key, l.getBytes(StandardCharsets.UTF_8))).get();
      }
    }
    HttpClient http = HttpClient.newBuilder().connectTimeout(Duration.ofSeconds(10)).build();
    ByteArrayOutputStream said = new ByteArrayOutputStream();
    try (LivePipeline live = LivePipeline.connect(cfg, new LivePipeline.Options(bs, null, -1, "0", 0, true, false, "test"),
        new PrintStream(said, true, StandardCharsets.UTF_8), null)) {
      live.startRunner();
      String base = live.webUrl();
      assertNotNull(base, said.toString(StandardCharsets.UTF_8));
      KafkaTestSupport.await("every record processed and committed", Duration.ofSeconds(120), () -> {
        if (live.runner().failure() != null) {
          throw new AssertionError(live.runner().failure());
        }
        RunnerCounters c = live.runner().counters();
        return c.recordsIn() >= lines.size() && c.commits() > 0 && live.runner().lagByPartition().size() == 2
            && live.runner().lagByPartition().values().stream().allMatch(v -> v == 0);
      });
      assertEquals(200, get(http, base + "health").statusCode());
      HttpResponse<String> ready = get(http, base + "ready");
      assertEquals(200, ready.statusCode(), ready.body());
      assertTrue(ready.body().contains("2 partition(s)"), ready.body());

      HttpResponse<String> scrape = get(http, base + "metrics");
      assertEquals(200, scrape.statusCode());
      assertTrue(scrape.headers().firstValue("Content-Type").orElse("").startsWith("text/plain"), scrape.headers().toString());
      Map<String, Double> m = samples(scrape.body());
      RunnerCounters c = live.runner().counters(); // idle now: nothing moves between the scrape and this
      String pl = "pipeline=\"" + name + "\"";
      assertEquals(c.recordsIn(), m.get("runnel_records_in_total{" + pl + "}"), scrape.body());
      assertEquals(c.outputsOut(), m.get("runnel_outputs_total{" + pl + "}"));
      assertEquals(c.commits(), m.get("runnel_commits_total{" + pl + "}"));
      assertEquals(c.aborts(), m.get("runnel_aborts_total{" + pl + "}"));
      assertEquals(c.commits(), m.get("runnel_commit_duration_seconds_count{" + pl + "}"), "one observation per commit");
      assertTrue(m.get("runnel_restore_duration_seconds_count{" + pl + "}") >= 1);
      assertEquals(2.0, m.get("runnel_partitions_held{" + pl + "}"));
      assertEquals(1.0, m.get("runnel_ready{" + pl + "}"));
      long rejectSum = 0;
      for (Map.Entry<String, Long> e : live.tally().rejectsByReason().entrySet()) {
        rejectSum += e.getValue();
        assertEquals(e.getValue().doubleValue(), m.get("runnel_rejects_total{" + pl + ",reason=\"" + e.getKey() + "\"}"), e.getKey());
      }
      assertEquals(c.rejects(), rejectSum);
      Map<Integer, Service.PartitionStats> stats = live.service().partitionStats();
      assertEquals(2, stats.size());
      for (int part = 0; part < 2; part++) {
        String lp = "{partition=\"" + part + "\"," + pl + "}";
        assertEquals(0.0, m.get("runnel_consumer_lag_records" + lp), scrape.body());
        assertEquals(stats.get(part).noiseSd(), m.get("runnel_noise_sd" + lp));
        assertEquals(stats.get(part).recentMae(), m.get("runnel_recent_mae" + lp));
        assertEquals(stats.get(part).activeAlarms(), m.get("runnel_active_alarms" + lp));
        assertTrue(stats.get(part).noiseSd() > 0, "a trained model per partition");
      }

      // forecasts from the partition Kafka put the key in
      Map<String, Integer> partitionOfHub = new HashMap<>();
      for (ConsumerRecord<byte[], byte[]> r : KafkaTestSupport.readAll(bs, name + ".in")) {
        partitionOfHub.put(new String(r.key(), StandardCharsets.UTF_8), r.partition());
      }
      assertEquals(2, new java.util.HashSet<>(partitionOfHub.values()).size(), "the hubs fall in both partitions");
      List<String> requests = new ArrayList<>();
      for (String hub : partitionOfHub.keySet()) {
        ObjectNode req = (ObjectNode) JSON.readTree(lines.get(lines.size() - 1));
        req.put("hub", hub);
        req.put("kind", "forecast");
        req.remove("sessions");
        HttpResponse<String> one = post(http, base + "forecast", req.toString());
        assertEquals(200, one.statusCode(), one.body());
        JsonNode a = JSON.readTree(one.body());
        assertEquals(partitionOfHub.get(hub).intValue(), a.path("partition").asInt(), hub);
        assertEquals("no_target", a.path("prediction").path("status").asText(), one.body());
        assertTrue(a.path("prediction").path("low").asDouble() < a.path("prediction").path("high").asDouble(), one.body());
        requests.add(req.toString());
      }
      HttpResponse<String> many = post(http, base + "forecast", "[" + String.join(",", requests) + "]");
      assertEquals(200, many.statusCode(), many.body());
      assertEquals(requests.size(), JSON.readTree(many.body()).size());
      HttpResponse<String> bad = post(http, base + "forecast",
          "{\"kind\":\"forecast\",\"hub\":\"QM-01\",\"issued_at\":\"2026-03-25T09:00:00+01:00\",\"observed_at\":\"2026-03-25T10:00:00+01:00\",\"weather\":\"clear\","
              + "\"temperature_c\":\"warm\",\"price_per_kwh\":0.2}");
      assertEquals(400, bad.statusCode(), bad.body());
      assertEquals("wrong_type", JSON.readTree(bad.body()).path("reason").asText(), bad.body());
      // the requests changed no count
      assertEquals(c, live.runner().counters());

      live.stopRunner();
      assertNull(live.runner().failure());
      HttpResponse<String> after = get(http, base + "ready");
      assertEquals(503, after.statusCode(), after.body());
      assertEquals(200, get(http, base + "health").statusCode(), "stopped cleanly: alive");
    }
  }

  @Test
  void aKeyOfAPartitionHeldElsewhereIsAnsweredWithItsPartition(TestBroker broker) throws Exception {
    String name = "service-two";
    String bs = broker.bootstrapServers();
    PipelineConfig cfg = config(name, bs, "");
    KafkaTestSupport.createTopic(bs, name + ".in", 2);
    List<String> lines = Files.readAllLines(Path.of("../demo-data/samples/quillmarsh-small.jsonl")).subList(0, 200);
    KafkaTestSupport.produce(bs, name + ".in", List.of(lines, lines));
    HttpClient http = HttpClient.newBuilder().connectTimeout(Duration.ofSeconds(10)).build();
    PrintStream quiet = new PrintStream(new ByteArrayOutputStream(), true, StandardCharsets.UTF_8);
    try (LivePipeline a = LivePipeline.connect(cfg, new LivePipeline.Options(bs, null, -1, "0", 0, true, false, "a"), quiet, null);
         LivePipeline b = LivePipeline.connect(cfg, new LivePipeline.Options(bs, null, -1, "1", 0, true, false, "b"), quiet, null)) {
      a.startRunner();
      b.startRunner();
      KafkaTestSupport.await("one partition each", Duration.ofSeconds(120), () -> {
        if (a.runner().failure() != null || b.runner().failure() != null) {
          throw new AssertionError(a.runner().failure() + " / " + b.runner().failure());
        }
        return a.runner().heldPartitions().size() == 1 && b.runner().heldPartitions().size() == 1
            && a.runner().notReady() == null && b.runner().notReady() == null;
      });
      int heldByA = a.runner().heldPartitions().iterator().next().partition();
      int checked = 0;
      for (int i = 1; i <= 8; i++) {
        String hub = "QM-0" + i;
        int owner = LiveService.partitionOf(hub.getBytes(StandardCharsets.UTF_8), 2);
        String req = "{\"kind\":\"forecast\",\"hub\":\"" + hub + "\",\"issued_at\":\"2026-03-25T09:00:00+01:00\",\"observed_at\":\"2026-03-25T10:00:00+01:00\","
            + "\"weather\":\"clear\",\"temperature_c\":3.0,\"price_per_kwh\":0.2}";
        HttpResponse<String> r = post(http, a.webUrl() + "forecast", req);
        JsonNode n = JSON.readTree(r.body());
        assertEquals(owner, n.path("partition").asInt(), r.body());
        if (owner == heldByA) {
          assertEquals(200, r.statusCode(), r.body());
        } else {
          assertEquals(421, r.statusCode(), r.body());
          assertTrue(n.path("detail").asText().startsWith("partition " + owner + " of " + name + ".in is held by another instance"),
              r.body());
          HttpResponse<String> there = post(http, b.webUrl() + "forecast", req);
          assertEquals(200, there.statusCode(), there.body());
          checked++;
        }
      }
      assertTrue(checked > 0, "some hub falls in the other partition");
    }
  }
}
