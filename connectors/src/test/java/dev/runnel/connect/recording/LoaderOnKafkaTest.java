package dev.runnel.connect.recording;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.connect.testing.TestBroker;
import dev.runnel.connect.file.Recording;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import java.io.OutputStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Comparator;
import java.util.List;
import java.util.Map;
import java.util.concurrent.TimeUnit;
import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.admin.NewTopic;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.common.config.ConfigResource;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code load} of a recording on the real broker: partitions, keys (text and binary), timestamps and absent
 * values come back as recorded; a topic it creates keeps old records (retention.ms=-1); an existing topic
 * whose retention would delete them is refused with the fix.
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class LoaderOnKafkaTest {

  /** 2025-03-01T00:00:00Z: far older than any default retention. */
  private static final long OLD = 1_740_787_200_000L;
  private static final byte[] BINARY_KEY = {(byte) 0xff, 0x00, 0x7f};

  @TempDir
  Path dir;

  private Path recording(long firstTimestamp) throws Exception {
    Path f = dir.resolve("rec-" + firstTimestamp + ".jsonl");
    try (OutputStream out = Files.newOutputStream(f)) {
      StringBuilder sb = new StringBuilder();
      Recording.writeHeader(out, "somewhere", 2);
      Recording.writeRecord(out, 0, 0, firstTimestamp, "hub-1".getBytes(StandardCharsets.UTF_8), "{\"a\":1}".getBytes(StandardCharsets.UTF_8), sb);
      Recording.writeRecord(out, 1, 0, firstTimestamp + 1000, BINARY_KEY, "{\"a\":2}".getBytes(StandardCharsets.UTF_8), sb);
      Recording.writeRecord(out, 0, 1, firstTimestamp + 2000, null, "not json".getBytes(StandardCharsets.UTF_8), sb);
      Recording.writeRecord(out, 1, 1, firstTimestamp + 3000, "hub-2".getBytes(StandardCharsets.UTF_8), null, sb);
    }
    return f;
  }

  /** A CSV file is published one JSON object a row, its cells typed by the fields; a CSV file without fields is refused. */
  @Test
  void aCsvFileIsPublishedAsJsonRecords(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    Path csv = dir.resolve("rows.csv");
    Files.writeString(csv, "hub,sessions,note\nQM-01,3.5,x\n\"QM,02\",,y\n");
    Map<String, dev.runnel.core.record.FieldType> fields = new java.util.LinkedHashMap<>();
    fields.put("hub", dev.runnel.core.record.FieldType.TEXT);
    fields.put("sessions", dev.runnel.core.record.FieldType.NUMBER);
    IllegalArgumentException noFields = assertThrows(IllegalArgumentException.class, () -> Loader.load(csv, bs, "load-csv", 1));
    assertTrue(noFields.getMessage().contains("--config"), noFields.getMessage());
    assertEquals(2, Loader.load(csv, fields, bs, Map.of(), "load-csv", 1));
    List<ConsumerRecord<byte[], byte[]>> back = KafkaTestSupport.readAll(bs, "load-csv");
    back.sort(Comparator.comparingLong(ConsumerRecord::offset));
    assertEquals(List.of("{\"hub\":\"QM-01\",\"sessions\":3.5}", "{\"hub\":\"QM,02\"}"),
        List.of(new String(back.get(0).value(), StandardCharsets.UTF_8), new String(back.get(1).value(), StandardCharsets.UTF_8)));
  }

  @Test
  void aRecordingComesBackWithItsKeysTimestampsAndPartitionsAndIsKept(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    assertEquals(4, Loader.load(recording(OLD), bs, "load-keys", 1));
    List<ConsumerRecord<byte[], byte[]>> back = KafkaTestSupport.readAll(bs, "load-keys");
    back.sort(Comparator.comparingLong(ConsumerRecord::timestamp));
    assertEquals(4, back.size());
    assertEquals(0, back.get(0).partition());
    assertArrayEquals("hub-1".getBytes(StandardCharsets.UTF_8), back.get(0).key(), "a text key is kept");
    assertEquals(OLD, back.get(0).timestamp());
    assertEquals(1, back.get(1).partition());
    assertArrayEquals(BINARY_KEY, back.get(1).key(), "a binary key is kept");
    assertNull(back.get(2).key(), "no key stays no key");
    assertEquals("not json", new String(back.get(2).value(), StandardCharsets.UTF_8));
    assertArrayEquals("hub-2".getBytes(StandardCharsets.UTF_8), back.get(3).key());
    assertNull(back.get(3).value(), "an absent value stays absent");
    assertEquals(OLD + 3000, back.get(3).timestamp());
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      ConfigResource r = new ConfigResource(ConfigResource.Type.TOPIC, "load-keys");
      String retention = admin.describeConfigs(List.of(r)).all().get(30, TimeUnit.SECONDS).get(r).get("retention.ms").value();
      assertEquals("-1", retention, "the broker's default (7 days) would delete these 2025 records at its next retention check");
    }
  }

  @Test
  void anExistingTopicThatWouldDeleteTheRecordingIsRefusedWithTheFix(TestBroker broker) throws Exception {
    String bs = broker.bootstrapServers();
    try (Admin admin = KafkaTestSupport.admin(bs)) {
      admin.createTopics(List.of(new NewTopic("load-short", 2, (short) 1).configs(Map.of("retention.ms", "3600000"))))
          .all().get(30, TimeUnit.SECONDS);
    }
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> Loader.load(recording(OLD), bs, "load-short", 1));
    assertTrue(e.getMessage().startsWith("--topic load-short keeps records for retention.ms=3600000 (PT1H) but the recording's"
        + " oldest record is from 2025-03-01T00:00:00Z"), e.getMessage());
    assertTrue(e.getMessage().contains("--add-config retention.ms=-1"), e.getMessage());
    assertEquals(0, KafkaTestSupport.readAll(bs, "load-short").size(), "nothing loaded");
    // recent records fit the same retention
    assertEquals(4, Loader.load(recording(System.currentTimeMillis() - 60_000), bs, "load-short", 1));
  }

  @Test
  void retentionArithmetic() {
    long now = OLD + 10_000;
    assertNull(Loader.expiring("t", "delete", -1, 0, now), "infinite retention");
    assertNull(Loader.expiring("t", "compact", 1000, 0, now), "compaction deletes by key, not by time");
    assertNull(Loader.expiring("t", "delete", 10_000, OLD, now), "exactly at the edge is kept");
    assertTrue(Loader.expiring("t", "compact,delete", 9_999, OLD, now).startsWith("--topic t keeps records for retention.ms=9999"));
  }
}
