package dev.runnel.connect.recording;

import dev.runnel.connect.file.JsonLinesReader;
import dev.runnel.connect.file.Recording;
import dev.runnel.connect.replay.FileSource;
import dev.runnel.connect.replay.RecordHandler;
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
import org.apache.kafka.clients.admin.NewTopic;
import org.apache.kafka.clients.admin.TopicDescription;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerConfig;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.common.errors.UnknownTopicOrPartitionException;
import org.apache.kafka.common.serialization.ByteArraySerializer;

/**
 * Publishes a JSON Lines file to a topic. A recording keeps each record's partition, key and
 * timestamp (the topic must have at least as many partitions); a plain file is published one line
 * per record, without key, with the producer's timestamps.
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
   * @throws IllegalArgumentException if the file is missing or empty, the topic has too few partitions, or a
   *     client property refers to an environment variable that is not set
   */
  public static long load(Path file, String bootstrap, Map<String, String> clientProperties, String topic,
                          int partitionsForPlain) throws Exception {
    if (partitionsForPlain < 1) {
      throw new IllegalArgumentException("--partitions must be at least 1, got " + partitionsForPlain);
    }
    FileSource src = new FileSource(file);
    int[] maxPartition = {-1};
    boolean[] recorded = {false};
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
        if (recorded[0]) {
          line.parse(buf, off, len, n);
          maxPartition[0] = Math.max(maxPartition[0], line.partition());
        }
      }
    });
    int need = recorded[0] ? maxPartition[0] + 1 : partitionsForPlain;
    Properties producerProps = producerProperties(bootstrap, clientProperties);
    ensureTopic(adminProperties(bootstrap, clientProperties), topic, Math.max(1, need));
    AtomicReference<Exception> failure = new AtomicReference<>();
    long n;
    try (KafkaProducer<byte[], byte[]> producer = new KafkaProducer<>(producerProps, new ByteArraySerializer(), new ByteArraySerializer())) {
      n = src.read(new RecordHandler() {
        @Override
        public void record(byte[] buf, int off, int len, long ts, int partition, long offset) {
          byte[] value = Arrays.copyOfRange(buf, off, off + len);
          ProducerRecord<byte[], byte[]> r = recorded[0]
              ? new ProducerRecord<>(topic, partition, ts, null, value)
              : new ProducerRecord<>(topic, value);
          producer.send(r, (md, e) -> {
            if (e != null) {
              failure.compareAndSet(null, e);
            }
          });
        }
      }, null);
      producer.flush();
    }
    if (failure.get() != null) {
      throw new IllegalStateException("publishing to " + topic + " failed: " + failure.get().getMessage(), failure.get());
    }
    return n;
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

  private static void ensureTopic(Properties adminProps, String topic, int partitions) throws Exception {
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
        admin.createTopics(List.of(new NewTopic(topic, partitions, (short) 1))).all().get(30, TimeUnit.SECONDS);
      }
    }
  }

}
