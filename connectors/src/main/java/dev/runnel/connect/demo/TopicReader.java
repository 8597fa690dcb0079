package dev.runnel.connect.demo;

import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.Properties;
import java.util.function.Consumer;
import org.apache.kafka.clients.consumer.ConsumerConfig;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.consumer.KafkaConsumer;
import org.apache.kafka.common.PartitionInfo;
import org.apache.kafka.common.TopicPartition;
import org.apache.kafka.common.serialization.ByteArrayDeserializer;

/**
 * Reads a whole topic, from the beginning to its current end, as a read_committed reader sees it:
 * committed records only. Uses no consumer group (assign, not subscribe), so it never disturbs a
 * pipeline's offsets.
 */
public final class TopicReader {

  private TopicReader() { }

  /**
   * @param bootstrap bootstrap servers
   * @param topic the topic
   * @param handler receives each committed record, partition by partition in offset order
   * @return the number of records read
   */
  public static long readAll(String bootstrap, String topic, Consumer<ConsumerRecord<byte[], byte[]>> handler) {
    Properties p = dev.runnel.connect.kafka.ClientConfig.groupLessReader(bootstrap, Map.of(), "runnel-reader");
    p.put(ConsumerConfig.MAX_POLL_RECORDS_CONFIG, "5000");
    long n = 0;
    try (KafkaConsumer<byte[], byte[]> c = new KafkaConsumer<>(p, new ByteArrayDeserializer(), new ByteArrayDeserializer())) {
      List<PartitionInfo> infos = c.partitionsFor(topic, Duration.ofSeconds(30));
      if (infos == null || infos.isEmpty()) {
        throw new IllegalArgumentException("topic " + topic + " does not exist at " + bootstrap);
      }
      List<TopicPartition> tps = new ArrayList<>();
      for (PartitionInfo i : infos) {
        tps.add(new TopicPartition(topic, i.partition()));
      }
      c.assign(tps);
      c.seekToBeginning(tps);
      Map<TopicPartition, Long> end = c.endOffsets(tps, Duration.ofSeconds(30));
      long deadline = System.nanoTime() + Duration.ofMinutes(5).toNanos();
      while (!reachedEnd(c, end)) {
        if (System.nanoTime() > deadline) {
          throw new IllegalStateException("reading " + topic + " did not reach its end within 5 minutes");
        }
        for (ConsumerRecord<byte[], byte[]> r : c.poll(Duration.ofMillis(200))) {
          handler.accept(r);
          n++;
        }
      }
    }
    return n;
  }

  private static boolean reachedEnd(KafkaConsumer<byte[], byte[]> c, Map<TopicPartition, Long> end) {
    for (Map.Entry<TopicPartition, Long> e : end.entrySet()) {
      if (c.position(e.getKey()) < e.getValue()) {
        return false;
      }
    }
    return true;
  }
}
