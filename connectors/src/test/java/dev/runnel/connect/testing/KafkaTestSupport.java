package dev.runnel.connect.testing;

import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.Properties;
import java.util.concurrent.TimeUnit;
import java.util.function.BooleanSupplier;
import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.admin.AdminClientConfig;
import org.apache.kafka.clients.admin.NewTopic;
import org.apache.kafka.clients.consumer.ConsumerConfig;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.consumer.KafkaConsumer;
import org.apache.kafka.clients.consumer.OffsetAndMetadata;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerConfig;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.common.PartitionInfo;
import org.apache.kafka.common.TopicPartition;
import org.apache.kafka.common.serialization.ByteArrayDeserializer;
import org.apache.kafka.common.serialization.ByteArraySerializer;

/** Small blocking helpers for tests against a real broker. */
public final class KafkaTestSupport {
  private KafkaTestSupport() {}

  public static Admin admin(String bootstrap) {
    return Admin.create(Map.of(AdminClientConfig.BOOTSTRAP_SERVERS_CONFIG, bootstrap,
        AdminClientConfig.DEFAULT_API_TIMEOUT_MS_CONFIG, 20_000, AdminClientConfig.REQUEST_TIMEOUT_MS_CONFIG, 10_000));
  }

  public static void createTopic(String bootstrap, String topic, int partitions) throws Exception {
    try (Admin a = admin(bootstrap)) {
      a.createTopics(List.of(new NewTopic(topic, partitions, (short) 1))).all().get(30, TimeUnit.SECONDS);
    }
  }

  public static Map<String, Object> producerConfig(String bootstrap) {
    Map<String, Object> p = new HashMap<>();
    p.put(ProducerConfig.BOOTSTRAP_SERVERS_CONFIG, bootstrap);
    p.put(ProducerConfig.KEY_SERIALIZER_CLASS_CONFIG, ByteArraySerializer.class.getName());
    p.put(ProducerConfig.VALUE_SERIALIZER_CLASS_CONFIG, ByteArraySerializer.class.getName());
    p.put(ProducerConfig.ACKS_CONFIG, "all");
    p.put(ProducerConfig.LINGER_MS_CONFIG, 5);
    // Test input only. Not idempotent: after BrokerRestartTest has SIGKILLed the shared single-node
    // broker, the restarted broker was seen to hand a new producer an id whose sequence numbers a
    // partition already held, and every batch then failed OUT_OF_ORDER_SEQUENCE_NUMBER until it
    // expired (120 s). One request in flight keeps the order without sequence numbers.
    p.put(ProducerConfig.ENABLE_IDEMPOTENCE_CONFIG, false);
    p.put(ProducerConfig.MAX_IN_FLIGHT_REQUESTS_PER_CONNECTION, 1);
    return p;
  }

  /** Writes values to explicit partitions (values[p] to partition p), in order, and waits for all acks. */
  public static void produce(String bootstrap, String topic, List<List<String>> valuesByPartition) throws Exception {
    try (KafkaProducer<byte[], byte[]> p = new KafkaProducer<>(producerConfig(bootstrap))) {
      List<java.util.concurrent.Future<?>> sent = new ArrayList<>();
      for (int part = 0; part < valuesByPartition.size(); part++) {
        List<String> vs = valuesByPartition.get(part);
        for (int i = 0; i < vs.size(); i++) {
          sent.add(p.send(new ProducerRecord<>(topic, part, ("k" + i).getBytes(StandardCharsets.UTF_8), vs.get(i).getBytes(StandardCharsets.UTF_8))));
        }
      }
      p.flush();
      for (java.util.concurrent.Future<?> f : sent) {
        f.get(); // a send that failed (a batch that expired on a slow broker) fails the test here, not later as a missing record
      }
    }
  }

  /** Every committed record of a topic (read_committed), read to the end offsets at the time of the call. */
  public static List<ConsumerRecord<byte[], byte[]>> readAll(String bootstrap, String topic) {
    Properties c = new Properties();
    c.put(ConsumerConfig.BOOTSTRAP_SERVERS_CONFIG, bootstrap);
    c.put(ConsumerConfig.ISOLATION_LEVEL_CONFIG, "read_committed");
    c.put(ConsumerConfig.ENABLE_AUTO_COMMIT_CONFIG, "false");
    c.put(ConsumerConfig.KEY_DESERIALIZER_CLASS_CONFIG, ByteArrayDeserializer.class.getName());
    c.put(ConsumerConfig.VALUE_DESERIALIZER_CLASS_CONFIG, ByteArrayDeserializer.class.getName());
    c.put(ConsumerConfig.MAX_PARTITION_FETCH_BYTES_CONFIG, 8 * 1024 * 1024);
    List<ConsumerRecord<byte[], byte[]>> out = new ArrayList<>();
    try (KafkaConsumer<byte[], byte[]> k = new KafkaConsumer<>(c)) {
      List<TopicPartition> parts = new ArrayList<>();
      for (PartitionInfo pi : k.partitionsFor(topic, Duration.ofSeconds(20))) parts.add(new TopicPartition(topic, pi.partition()));
      k.assign(parts);
      k.seekToBeginning(parts);
      Map<TopicPartition, Long> end = k.endOffsets(parts, Duration.ofSeconds(20));
      long deadline = System.currentTimeMillis() + 60_000;
      while (true) {
        boolean done = true;
        for (TopicPartition tp : parts) if (k.position(tp) < end.get(tp)) done = false;
        if (done) break;
        if (System.currentTimeMillis() > deadline) throw new AssertionError("could not read " + topic + " to its end in 60 s");
        for (ConsumerRecord<byte[], byte[]> r : k.poll(Duration.ofMillis(200))) out.add(r);
      }
    }
    return out;
  }

  /** Sum of the group's committed offsets on a topic (0 when none). */
  public static long committedTotal(Admin admin, String group, String topic) throws Exception {
    Map<TopicPartition, OffsetAndMetadata> m = admin.listConsumerGroupOffsets(group).partitionsToOffsetAndMetadata().get(20, TimeUnit.SECONDS);
    long total = 0;
    for (Map.Entry<TopicPartition, OffsetAndMetadata> e : m.entrySet()) {
      if (e.getKey().topic().equals(topic) && e.getValue() != null) total += e.getValue().offset();
    }
    return total;
  }

  /** Polls the condition every 50 ms until true. */
  public static void await(String what, Duration timeout, BooleanSupplier cond) throws InterruptedException {
    long deadline = System.nanoTime() + timeout.toNanos();
    while (!cond.getAsBoolean()) {
      if (System.nanoTime() > deadline) throw new AssertionError("timed out after " + timeout.toSeconds() + " s waiting for " + what);
      Thread.sleep(50);
    }
  }
}
