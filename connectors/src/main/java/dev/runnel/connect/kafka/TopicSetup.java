package dev.runnel.connect.kafka;

import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.concurrent.ExecutionException;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.TimeoutException;
import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.admin.NewTopic;
import org.apache.kafka.clients.admin.TopicDescription;
import org.apache.kafka.common.errors.AuthorizationException;
import org.apache.kafka.common.errors.TopicExistsException;
import org.apache.kafka.common.errors.UnknownTopicOrPartitionException;

/**
 * Creates a pipeline's missing output topics. Existing topics are used as they are.
 *
 * <p>Settings: predictions, coefficients, rejects, settled and state get the input's partition count, replication
 * min(3, brokers). State is compacted ({@code cleanup.policy=compact}), {@code max.message.bytes} 16 MiB,
 * {@code compression.type=lz4}, {@code min.compaction.lag.ms=0}.
 */
public final class TopicSetup {
  /** Largest checkpoint the state topic accepts (bytes). */
  public static final int STATE_MAX_MESSAGE_BYTES = 16 * 1024 * 1024;
  private static final long TIMEOUT_S = 30;

  private TopicSetup() {}

  /** Partition counts of the input and the five output topics, after creation. */
  public record Layout(int inputPartitions, int predictionsPartitions, int coefficientsPartitions, int rejectsPartitions,
      int statePartitions, int settledPartitions) {}

  /**
   * Makes sure the five output topics exist.
   * @throws IllegalStateException if the input topic does not exist, or a topic cannot be created (the
   *     message names the topic and the settings to create it with by hand)
   * @throws org.apache.kafka.common.errors.TimeoutException if the cluster does not answer in time (retriable)
   */
  public static Layout ensure(Admin admin, RunnerSettings s) throws InterruptedException {
    int inputParts;
    try {
      inputParts = describeSoon(admin, s.inputTopic()).partitions().size();
    } catch (UnknownTopicOrPartitionException e) {
      throw new IllegalStateException("input topic " + s.inputTopic() + " does not exist on " + s.bootstrapServers()
          + "; create it first (its partition count is the number of independent models and the most instances that can share the work)");
    }
    int brokers = get(admin.describeCluster().nodes()).size();
    short rf = (short) Math.max(1, Math.min(3, brokers));
    Map<String, String> stateConfig = Map.of("cleanup.policy", "compact", "max.message.bytes", Integer.toString(STATE_MAX_MESSAGE_BYTES),
        "compression.type", "lz4", "min.compaction.lag.ms", "0");
    List<NewTopic> wanted = new ArrayList<>();
    wanted.add(new NewTopic(s.predictionsTopic(), inputParts, rf));
    wanted.add(new NewTopic(s.coefficientsTopic(), inputParts, rf));
    wanted.add(new NewTopic(s.rejectsTopic(), inputParts, rf));
    wanted.add(new NewTopic(s.settledTopic(), inputParts, rf));
    wanted.add(new NewTopic(s.stateTopic(), inputParts, rf).configs(stateConfig));
    java.util.Set<String> existing = get(admin.listTopics().names());
    for (NewTopic t : wanted) {
      if (existing.contains(t.name())) continue;
      try {
        get(admin.createTopics(List.of(t)).all());
      } catch (TopicExistsException raced) {
        // another instance created it first
      } catch (AuthorizationException e) {
        throw new IllegalStateException("not allowed to create topic " + t.name() + " on " + s.bootstrapServers() + " (" + e.getMessage()
            + "); create it by hand with partitions=" + t.numPartitions() + ", replication=" + t.replicationFactor()
            + (t.configs() == null || t.configs().isEmpty() ? "" : ", configs " + t.configs()) + ", or grant CREATE on it", e);
      } catch (RuntimeException e) {
        if (e instanceof org.apache.kafka.common.errors.TimeoutException) throw e;
        throw new IllegalStateException("cannot create topic " + t.name() + " (" + e.getMessage() + "); create it by hand with partitions="
            + t.numPartitions() + ", replication=" + t.replicationFactor()
            + (t.configs() == null || t.configs().isEmpty() ? "" : ", configs " + t.configs()), e);
      }
    }
    Map<String, Integer> counts = new HashMap<>();
    for (NewTopic t : wanted) counts.put(t.name(), describeSoon(admin, t.name()).partitions().size());
    return new Layout(inputParts, counts.get(s.predictionsTopic()), counts.get(s.coefficientsTopic()), counts.get(s.rejectsTopic()),
        counts.get(s.stateTopic()), counts.get(s.settledTopic()));
  }

  /**
   * Makes sure {@code <name>.shares} exists (plain, not compacted: every share of a partition must be
   * read once by every other partition, in order; a retention shorter than the longest time a
   * partition may stay unprocessed loses shares, which stops the runner with a message), with the
   * input's partition count.
   *
   * @return its partition count
   */
  public static int ensureShares(Admin admin, RunnerSettings s, int inputPartitions) throws InterruptedException {
    int brokers = get(admin.describeCluster().nodes()).size();
    short rf = (short) Math.max(1, Math.min(3, brokers));
    NewTopic t = new NewTopic(s.sharesTopic(), inputPartitions, rf).configs(Map.of("max.message.bytes",
        Integer.toString(STATE_MAX_MESSAGE_BYTES), "compression.type", "lz4"));
    if (!get(admin.listTopics().names()).contains(t.name())) {
      try {
        get(admin.createTopics(List.of(t)).all());
      } catch (TopicExistsException raced) {
        // another instance created it first
      } catch (AuthorizationException e) {
        throw new IllegalStateException("not allowed to create topic " + t.name() + " on " + s.bootstrapServers() + " (" + e.getMessage()
            + "); create it by hand with partitions=" + t.numPartitions() + ", replication=" + t.replicationFactor() + ", configs "
            + t.configs() + ", or grant CREATE on it (instances also need READ, WRITE and DESCRIBE on it)", e);
      } catch (RuntimeException e) {
        if (e instanceof org.apache.kafka.common.errors.TimeoutException) throw e;
        throw new IllegalStateException("cannot create topic " + t.name() + " (" + e.getMessage() + "); create it by hand with"
            + " partitions=" + t.numPartitions() + ", replication=" + t.replicationFactor() + ", configs " + t.configs(), e);
      }
    }
    return describeSoon(admin, t.name()).partitions().size();
  }

  /** Describes a topic, allowing a few seconds for a just-created topic to appear in the metadata. */
  private static TopicDescription describeSoon(Admin admin, String topic) throws InterruptedException {
    long deadline = System.currentTimeMillis() + 5000;
    while (true) {
      try {
        return describe(admin, topic);
      } catch (UnknownTopicOrPartitionException e) {
        if (System.currentTimeMillis() > deadline) throw e;
        Thread.sleep(100);
      }
    }
  }

  private static TopicDescription describe(Admin admin, String topic) throws InterruptedException {
    return get(admin.describeTopics(List.of(topic)).allTopicNames()).get(topic);
  }

  private static <T> T get(org.apache.kafka.common.KafkaFuture<T> f) throws InterruptedException {
    try {
      return f.get(TIMEOUT_S, TimeUnit.SECONDS);
    } catch (TimeoutException e) {
      throw new org.apache.kafka.common.errors.TimeoutException("no answer from the cluster in " + TIMEOUT_S + " s", e);
    } catch (ExecutionException e) {
      Throwable c = e.getCause();
      if (c instanceof RuntimeException r) throw r;
      throw new IllegalStateException(c);
    }
  }
}
