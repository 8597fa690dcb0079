package dev.runnel.connect.replay;

import java.time.Duration;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.Properties;
import org.apache.kafka.clients.consumer.ConsumerConfig;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.consumer.ConsumerRecords;
import org.apache.kafka.clients.consumer.KafkaConsumer;
import org.apache.kafka.clients.consumer.OffsetAndTimestamp;
import org.apache.kafka.common.PartitionInfo;
import org.apache.kafka.common.TopicPartition;
import org.apache.kafka.common.serialization.ByteArrayDeserializer;

/**
 * A recorded topic as a replay source: every partition, over a {@link TopicRange}, as a
 * read_committed reader sees it. Uses its own consumer with no group (assign, not subscribe) and
 * commits nothing, so a live pipeline's group, offsets and topics are never touched; never creates
 * the topic.
 */
public final class TopicSource implements AutoCloseable {

  private static final byte[] EMPTY = new byte[0];

  private final String topic;
  private final KafkaConsumer<byte[], byte[]> consumer;
  private final List<TopicPartition> partitions = new ArrayList<>();
  private final Map<TopicPartition, Long> start = new HashMap<>();
  private final Map<TopicPartition, Long> end = new HashMap<>();
  private final long total;

  /**
   * Connects and resolves the range to offsets.
   *
   * @param bootstrap bootstrap servers
   * @param clientProperties extra client properties (security); may be empty. Not modified.
   * @param topic the topic
   * @param range the part to read
   * @throws IllegalArgumentException if the topic does not exist or the range holds no record; the
   *     message names {@code --source} (the backtest's option, which also takes a file)
   */
  public TopicSource(String bootstrap, Map<String, String> clientProperties, String topic, TopicRange range) {
    this(bootstrap, clientProperties, topic, range, null);
  }

  /**
   * Connects and resolves the range to offsets; messages name {@code topicOption}.
   *
   * @param bootstrap bootstrap servers
   * @param clientProperties extra client properties (security); may be empty. Not modified.
   * @param topic the topic
   * @param range the part to read
   * @param topicOption the option that named the topic, e.g. {@code --topic}; null for the
   *     backtest's {@code --source} (a topic or a file)
   * @throws IllegalArgumentException if the topic does not exist or the range holds no record
   */
  public TopicSource(String bootstrap, Map<String, String> clientProperties, String topic, TopicRange range,
                     String topicOption) {
    this.topic = topic;
    String option = topicOption == null ? "--source" : topicOption;
    Properties p = dev.runnel.connect.kafka.ClientConfig.groupLessReader(bootstrap, clientProperties, "runnel-backtest");
    p.put(ConsumerConfig.ALLOW_AUTO_CREATE_TOPICS_CONFIG, "false");
    p.put(ConsumerConfig.MAX_POLL_RECORDS_CONFIG, "10000");
    p.put(ConsumerConfig.FETCH_MAX_BYTES_CONFIG, String.valueOf(64 << 20));
    p.put(ConsumerConfig.MAX_PARTITION_FETCH_BYTES_CONFIG, String.valueOf(16 << 20));
    p.put(ConsumerConfig.RECEIVE_BUFFER_CONFIG, String.valueOf(4 << 20));
    p.remove(ConsumerConfig.GROUP_ID_CONFIG);
    this.consumer = new KafkaConsumer<>(p, new ByteArrayDeserializer(), new ByteArrayDeserializer());
    try {
      Map<String, List<PartitionInfo>> topics = consumer.listTopics(Duration.ofSeconds(30));
      List<PartitionInfo> infos = topics.get(topic);
      if (infos == null || infos.isEmpty()) {
        throw new IllegalArgumentException(option + " " + topic + ": no such topic at " + bootstrap
            + (topicOption == null ? " (and no such file); name an existing topic or a JSON Lines file"
                : "; name an existing topic"));
      }
      for (PartitionInfo i : infos) {
        partitions.add(new TopicPartition(topic, i.partition()));
      }
      partitions.sort((a, b) -> Integer.compare(a.partition(), b.partition()));
      Map<TopicPartition, Long> first = consumer.beginningOffsets(partitions, Duration.ofSeconds(30));
      Map<TopicPartition, Long> last = consumer.endOffsets(partitions, Duration.ofSeconds(30));
      Map<TopicPartition, OffsetAndTimestamp> byStartTime = range.startTime() == null ? Map.of()
          : consumer.offsetsForTimes(times(range.startTime().toEpochMilli()), Duration.ofSeconds(30));
      Map<TopicPartition, OffsetAndTimestamp> byEndTime = range.endTime() == null ? Map.of()
          : consumer.offsetsForTimes(times(range.endTime().toEpochMilli()), Duration.ofSeconds(30));
      long sum = 0;
      for (TopicPartition tp : partitions) {
        long lo = first.get(tp);
        long hi = last.get(tp);
        long s = lo;
        if (range.startOffset() != null) {
          s = Math.max(lo, range.startOffset());
        } else if (range.startTime() != null) {
          OffsetAndTimestamp o = byStartTime.get(tp);
          s = o == null ? hi : o.offset();
        }
        long e = hi;
        if (range.endOffset() != null) {
          e = Math.min(hi, range.endOffset());
        } else if (range.endTime() != null) {
          OffsetAndTimestamp o = byEndTime.get(tp);
          e = o == null ? hi : Math.min(hi, o.offset());
        }
        s = Math.min(s, hi);
        if (e < s) {
          e = s;
        }
        start.put(tp, s);
        end.put(tp, e);
        sum += e - s;
      }
      if (sum == 0) {
        boolean whole = range.equals(TopicRange.ALL);
        throw new IllegalArgumentException(option + " " + topic + (whole ? ": the topic holds no record"
            : ": the range holds no record") + " (offsets per partition: " + describe(first, last) + "); "
            + (whole ? "publish or load records first, or check the topic's name"
                : "widen --start-offset/--start-time/--end-offset/--end-time or check the topic"));
      }
      this.total = sum;
    } catch (RuntimeException e) {
      consumer.close();
      throw e;
    }
  }

  private Map<TopicPartition, Long> times(long t) {
    Map<TopicPartition, Long> m = new HashMap<>();
    for (TopicPartition tp : partitions) {
      m.put(tp, t);
    }
    return m;
  }

  private String describe(Map<TopicPartition, Long> first, Map<TopicPartition, Long> last) {
    StringBuilder sb = new StringBuilder();
    for (TopicPartition tp : partitions) {
      if (sb.length() > 0) {
        sb.append(", ");
      }
      sb.append(tp.partition()).append(": ").append(first.get(tp)).append("..").append(last.get(tp));
    }
    return sb.toString();
  }

  /** The topic's partitions. */
  public int partitionCount() {
    return partitions.size();
  }

  /** An upper bound on the records in the range (offsets; transaction markers count too). */
  public long expectedRecords() {
    return total;
  }

  /**
   * Reads the range once.
   *
   * @param handler receives each record in offset order per partition
   * @param raw receives each Kafka record too (for {@code record}); may be null
   * @return records read
   */
  public long read(RecordHandler handler, java.util.function.Consumer<ConsumerRecord<byte[], byte[]>> raw) {
    List<TopicPartition> open = new ArrayList<>();
    for (TopicPartition tp : partitions) {
      if (end.get(tp) > start.get(tp)) {
        open.add(tp);
      }
    }
    consumer.assign(open);
    for (TopicPartition tp : open) {
      consumer.seek(tp, start.get(tp));
    }
    long n = 0;
    while (!open.isEmpty()) {
      ConsumerRecords<byte[], byte[]> batch = consumer.poll(Duration.ofMillis(500));
      for (TopicPartition tp : batch.partitions()) {
        long stop = end.get(tp);
        for (ConsumerRecord<byte[], byte[]> r : batch.records(tp)) {
          if (r.offset() >= stop) {
            break;
          }
          byte[] v = r.value() == null ? EMPTY : r.value();
          if (raw != null) {
            raw.accept(r);
          }
          if (handler != null) {
            handler.record(v, 0, v.length, r.timestamp(), r.partition(), r.offset());
          }
          n++;
        }
      }
      List<TopicPartition> done = new ArrayList<>();
      for (TopicPartition tp : open) {
        if (consumer.position(tp) >= end.get(tp)) {
          done.add(tp);
        }
      }
      if (!done.isEmpty()) {
        open.removeAll(done);
        consumer.pause(done);
      }
    }
    return n;
  }

  @Override
  public void close() {
    consumer.close();
  }
}
