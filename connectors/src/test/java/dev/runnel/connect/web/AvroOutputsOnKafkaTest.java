package dev.runnel.connect.web;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import dev.runnel.connect.demo.DemoRun;
import dev.runnel.connect.kafka.ExactlyOnceRunner;
import dev.runnel.connect.kafka.RunnerSettings;
import dev.runnel.connect.launch.OutputTally;
import dev.runnel.connect.output.AvroOutputsReferenceTest;
import dev.runnel.connect.output.OutputRecords;
import dev.runnel.connect.output.OutputSchemas;
import dev.runnel.connect.pipeline.PipelineProcessor;
import dev.runnel.connect.replay.FileReplay;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import dev.runnel.connect.testing.TestBroker;
import dev.runnel.core.config.PipelineConfig;
import java.io.ByteArrayOutputStream;
import java.io.InputStream;
import java.nio.ByteBuffer;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;
import org.apache.avro.file.DataFileStream;
import org.apache.avro.generic.GenericDatumReader;
import org.apache.avro.generic.GenericRecord;
import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.common.header.Header;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code outputs.encoding: avro} on a real (embedded) broker, through the wrapper {@code run} and
 * {@code demo} use ({@link OutputTally}): each Avro output carries its schema's fingerprint header;
 * {@code run}'s values are byte for byte the datums {@code replay} writes to its container files; and
 * every reader of the outputs reads the Avro run as it reads the JSON one: the live page's feed
 * ({@link LiveState}, following the topics), the demo summary's topic reader
 * ({@link DemoRun#readJson}), the run's reject tally ({@link OutputTally}) and {@code drift} (on the
 * topic and on the replay's {@code coefficients.avro}). Snapshots are Avro too: the topic's are the
 * snapshots a replay of the same records writes, byte for byte.
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class AvroOutputsOnKafkaTest {

  private static final Map<String, String> CLIENT_PROPS = Map.of(
      "session.timeout.ms", "6000", "heartbeat.interval.ms", "1000", "producer.transaction.timeout.ms", "15000");

  @Test
  void avroRunEqualsAvroReplayAndEveryReaderReadsIt(TestBroker broker, @TempDir Path dir) throws Exception {
    String bs = broker.bootstrapServers();
    PipelineConfig cfg = AvroOutputsReferenceTest.demo("encoding: avro").withNameAndTopic("avro-out", "avro-out.in");
    String topic = cfg.input().topic().orElseThrow();
    List<String> sample = new ArrayList<>();
    for (String l : Files.readAllLines(AvroOutputsReferenceTest.SAMPLE, StandardCharsets.UTF_8)) {
      if (!l.isBlank()) {
        sample.add(l);
      }
    }
    // one bad record first: then Kafka offset k holds line k of the file, as replay numbers it
    List<String> values = new ArrayList<>();
    values.add("not json");
    values.addAll(sample);
    Path file = dir.resolve("in.jsonl");
    Files.write(file, sample, StandardCharsets.UTF_8);
    KafkaTestSupport.createTopic(bs, topic, 1);
    KafkaTestSupport.produce(bs, topic, List.of(values));

    OutputTally tally = new OutputTally();
    RunnerSettings s = RunnerSettings.of(cfg.name(), topic, bs).withClientProperties(CLIENT_PROPS).withCommitInterval(500, 4000);
    ExactlyOnceRunner runner = new ExactlyOnceRunner(s, tally.wrap(PipelineProcessor.factory(cfg)));
    Thread t = new Thread(runner, "avro-runner");
    t.setDaemon(true);
    t.start();
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      KafkaTestSupport.await("all input committed", Duration.ofSeconds(180), () -> {
        if (runner.failure() != null) {
          throw new AssertionError("runner failed: " + runner.failure());
        }
        try {
          return KafkaTestSupport.committedTotal(admin, s.groupId(), topic) >= values.size();
        } catch (Exception e) {
          return false;
        }
      });
    }
    runner.close();
    t.join(30_000);
    assertNull(runner.failure());

    Path avro = dir.resolve("avro");
    FileReplay.run(cfg, file, avro, null);
    Path json = dir.resolve("json");
    FileReplay.run(AvroOutputsReferenceTest.demo(), file, json, null);
    // the snapshots count records and rejects: the replay that matches the run's has the leading bad record too
    Path fileAll = dir.resolve("in-all.jsonl");
    Files.write(fileAll, values, StandardCharsets.UTF_8);
    Path avroAll = dir.resolve("avro-all");
    FileReplay.run(cfg, fileAll, avroAll, null);
    Path jsonAll = dir.resolve("json-all");
    FileReplay.run(AvroOutputsReferenceTest.demo().withNameAndTopic("avro-out", "avro-out.in"), fileAll, jsonAll, null);

    // headers: the fingerprint alone on every Avro output, snapshots included
    List<ConsumerRecord<byte[], byte[]>> preds = KafkaTestSupport.readAll(bs, cfg.name() + ".predictions");
    List<ConsumerRecord<byte[], byte[]>> settled = KafkaTestSupport.readAll(bs, cfg.name() + ".settled");
    List<ConsumerRecord<byte[], byte[]>> rejects = KafkaTestSupport.readAll(bs, cfg.name() + ".rejects");
    checkHeaders(preds, OutputSchemas.Kind.PREDICTION);
    checkHeaders(settled, OutputSchemas.Kind.SETTLED);
    checkHeaders(rejects, OutputSchemas.Kind.REJECT);
    List<ConsumerRecord<byte[], byte[]>> snaps = KafkaTestSupport.readAll(bs, cfg.name() + ".coefficients");
    checkHeaders(snaps, OutputSchemas.Kind.SNAPSHOT);

    // run = replay, byte for byte: the topic's values are the container files' datums, in order
    assertEquals(0L, OutputRecords.read(rejects.get(0).headers(), rejects.get(0).value()).path("source").path("offset").asLong(-1));
    assertArrayEquals(datums(avro.resolve("predictions.avro")), concat(preds, 0), "predictions: run = replay");
    assertArrayEquals(datums(avro.resolve("settled.avro")), concat(settled, 0), "settled: run = replay");
    assertArrayEquals(datums(avro.resolve("rejects.avro")), concat(rejects, 1), "rejects after the leading one: run = replay");
    // snapshots: the topic's are the replay's, byte for byte; the replay adds one at the end of the file when records came after the last
    byte[] replaySnaps = datums(avroAll.resolve("coefficients.avro"));
    byte[] runSnaps = concat(snaps, 0);
    int replayCount = OutputRecords.readFile(avroAll.resolve("coefficients.avro")).size();
    assertTrue(snaps.size() > 10 && (replayCount == snaps.size() || replayCount == snaps.size() + 1),
        snaps.size() + " snapshots on the topic, " + replayCount + " in the replay");
    assertArrayEquals(runSnaps, java.util.Arrays.copyOf(replaySnaps, runSnaps.length), "snapshots: run = replay");
    assertTrue(replayCount == snaps.size() ? replaySnaps.length == runSnaps.length : replaySnaps.length > runSnaps.length);
    assertTrue(preds.size() > 4000 && settled.size() > 2000 && rejects.size() == 6,
        preds.size() + " predictions, " + settled.size() + " settled, " + rejects.size() + " rejects");

    // the demo summary's reader: the JSON layout, equal to the JSON replay's records
    for (String name : List.of("predictions", "settled", "rejects")) {
      List<JsonNode> got = DemoRun.readJson(bs, cfg.name() + "." + name);
      List<JsonNode> want = OutputRecords.readFile(json.resolve(name + ".jsonl"));
      int skip = name.equals("rejects") ? 1 : 0;
      assertEquals(want.size() + skip, got.size(), name);
      for (int i = 0; i < want.size(); i++) {
        AvroOutputsReferenceTest.sameJson(want.get(i), got.get(i + skip), name + " record " + i);
      }
    }

    // the demo summary's reader gives the Avro run's snapshots as the JSON replay of the same records wrote them
    List<JsonNode> gotSnaps = DemoRun.readJson(bs, cfg.name() + ".coefficients");
    List<JsonNode> wantSnaps = OutputRecords.readFile(jsonAll.resolve("coefficients.jsonl"));
    assertEquals(snaps.size(), gotSnaps.size());
    for (int i = 0; i < gotSnaps.size(); i++) {
      AvroOutputsReferenceTest.sameJson(wantSnaps.get(i), gotSnaps.get(i), "snapshot " + i);
    }

    // drift reads Avro snapshots: from the Avro run's topic (as from the JSON replay of the same records), and from the Avro replay's coefficients.avro as from the JSON one's coefficients.jsonl
    java.io.ByteArrayOutputStream fromTopic = new java.io.ByteArrayOutputStream();
    assertEquals(0, dev.runnel.connect.cli.DriftCommandAccess.print(bs, cfg.name() + ".coefficients",
        new dev.runnel.connect.drift.DriftTable("first", 3, null, null), new java.io.PrintStream(fromTopic, true, StandardCharsets.UTF_8)));
    long rows = fromTopic.toString(StandardCharsets.UTF_8).lines().count();
    assertTrue(rows > 10, "drift printed the Avro run's snapshots: " + rows + " lines");
    java.io.ByteArrayOutputStream fromJsonAll = new java.io.ByteArrayOutputStream();
    List<String> jsonAllLines = Files.readAllLines(jsonAll.resolve("coefficients.jsonl"), StandardCharsets.UTF_8).subList(0, snaps.size());
    Path jsonAllRun = dir.resolve("json-all-run.jsonl");
    Files.write(jsonAllRun, jsonAllLines, StandardCharsets.UTF_8);
    dev.runnel.connect.cli.DriftCommandAccess.printFile(jsonAllRun,
        new dev.runnel.connect.drift.DriftTable("first", 3, null, null), new java.io.PrintStream(fromJsonAll, true, StandardCharsets.UTF_8));
    assertEquals(fromJsonAll.toString(StandardCharsets.UTF_8), fromTopic.toString(StandardCharsets.UTF_8), "drift of the Avro topic = drift of the JSON lines");
    String[] drift = new String[2];
    int k = 0;
    for (Path snapFile : List.of(avro.resolve("coefficients.avro"), json.resolve("coefficients.jsonl"))) {
      java.io.ByteArrayOutputStream b = new java.io.ByteArrayOutputStream();
      assertEquals(0, dev.runnel.connect.cli.DriftCommandAccess.printFile(snapFile,
          new dev.runnel.connect.drift.DriftTable("first", 3, null, null), new java.io.PrintStream(b, true, StandardCharsets.UTF_8)));
      drift[k++] = b.toString(StandardCharsets.UTF_8);
    }
    assertEquals(drift[1], drift[0], "drift of the Avro replay = drift of the JSON replay");

    // the reject tally read the Avro rejects' reasons
    Map<String, Long> reasons = new TreeMap<>();
    reasons.put("malformed_json", 1L);
    for (JsonNode r : OutputRecords.readFile(json.resolve("rejects.jsonl"))) {
      reasons.merge(r.path("reason").asText(), 1L, Long::sum);
    }
    assertEquals(reasons, tally.rejectsByReason());

    // the live page's feed, following the Avro topics, against one fed the JSON replay's predictions
    LiveState expected = new LiveState(cfg.name(), "127.0.0.1:1", Map.of(), null, List.of("hub"));
    for (JsonNode p : OutputRecords.readFile(json.resolve("predictions.jsonl"))) {
      expected.addPrediction(p, "k" + p.path("source").path("offset").asLong());
    }
    for (JsonNode sn : wantSnaps.subList(0, snaps.size())) {
      expected.addSnapshot(sn);
    }
    try (LiveState live = new LiveState(cfg.name(), bs, Map.of(), null, List.of("hub")).start()) {
      KafkaTestSupport.await("the page read every prediction and snapshot", Duration.ofSeconds(60),
          () -> live.stateJson().path("throughput").path("predictions_read").asLong() >= preds.size()
              && live.stateJson().path("throughput").path("snapshots_read").asLong() >= snaps.size());
      JsonNode got = live.stateJson();
      JsonNode want = expected.stateJson();
      assertEquals(preds.size(), got.path("throughput").path("predictions_read").asLong());
      assertTrue(want.path("predictions").size() > 100, "the page draws one series' predictions (one hub: the page shows one series since format 3)");
      assertEquals(want.get("predictions"), got.get("predictions"));
      assertTrue(want.path("forecasts_ahead").path("entities").size() > 0, "forecasts ahead per hub");
      assertEquals(want.get("forecasts_ahead"), got.get("forecasts_ahead"));
      assertEquals(snaps.size(), got.path("throughput").path("snapshots_read").asLong());
      assertTrue(want.path("latest").path("columns").size() > 5 || want.path("coefficient_paths").size() > 0,
          "the page draws the snapshots: " + want.path("latest"));
      for (String key : List.of("shown_columns", "picked_columns", "coefficient_paths", "error_path", "latest", "alarm_log")) {
        assertEquals(want.get(key), got.get(key), "the live page's " + key + " from Avro snapshots");
      }
    }
  }

  private static void checkHeaders(List<ConsumerRecord<byte[], byte[]>> records, OutputSchemas.Kind kind) {
    assertTrue(!records.isEmpty(), kind.name());
    for (ConsumerRecord<byte[], byte[]> r : records) {
      Header h = r.headers().lastHeader(OutputSchemas.HEADER_SCHEMA);
      org.junit.jupiter.api.Assertions.assertNotNull(h, r.topic() + " offset " + r.offset() + ": no " + OutputSchemas.HEADER_SCHEMA + " header");
      assertArrayEquals(kind.fingerprintBytes(), h.value(), r.topic() + " offset " + r.offset());
      assertNull(r.headers().lastHeader("runnel.format"), "the fingerprint names the format");
    }
  }

  private static byte[] concat(List<ConsumerRecord<byte[], byte[]>> records, int skip) {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    for (int i = skip; i < records.size(); i++) {
      b.writeBytes(records.get(i).value());
    }
    return b.toByteArray();
  }

  /** The datums of a container file (no compression) as written, block after block. */
  private static byte[] datums(Path f) throws Exception {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    try (InputStream in = Files.newInputStream(f);
         DataFileStream<GenericRecord> s = new DataFileStream<>(in, new GenericDatumReader<>())) {
      String codec = s.getMetaString("avro.codec");
      assertTrue(codec == null || codec.equals("null"), "no compression: " + codec);
      while (s.hasNext()) {
        ByteBuffer block = s.nextBlock();
        byte[] x = new byte[block.remaining()];
        block.get(x);
        b.writeBytes(x);
      }
    }
    return b.toByteArray();
  }
}
