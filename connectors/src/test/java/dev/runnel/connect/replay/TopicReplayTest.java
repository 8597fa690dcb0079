package dev.runnel.connect.replay;

import dev.runnel.connect.report.JsonReport;
import dev.runnel.connect.file.Recording;
import dev.runnel.connect.recording.Loader;
import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.connect.testing.TestBroker;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.evaluate.Backtest;
import dev.runnel.core.evaluate.BacktestResult;
import java.io.BufferedOutputStream;
import java.io.IOException;
import java.io.OutputStream;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.concurrent.TimeUnit;
import org.apache.kafka.clients.admin.Admin;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;
import org.junit.jupiter.api.io.TempDir;

/** Replays from a real (embedded) broker: topic vs recording bit for bit, ranges, errors. */
@ExtendWith(EmbeddedKafkaExtension.class)
class TopicReplayTest {

  private static final Path SAMPLE = Path.of("../demo-data/samples/quillmarsh-small.jsonl");

  private static List<Backtest.Variant> variants() throws IOException {
    String yaml = Files.readString(Path.of("../demo-data/src/main/resources/dev/runnel/demo/quillmarsh.yaml"));
    PipelineConfig a = ConfigLoader.parse(yaml, "a.yaml");
    PipelineConfig b = ConfigLoader.parse(yaml.replace("  - {kind: cyclic, cycle: day_of_week, harmonics: 3}\n", ""), "b.yaml");
    return List.of(new Backtest.Variant("a", a), new Backtest.Variant("b", b));
  }

  private static Backtest.Options options() {
    return new Backtest.Options("hub", 6 * 3_600_000L, List.of("price_per_kwh"), -1, 1, 0.05);
  }

  /** The sample spread over three partitions by hub, as keyed production would. */
  private static void publishSample(String bootstrap, String topic) throws Exception {
    KafkaTestSupport.createTopic(bootstrap, topic, 3);
    List<List<String>> parts = List.of(new ArrayList<>(), new ArrayList<>(), new ArrayList<>());
    for (String l : Files.readAllLines(SAMPLE)) {
      if (!l.isBlank()) {
        parts.get(Math.floorMod(l.hashCode(), 3)).add(l);
      }
    }
    KafkaTestSupport.produce(bootstrap, topic, parts);
  }

  @Test
  void topicAndItsRecording_giveTheSameBits(TestBroker broker, @TempDir Path dir) throws Exception {
    String bs = broker.bootstrapServers();
    String topic = "bt-same-bits";
    publishSample(bs, topic);
    int groupsBefore;
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      groupsBefore = admin.listGroups().all().get(20, TimeUnit.SECONDS).size();
    }
    Backtest fromTopic = new Backtest(variants(), options());
    try (TopicSource src = new TopicSource(bs, Map.of(), topic, TopicRange.ALL)) {
      assertEquals(3, src.partitionCount());
      ReplayDriver.run(fromTopic, src, null);
    }
    Path rec = dir.resolve("rec.jsonl");
    try (TopicSource src = new TopicSource(bs, Map.of(), topic, TopicRange.ALL);
         OutputStream o = new BufferedOutputStream(Files.newOutputStream(rec))) {
      Recording.writeHeader(o, topic, src.partitionCount());
      StringBuilder sb = new StringBuilder();
      src.read(null, r -> {
        try {
          Recording.writeRecord(o, r.partition(), r.offset(), r.timestamp(), r.key(), r.value(), sb);
        } catch (IOException e) {
          throw new UncheckedIOException(e);
        }
      });
    }
    Backtest fromFile = new Backtest(variants(), options());
    ReplayDriver.run(fromFile, new FileSource(rec), null);
    BacktestResult a = fromTopic.result();
    BacktestResult b = fromFile.result();
    assertEquals(4951, a.records(), "every line of the sample (quillmarsh-truth.md: 4951 lines)");
    assertEquals(a, b); // records compare doubles by Double.compare: equal means the same bits
    Path ja = dir.resolve("a.json");
    Path jb = dir.resolve("b.json");
    JsonReport.write(a, Map.of("source", "x"), ja);
    JsonReport.write(b, Map.of("source", "x"), jb);
    assertArrayEquals(Files.readAllBytes(ja), Files.readAllBytes(jb));
    assertTrue(a.variant("a").overall().count() > 1000, "scored: " + a.variant("a").overall().count());
    // the replay used no consumer group and committed nothing
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      assertEquals(groupsBefore, admin.listGroups().all().get(20, TimeUnit.SECONDS).size());
    }
    // load the recording into a fresh topic: same partitions and timestamps, same results
    Loader.load(rec, bs, "bt-same-bits-copy", 1);
    Backtest fromCopy = new Backtest(variants(), options());
    try (TopicSource src = new TopicSource(bs, Map.of(), "bt-same-bits-copy", TopicRange.ALL)) {
      ReplayDriver.run(fromCopy, src, null);
    }
    assertEquals(a, fromCopy.result());
  }

  @Test
  void workerThreads_giveTheSameJsonAsOneThread(TestBroker broker, @TempDir Path dir) throws Exception {
    String bs = broker.bootstrapServers();
    String topic = "bt-threads";
    publishSample(bs, topic);
    byte[] expected = null;
    for (int threads : new int[] {1, 2}) {
      Backtest bt = new Backtest(variants(), options());
      try (TopicSource src = new TopicSource(bs, Map.of(), topic, TopicRange.ALL)) {
        assertEquals(4951, ReplayDriver.run(bt, src, threads, null), "every line of the sample (quillmarsh-truth.md: 4951 lines)");
      }
      Path out = dir.resolve("t" + threads + ".json");
      JsonReport.write(bt.result(), Map.of("source", topic), out);
      byte[] json = Files.readAllBytes(out);
      if (expected == null) {
        expected = json;
      } else {
        assertArrayEquals(expected, json, threads + " threads, three partitions");
      }
    }
  }

  @Test
  void offsetRange_readsOnlyThatRange(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    String topic = "bt-range";
    KafkaTestSupport.createTopic(bs, topic, 1);
    List<String> lines = Files.readAllLines(SAMPLE).subList(0, 300);
    KafkaTestSupport.produce(bs, topic, List.of(lines));
    List<Long> offsets = new ArrayList<>();
    try (TopicSource src = new TopicSource(bs, Map.of(), topic, new TopicRange(100L, null, 250L, null))) {
      assertEquals(150, src.expectedRecords());
      src.read((buf, off, len, ts, p, o) -> offsets.add(o), null);
    }
    assertEquals(150, offsets.size());
    assertEquals(100L, offsets.get(0));
    assertEquals(249L, offsets.get(149));
  }

  @Test
  void badRanges_giveClearErrors(TestBroker broker, @TempDir Path dir) throws Exception {
    String bs = broker.bootstrapServers();
    assertEquals("--end-offset 5 is not after --start-offset 10; the end is exclusive and must be greater than the start",
        assertThrows(IllegalArgumentException.class, () -> new TopicRange(10L, null, 5L, null)).getMessage());
    assertEquals("--end-time 2026-01-01T00:00:00Z is not after --start-time 2026-02-01T00:00:00Z; the end is exclusive "
        + "and must be later than the start", assertThrows(IllegalArgumentException.class, () -> new TopicRange(null,
            java.time.Instant.parse("2026-02-01T00:00:00Z"), null, java.time.Instant.parse("2026-01-01T00:00:00Z"))).getMessage());
    IllegalArgumentException missing = assertThrows(IllegalArgumentException.class,
        () -> new TopicSource(bs, Map.of(), "bt-no-such-topic", TopicRange.ALL));
    assertEquals("--source bt-no-such-topic: no such topic at " + bs + " (and no such file); name an existing topic "
        + "or a JSON Lines file", missing.getMessage());
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      assertTrue(!admin.listTopics().names().get(20, TimeUnit.SECONDS).contains("bt-no-such-topic"),
          "looking for a missing topic must not create it");
    }
    KafkaTestSupport.createTopic(bs, "bt-past-end", 1);
    KafkaTestSupport.produce(bs, "bt-past-end", List.of(List.of("{}", "{}")));
    IllegalArgumentException past = assertThrows(IllegalArgumentException.class,
        () -> new TopicSource(bs, Map.of(), "bt-past-end", new TopicRange(5L, null, null, null)));
    assertTrue(past.getMessage().startsWith("--source bt-past-end: the range holds no record (offsets per partition: 0: 0..2)"),
        past.getMessage());
    Path empty = dir.resolve("empty.jsonl");
    Files.write(empty, new byte[0]);
    assertEquals("--source " + empty + ": the file is empty; it must hold at least one record",
        assertThrows(IllegalArgumentException.class, () -> new FileSource(empty)).getMessage());
    Path blank = dir.resolve("blank.jsonl");
    Files.writeString(blank, "\n\n", StandardCharsets.UTF_8);
    assertEquals("--source " + blank + ": the file holds no record; it must hold at least one",
        assertThrows(IllegalArgumentException.class,
            () -> new FileSource(blank).read((b, o, l, t, p, off) -> { }, null)).getMessage());
  }
}
