package dev.runnel.connect.recording;

import dev.runnel.connect.file.CsvLines;
import dev.runnel.connect.file.FileFormat;
import dev.runnel.connect.file.JsonLinesReader;
import dev.runnel.core.record.FieldType;
import dev.runnel.connect.file.Recording;
import dev.runnel.connect.kafka.ClientConfig;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Arrays;
import java.util.List;
import java.util.Map;
import java.util.Properties;
import java.util.concurrent.ExecutionException;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicReference;
import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.admin.AdminClientConfig;
import org.apache.kafka.clients.admin.Config;
import org.apache.kafka.clients.admin.ConfigEntry;
import org.apache.kafka.clients.admin.NewTopic;
import org.apache.kafka.clients.admin.TopicDescription;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerConfig;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.common.config.ConfigResource;
import org.apache.kafka.common.config.TopicConfig;
import org.apache.kafka.common.errors.UnknownTopicOrPartitionException;
import org.apache.kafka.common.serialization.ByteArraySerializer;

/**
 * Publishes a JSON Lines or CSV file to a topic (a CSV row as the JSON object {@link CsvLines} makes of it). A recording keeps each record's partition, key, timestamp and
 * absent value (the topic must have at least as many partitions); a plain file is published one line
 * per record, without key, with the producer's timestamps. A topic it creates keeps its records for good
 * ({@link #NEW_TOPIC_CONFIG}); an existing topic whose retention would delete the recording's old records
 * is refused with the fix.
 */
public final class Loader {

  private Loader() { }

  /** As {@link #load(Path, String, Map, String, int)} without client properties. */
  public static long load(Path file, String bootstrap, String topic, int partitionsForPlain) throws Exception {
    return load(file, bootstrap, Map.of(), topic, partitionsForPlain);
  }

  /**
   * @param file the file (plain or a recording)
   * @param bootstrap bootstrap servers
   * @param clientProperties Kafka client properties (security, tuning) as in {@code kafka.client_properties}:
   *     unprefixed keys for both clients, {@code producer.}/{@code admin.} keys for one; {@code ${ENV}}
   *     resolved from the environment. Not modified.
   * @param topic the topic; created when missing
   * @param partitionsForPlain partitions of a new topic for a plain file, ≥ 1
   * @return records published
   * @throws IllegalArgumentException if the file is missing or empty, the topic has too few partitions or a
   *     retention that would delete the recording's records, or a client property refers to an environment
   *     variable that is not set
   */
  public static long load(Path file, String bootstrap, Map<String, String> clientProperties, String topic,
                          int partitionsForPlain) throws Exception {
    return load(file, null, bootstrap, clientProperties, topic, partitionsForPlain);
  }

  /**
   * As {@link #load(Path, String, Map, String, int)}, also for a CSV file ({@link FileFormat}): each row
   * is published as the JSON object {@link CsvLines} makes of it (without key, with the producer's timestamps).
   *
   * @param csvTypes the declared fields a CSV file's cells are typed by (a configuration's {@code input.fields});
   *     null to refuse CSV. Not modified.
   * @throws IllegalArgumentException also if the file is neither JSON Lines nor CSV, or is CSV and
   *     {@code csvTypes} is null
   */
  public static long load(Path file, Map<String, FieldType> csvTypes, String bootstrap, Map<String, String> clientProperties,
                          String topic, int partitionsForPlain) throws Exception {
    if (partitionsForPlain < 1) {
      throw new IllegalArgumentException("--partitions must be at least 1, got " + partitionsForPlain);
    }
    if (!Files.isRegularFile(file)) {
      throw new IllegalArgumentException("--source " + file + ": no such file");
    }
    if (FileFormat.of(file, "--source") == FileFormat.CSV) {
      return loadCsv(file, csvTypes, bootstrap, clientProperties, topic, partitionsForPlain);
    }
    // first pass: is it a recording, how many partitions, how old is its oldest record
    int[] maxPartition = {-1};
    boolean[] recorded = {false};
    long[] oldest = {Long.MAX_VALUE};
    long[] count = {0};
    JsonLinesReader.read(file, new JsonLinesReader.LineHandler() {
      boolean first = true;
      final Recording.Line line = new Recording.Line();

      @Override
      public void line(byte[] buf, int off, int len, long n) {
        if (first) {
          first = false;
          recorded[0] = Recording.isHeader(buf, off, len);
          if (recorded[0]) {
            return;
          }
        }
        count[0]++;
        if (recorded[0]) {
          line.parse(buf, off, len, n);
          maxPartition[0] = Math.max(maxPartition[0], line.partition());
          oldest[0] = Math.min(oldest[0], line.timestamp());
        }
      }
    });
    if (count[0] == 0) {
      throw new IllegalArgumentException("--source " + file + ": the file holds no record"
          + (recorded[0] ? " (a recording header only)" : "") + "; it must hold at least one");
    }
    int need = recorded[0] ? maxPartition[0] + 1 : partitionsForPlain;
    Properties producerProps = producerProperties(bootstrap, clientProperties);
    ensureTopic(adminProperties(bootstrap, clientProperties), topic, Math.max(1, need),
        recorded[0] ? oldest[0] : Long.MAX_VALUE, System.currentTimeMillis());
    AtomicReference<Exception> failure = new AtomicReference<>();
    long[] n = {0};
    try (KafkaProducer<byte[], byte[]> producer = new KafkaProducer<>(producerProps, new ByteArraySerializer(), new ByteArraySerializer())) {
      org.apache.kafka.clients.producer.Callback onError = (md, e) -> {
        if (e != null) {
          failure.compareAndSet(null, e);
        }
      };
      JsonLinesReader.read(file, new JsonLinesReader.LineHandler() {
        boolean first = true;
        final Recording.Line line = new Recording.Line();

        @Override
        public void line(byte[] buf, int off, int len, long lineNumber) {
          if (first) {
            first = false;
            if (recorded[0]) {
              return; // the header
            }
          }
          n[0]++;
          if (recorded[0]) {
            line.parse(buf, off, len, lineNumber);
            byte[] value = line.absent() ? null
                : Arrays.copyOfRange(line.valueBuf(), line.valueOff(), line.valueOff() + line.valueLen());
            byte[] key = line.key() == null ? null : line.key().clone();
            producer.send(new ProducerRecord<>(topic, line.partition(), line.timestamp(), key, value), onError);
          } else {
            producer.send(new ProducerRecord<>(topic, Arrays.copyOfRange(buf, off, off + len)), onError);
          }
        }
      });
      producer.flush();
    }
    if (failure.get() != null) {
      throw new IllegalStateException("publishing to " + topic + " failed: " + failure.get().getMessage(), failure.get());
    }
    return n[0];
  }

  private static long loadCsv(Path file, Map<String, FieldType> csvTypes, String bootstrap,
                              Map<String, String> clientProperties, String topic, int partitions) throws Exception {
    if (csvTypes == null) {
      throw new IllegalArgumentException("--source " + file + ": a CSV file needs --config: its input.fields give the"
          + " cells' types");
    }
    // first pass: the header names declared fields and there is a row
    long rows = new CsvLines(file, csvTypes, JsonLinesReader.DEFAULT_MAX_LINE_BYTES).read((buf, off, len, n) -> { });
    if (rows == 0) {
      throw new IllegalArgumentException("--source " + file + ": the CSV file holds a header but no row; it must hold at least one");
    }
    ensureTopic(adminProperties(bootstrap, clientProperties), topic, partitions, Long.MAX_VALUE, System.currentTimeMillis());
    AtomicReference<Exception> failure = new AtomicReference<>();
    long[] n = {0};
    try (KafkaProducer<byte[], byte[]> producer = new KafkaProducer<>(producerProperties(bootstrap, clientProperties),
        new ByteArraySerializer(), new ByteArraySerializer())) {
      new CsvLines(file, csvTypes, JsonLinesReader.DEFAULT_MAX_LINE_BYTES).read((buf, off, len, line) -> {
        n[0]++;
        producer.send(new ProducerRecord<>(topic, Arrays.copyOfRange(buf, off, off + len)), (md, e) -> {
          if (e != null) {
            failure.compareAndSet(null, e);
          }
        });
      });
      producer.flush();
    }
    if (failure.get() != null) {
      throw new IllegalStateException("publishing to " + topic + " failed: " + failure.get().getMessage(), failure.get());
    }
    return n[0];
  }

  /**
   * The producer's properties: our defaults (idempotent, lz4, 256 KiB batches), then the user's
   * properties for a producer (they win), then the bootstrap servers.
   */
  static Properties producerProperties(String bootstrap, Map<String, String> clientProperties) {
    Properties p = new Properties();
    p.put(ProducerConfig.ACKS_CONFIG, "all");
    p.put(ProducerConfig.ENABLE_IDEMPOTENCE_CONFIG, "true");
    p.put(ProducerConfig.LINGER_MS_CONFIG, "20");
    p.put(ProducerConfig.BATCH_SIZE_CONFIG, String.valueOf(256 * 1024));
    p.put(ProducerConfig.COMPRESSION_TYPE_CONFIG, "lz4");
    p.putAll(ClientConfig.forClient(clientProperties, ClientConfig.Kind.PRODUCER, System::getenv));
    p.put(ProducerConfig.BOOTSTRAP_SERVERS_CONFIG, bootstrap);
    return p;
  }

  /** The admin client's properties: a 30 s timeout, the user's properties for an admin client, the bootstrap servers. */
  static Properties adminProperties(String bootstrap, Map<String, String> clientProperties) {
    Properties p = new Properties();
    p.put(AdminClientConfig.DEFAULT_API_TIMEOUT_MS_CONFIG, 30_000);
    p.putAll(ClientConfig.forClient(clientProperties, ClientConfig.Kind.ADMIN, System::getenv));
    p.put(AdminClientConfig.BOOTSTRAP_SERVERS_CONFIG, bootstrap);
    return p;
  }

  /**
   * Topic settings {@code load} creates a topic with: records kept for good ({@code retention.ms=-1}).
   * A recording keeps its records' original timestamps, often weeks or months old; under the broker's
   * default time retention (7 days) the broker deletes such records at its next retention check, minutes
   * after the load, and a pipeline then reads nothing. {@code message.timestamp.type=LogAppendTime} would
   * also keep them, but by replacing the recorded timestamps, which replays and configurations without
   * an event-time field use. Delete the topic when it is no longer needed.
   */
  static final Map<String, String> NEW_TOPIC_CONFIG = Map.of(TopicConfig.RETENTION_MS_CONFIG, "-1");

  /**
   * Creates the topic when missing; checks an existing one has enough partitions and does not delete
   * records as old as the oldest to be loaded.
   *
   * @param oldestTimestamp the oldest record timestamp to be loaded (epoch ms), or {@code Long.MAX_VALUE} when
   *     the producer stamps the records
   */
  static void ensureTopic(Properties adminProps, String topic, int partitions, long oldestTimestamp, long nowMillis) throws Exception {
    try (Admin admin = Admin.create(adminProps)) {
      try {
        TopicDescription d = admin.describeTopics(List.of(topic)).allTopicNames().get(30, TimeUnit.SECONDS).get(topic);
        if (d.partitions().size() < partitions) {
          throw new IllegalArgumentException("--topic " + topic + " has " + d.partitions().size()
              + " partitions but the recording needs " + partitions + "; load it into a new topic");
        }
      } catch (ExecutionException e) {
        if (!(e.getCause() instanceof UnknownTopicOrPartitionException)) {
          throw e;
        }
        admin.createTopics(List.of(new NewTopic(topic, partitions, (short) 1).configs(NEW_TOPIC_CONFIG))).all().get(30, TimeUnit.SECONDS);
        return;
      }
      if (oldestTimestamp == Long.MAX_VALUE) {
        return;
      }
      ConfigResource r = new ConfigResource(ConfigResource.Type.TOPIC, topic);
      Config c = admin.describeConfigs(List.of(r)).all().get(30, TimeUnit.SECONDS).get(r);
      String policy = value(c, TopicConfig.CLEANUP_POLICY_CONFIG, TopicConfig.CLEANUP_POLICY_DELETE);
      long retention = Long.parseLong(value(c, TopicConfig.RETENTION_MS_CONFIG, "-1"));
      String why = expiring(topic, policy, retention, oldestTimestamp, nowMillis);
      if (why != null) {
        throw new IllegalArgumentException(why);
      }
    }
  }

  private static String value(Config c, String key, String def) {
    ConfigEntry e = c == null ? null : c.get(key);
    return e == null || e.value() == null ? def : e.value();
  }

  /**
   * Why the broker would soon delete loaded records with timestamps from {@code oldestTimestamp} on, or null
   * when it would not.
   */
  static String expiring(String topic, String cleanupPolicy, long retentionMs, long oldestTimestamp, long nowMillis) {
    if (!cleanupPolicy.contains(TopicConfig.CLEANUP_POLICY_DELETE) || retentionMs < 0) {
      return null;
    }
    if (oldestTimestamp >= nowMillis - retentionMs) {
      return null;
    }
    return "--topic " + topic + " keeps records for retention.ms=" + retentionMs + " ("
        + java.time.Duration.ofMillis(retentionMs) + ") but the recording's oldest record is from "
        + java.time.Instant.ofEpochMilli(oldestTimestamp) + ": the broker would delete the loaded records older than that"
        + " within minutes (a pipeline would then read nothing). Load into a new topic (load creates it with retention.ms=-1),"
        + " or keep the records on this one first: kafka-configs.sh --bootstrap-server <servers> --alter --entity-type topics"
        + " --entity-name " + topic + " --add-config retention.ms=-1";
  }
}
