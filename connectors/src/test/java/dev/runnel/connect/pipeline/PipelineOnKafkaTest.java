package dev.runnel.connect.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.connect.testing.TestBroker;
import dev.runnel.connect.demo.DemoRun;
import dev.runnel.connect.kafka.ExactlyOnceRunner;
import dev.runnel.connect.kafka.RunnerSettings;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.OutputJson;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import dev.runnel.demo.QuillmarshGenerator;
import dev.runnel.demo.Settings;
import java.io.ByteArrayOutputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;

/**
 * The real pipeline (stream-core's PipelineStep through PipelineProcessor) inside the exactly-once
 * runner, against the real embedded broker: every record gives exactly one output, bad records
 * go to rejects with the right reason and never touch the model, and the state the runner
 * commits equals a direct stream-core run over the same records, bit for bit.
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class PipelineOnKafkaTest {

  private static final ObjectMapper JSON = new ObjectMapper();
  static final Map<String, String> TEST_CLIENT_PROPS = Map.of(
      "session.timeout.ms", "6000", "heartbeat.interval.ms", "1000", "producer.transaction.timeout.ms", "15000");

  /** The demo configuration with its own pipeline name and topic. */
  static PipelineConfig config(String name) {
    return DemoRun.demoConfig().withNameAndTopic(name, name + ".in");
  }

  static List<String> demoLines(int n) {
    return new QuillmarshGenerator(Settings.defaults().withDays(60)).lines().limit(n).toList();
  }

  /** Runs the pipeline on the topic until every input record is committed; returns the final state bytes. */
  static byte[] runToEnd(TestBroker broker, PipelineConfig cfg, long total) throws Exception {
    String bs = broker.bootstrapServers();
    RunnerSettings s = RunnerSettings.of(cfg.name(), cfg.input().topic().orElseThrow(), bs)
        .withClientProperties(TEST_CLIENT_PROPS).withCommitInterval(500, 4000);
    ExactlyOnceRunner runner = new ExactlyOnceRunner(s, PipelineProcessor.factory(cfg));
    Thread t = new Thread(runner, "pipeline-runner");
    t.setDaemon(true);
    t.start();
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      KafkaTestSupport.await("all input committed", Duration.ofSeconds(180), () -> {
        if (runner.failure() != null) {
          throw new AssertionError("runner failed: " + runner.failure());
        }
        try {
          return KafkaTestSupport.committedTotal(admin, s.groupId(), s.inputTopic()) >= total;
        } catch (Exception e) {
          return false;
        }
      });
    }
    runner.close();
    t.join(30_000);
    assertNull(runner.failure());
    List<ConsumerRecord<byte[], byte[]>> state = KafkaTestSupport.readAll(bs, cfg.name() + ".state");
    assertTrue(!state.isEmpty(), "state checkpoints published");
    return state.get(state.size() - 1).value();
  }

  /** The same records through stream-core directly, with offsets as the live run numbers them. */
  static PipelineStep direct(PipelineConfig cfg, List<String> lines) {
    PipelineStep step = new PipelineStep(cfg);
    PipelineStep.Sink none = new PipelineStep.Sink() {
      @Override public void prediction(Prediction p, EventRecord r) { }
      @Override public void reject(RejectReason reason, String detail) { }
      @Override public void snapshotDue() { }
    };
    long offset = 0;
    for (String line : lines) {
      byte[] b = line.getBytes(StandardCharsets.UTF_8);
      step.process(b, 0, b.length, 0L, 0, offset++, none);
    }
    return step;
  }

  static byte[] modelAndFeaturizerBytes(PipelineStep step) throws IOException {
    ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    DataOutputStream out = new DataOutputStream(bytes);
    step.featurizer().writeTo(out);
    step.model().writeTo(out);
    out.flush();
    return bytes.toByteArray();
  }

  @Test
  void twentyThousandDemoRecordsGiveOnePredictionEachAndTheDirectRunsState(TestBroker broker) throws Exception {
    PipelineConfig cfg = config("e2e-pipeline");
    String bs = broker.bootstrapServers();
    List<String> lines = demoLines(20_000);
    KafkaTestSupport.createTopic(bs, cfg.input().topic().orElseThrow(), 1);
    KafkaTestSupport.produce(bs, cfg.input().topic().orElseThrow(), List.of(lines));
    byte[] state = runToEnd(broker, cfg, lines.size());

    PipelineStep reference = direct(cfg, lines);
    assertArrayEquals(reference.checkpoint(), state, "the committed state equals stream-core's direct run, bit for bit");

    List<ConsumerRecord<byte[], byte[]>> preds = KafkaTestSupport.readAll(bs, cfg.name() + ".predictions");
    List<ConsumerRecord<byte[], byte[]>> rejects = KafkaTestSupport.readAll(bs, cfg.name() + ".rejects");
    assertEquals(lines.size(), preds.size() + rejects.size(), "one output per input record");
    assertEquals(reference.rejected(), rejects.size());
    Map<Long, Integer> perOffset = new HashMap<>();
    for (ConsumerRecord<byte[], byte[]> r : preds) {
      JsonNode p = JSON.readTree(r.value());
      perOffset.merge(p.path("source").path("offset").asLong(), 1, Integer::sum);
    }
    for (ConsumerRecord<byte[], byte[]> r : rejects) {
      JsonNode p = JSON.readTree(r.value());
      perOffset.merge(p.path("source").path("offset").asLong(), 1, Integer::sum);
    }
    assertEquals(lines.size(), perOffset.size(), "every offset has an output");
    assertTrue(perOffset.values().stream().allMatch(c -> c == 1), "no offset has two outputs");
    List<ConsumerRecord<byte[], byte[]>> snaps = KafkaTestSupport.readAll(bs, cfg.name() + ".coefficients");
    assertTrue(snaps.size() > 10, "snapshots present: " + snaps.size());
    JsonNode last = JSON.readTree(snaps.get(snaps.size() - 1).value());
    assertTrue(last.path("columns").size() > 20, "snapshot carries the columns");
    // output format 3: the format version and the pipeline name are headers of every output record, not value fields
    for (List<ConsumerRecord<byte[], byte[]>> topic : List.of(preds, rejects, snaps)) {
      for (ConsumerRecord<byte[], byte[]> r : topic) {
        JsonNode v = JSON.readTree(r.value());
        if (r.topic().endsWith(".coefficients")) {
          assertEquals(2, v.path("format").asInt(), "snapshots keep their format 2 value");
        } else {
          assertTrue(!v.has("format") && !v.has("pipeline"), r.topic() + ": " + v);
          if (r.topic().endsWith(".predictions")) {
            // only the configured echo fields (the demo echoes its entity field, hub)
            List<String> echoed = new java.util.ArrayList<>();
            v.path("fields").fieldNames().forEachRemaining(echoed::add);
            assertEquals(cfg.outputs().echoFields(), echoed, r.topic() + ": " + v);
          }
        }
        assertEquals("3", header(r, OutputJson.HEADER_FORMAT), r.topic() + " offset " + r.offset());
        assertEquals(cfg.name(), header(r, OutputJson.HEADER_PIPELINE), r.topic() + " offset " + r.offset());
      }
    }
    for (ConsumerRecord<byte[], byte[]> r : KafkaTestSupport.readAll(bs, cfg.name() + ".state")) {
      assertNull(r.headers().lastHeader(OutputJson.HEADER_FORMAT), "state records carry only their offset header");
    }
  }

  private static String header(ConsumerRecord<byte[], byte[]> r, String name) {
    org.apache.kafka.common.header.Header h = r.headers().lastHeader(name);
    return h == null ? null : new String(h.value(), StandardCharsets.UTF_8);
  }

  /** Each bad record with the reason it must be rejected for. */
  static Map<String, RejectReason> badRecords() {
    String good = "{\"kind\":\"actual\",\"hub\":\"QM-01\",\"issued_at\":\"2026-01-05T10:00:00+01:00\","
        + "\"weather\":\"rain\",\"temperature_c\":4.1,\"price_per_kwh\":0.31,\"sessions\":30.5}";
    Map<String, RejectReason> m = new LinkedHashMap<>();
    m.put(good.substring(0, 50), RejectReason.MALFORMED_JSON);                                   // 1 truncated JSON
    m.put("[1,2,3]", RejectReason.MALFORMED_JSON);                                               // 2 not an object
    m.put("", RejectReason.MALFORMED_JSON);                                                      // 3 empty value
    m.put(good.replace("4.1", "\"warm\""), RejectReason.WRONG_TYPE);                            // 4 string for a number
    m.put(good.replace("\"QM-01\"", "17"), RejectReason.WRONG_TYPE);                            // 5 number for a text
    m.put(good.replace("30.5", "NaN"), RejectReason.NOT_FINITE);                                 // 6 NaN token
    m.put(good.replace("0.31", "Infinity"), RejectReason.NOT_FINITE);                            // 7 Infinity token
    m.put(good.replace("4.1", "1e400"), RejectReason.NOT_FINITE);                                // 8 number overflow
    m.put(good.replace("0.31", "1e300"), RejectReason.OUT_OF_RANGE);                             // 9 absurd magnitude
    m.put(good.replace("2026-01-05T10:00:00+01:00", "yesterday"), RejectReason.BAD_TIME);        // 10 unparsable time
    m.put(good.replace("2026-01-05", "9026-01-05"), RejectReason.ABSURD_TIME);                   // 11 absurd year
    m.put(good.replace("QM-01", "Q".repeat(300)), RejectReason.TOO_LONG);                       // 12 oversized string
    m.put(good.replace("{\"kind\"", "{\"pad\":\"" + "x".repeat(70_000) + "\",\"kind\""),
        RejectReason.RECORD_TOO_LARGE);                                                          // 13 oversized record
    m.put(good.replace("\"hub\":\"QM-01\",", ""), RejectReason.MISSING_FIELD);                   // 14 missing feature field
    m.put(good.replace(",\"issued_at\":\"2026-01-05T10:00:00+01:00\"", ""),
        RejectReason.MISSING_FIELD);                                                             // 15 missing event time
    m.put(good.replace("\"rain\"", "{\"sky\":\"grey\"}"), RejectReason.WRONG_TYPE);             // 16 object for a text
    return m;
  }

  @Test
  void badRecordsGoToRejectsWithTheirReasonAndNeverTouchTheModel(TestBroker broker) throws Exception {
    PipelineConfig cfg = config("bad-input");
    String bs = broker.bootstrapServers();
    List<String> clean = demoLines(6_000);
    Map<String, RejectReason> bad = badRecords();
    assertTrue(bad.size() >= 12, "at least 12 kinds of bad record");
    List<String> salted = new ArrayList<>();
    Map<Integer, RejectReason> expectedAt = new HashMap<>();
    List<String> badList = new ArrayList<>(bad.keySet());
    int every = clean.size() / (badList.size() + 1);
    int b = 0;
    for (int i = 0; i < clean.size(); i++) {
      if (i > 0 && i % every == 0 && b < badList.size()) {
        expectedAt.put(salted.size(), bad.get(badList.get(b)));
        salted.add(badList.get(b++));
      }
      salted.add(clean.get(i));
    }
    assertEquals(badList.size(), b);
    KafkaTestSupport.createTopic(bs, cfg.input().topic().orElseThrow(), 1);
    KafkaTestSupport.produce(bs, cfg.input().topic().orElseThrow(), List.of(salted));
    byte[] state = runToEnd(broker, cfg, salted.size());

    List<ConsumerRecord<byte[], byte[]>> rejects = KafkaTestSupport.readAll(bs, cfg.name() + ".rejects");
    Map<Long, String> reasonAt = new HashMap<>();
    for (ConsumerRecord<byte[], byte[]> r : rejects) {
      JsonNode j = JSON.readTree(r.value());
      reasonAt.put(j.path("source").path("offset").asLong(), j.path("reason").asText());
      assertTrue(j.path("raw_length").asInt() <= 80_000 && j.path("raw").asText().length() <= 4096, "raw bytes truncated");
    }
    PipelineStep cleanRun = direct(cfg, clean);
    int cleanRejects = (int) cleanRun.rejected(); // the demo feed plants a few corrupt records of its own
    assertEquals(badList.size() + cleanRejects, rejects.size(), "every bad record, and only those, rejected");
    for (Map.Entry<Integer, RejectReason> e : expectedAt.entrySet()) {
      assertEquals(e.getValue().id(), reasonAt.get((long) e.getKey()),
          "reason of the bad record at offset " + e.getKey() + ": " + salted.get(e.getKey()).substring(0,
              Math.min(60, salted.get(e.getKey()).length())));
    }
    List<ConsumerRecord<byte[], byte[]>> preds = KafkaTestSupport.readAll(bs, cfg.name() + ".predictions");
    assertEquals(salted.size() - rejects.size(), preds.size(), "every good record predicted");

    PipelineStep restored = new PipelineStep(cfg);
    restored.restore(state);
    assertArrayEquals(modelAndFeaturizerBytes(cleanRun), modelAndFeaturizerBytes(restored),
        "model and featurizer equal those of the run without the bad records");
  }
}
