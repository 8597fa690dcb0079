package dev.runnel.connect.kafka;

import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.util.ArrayList;
import java.util.Collection;
import java.util.Collections;
import java.util.HashMap;
import java.util.HashSet;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Objects;
import java.util.OptionalLong;
import java.util.Set;
import java.util.concurrent.CountDownLatch;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.function.UnaryOperator;
import org.apache.kafka.clients.admin.Admin;
import org.apache.kafka.clients.admin.AdminClientConfig;
import org.apache.kafka.clients.consumer.CloseOptions;
import org.apache.kafka.clients.consumer.ConsumerConfig;
import org.apache.kafka.clients.consumer.ConsumerRebalanceListener;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.consumer.ConsumerRecords;
import org.apache.kafka.clients.consumer.KafkaConsumer;
import org.apache.kafka.clients.consumer.OffsetAndMetadata;
import org.apache.kafka.clients.consumer.RangeAssignor;
import org.apache.kafka.clients.producer.Callback;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerConfig;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.apache.kafka.common.KafkaException;
import org.apache.kafka.common.TopicPartition;
import org.apache.kafka.common.errors.AuthenticationException;
import org.apache.kafka.common.errors.AuthorizationException;
import org.apache.kafka.common.errors.FencedInstanceIdException;
import org.apache.kafka.common.errors.InterruptException;
import org.apache.kafka.common.errors.InvalidProducerEpochException;
import org.apache.kafka.common.errors.ProducerFencedException;
import org.apache.kafka.common.errors.TimeoutException;
import org.apache.kafka.common.errors.UnsupportedVersionException;
import org.apache.kafka.common.errors.WakeupException;
import org.apache.kafka.common.header.Header;
import org.apache.kafka.common.serialization.ByteArrayDeserializer;
import org.apache.kafka.common.serialization.ByteArraySerializer;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Runs {@link PartitionProcessor}s over an input topic and publishes their outputs exactly once.
 *
 * <p>Protocol (one Kafka transaction per commit interval):
 * <ol>
 *   <li>poll the input (read_committed, no auto-commit); for each record call the partition's processor;
 *       its outputs are sent inside the open transaction;</li>
 *   <li>every {@code commitIntervalMs} or {@code commitIntervalRecords}: for each partition touched since
 *       the last commit, send {@link PartitionProcessor#checkpoint()} to {@code <name>.state} (key
 *       {@code <topic>-<partition>}, header {@code runnel.next-offset}), then
 *       {@code sendOffsetsToTransaction(last processed + 1, consumer.groupMetadata())}, then
 *       {@code commitTransaction()}. Outputs, checkpoints and offsets become visible together or not at all.</li>
 * </ol>
 * On assignment, {@code <name>.state} is read to its end (read_committed) for the assigned partitions; each
 * processor is restored from its latest checkpoint and the consumer is positioned at the offset stored with it
 * (equal to the group's committed offset by construction). Before partitions are revoked, the open
 * transaction is committed. Group protocol: classic, eager ({@link RangeAssignor}), with static membership
 * ({@code group.instance.id = <name>-<instanceId>}) so that a restarted instance takes its partitions back
 * without a rebalance; a clean {@link #close()} leaves the group so the others take over at once.
 *
 * <p>Errors: a fenced producer or group instance (another instance with the same id), authorization
 * failures, a record too large for its topic, and a processor that throws while being restored or
 * checkpointed stop the runner ({@link #failure()}). A processor that throws on one record does not: the
 * record is set aside as a {@code processing_failed} reject and the partition goes on without it
 * (see {@link PartitionProcessor}).
 * Any other Kafka error inside a transaction aborts it, rewinds every partition to its last committed offset
 * and rebuilds its processor from the last committed checkpoint (kept in memory); when the abort itself fails
 * (e.g. {@code InvalidProducerEpochException} after the coordinator timed the transaction out) a new producer
 * with the same transactional id replaces the old one. Commits refused for this group member make the consumer
 * rejoin. An unreachable broker is retried every 2 s with a message.
 *
 * <p>Thread contract: {@link #run()} is called by one thread, once. {@link #close()} and {@link #counters()}
 * may be called from any thread.
 */
public final class ExactlyOnceRunner implements Runnable, AutoCloseable {
  /** Header on state records: the input offset processing resumes from, as a decimal string. */
  public static final String NEXT_OFFSET_HEADER = "runnel.next-offset";

  private static final Logger LOG = LoggerFactory.getLogger(ExactlyOnceRunner.class);
  private static final long BACKOFF_MS = 2000;
  private static final long CLOSE_COMMIT_TIMEOUT_MS = 30_000;
  private static final long STATE_VISIBLE_TIMEOUT_MS = 60_000;
  private static final int MAX_FAILURE_MESSAGE_CHARS = 1000;
  private static final Set<String> FORCED = Set.of(ConsumerConfig.ISOLATION_LEVEL_CONFIG, ConsumerConfig.ENABLE_AUTO_COMMIT_CONFIG,
      ProducerConfig.TRANSACTIONAL_ID_CONFIG, ProducerConfig.ENABLE_IDEMPOTENCE_CONFIG, "key.serializer", "value.serializer",
      "key.deserializer", "value.deserializer", ConsumerConfig.GROUP_ID_CONFIG, ConsumerConfig.BOOTSTRAP_SERVERS_CONFIG);

  private final RunnerSettings settings;
  private final ProcessorFactory factory;
  private final UnaryOperator<String> env;

  private final AtomicBoolean started = new AtomicBoolean();
  private final CountDownLatch finished = new CountDownLatch(1);
  private volatile boolean closing;
  private volatile Thread runThread;
  private volatile String failure;

  // counters: written by the run thread only
  private volatile long recordsIn;
  private volatile long outputsOut;
  private volatile long rejects;
  private volatile long commits;
  private volatile long aborts;
  private volatile long processingFailures;
  private volatile long lastCommitMillis;
  private volatile long lag = -1;
  /** Per held input partition, records behind its end at the last commit (an immutable map, replaced whole). */
  private volatile Map<TopicPartition, Long> lagByPartition = Map.of();
  /** The input partitions held and restored (an immutable set, replaced whole). */
  private volatile Set<TopicPartition> held = Set.of();
  private volatile boolean assignedOnce;
  private volatile boolean restoring;
  private volatile int inputPartitionCount = -1;
  private volatile RunnerListener listener = RunnerListener.NONE;

  // owned by the run thread
  private KafkaConsumer<byte[], byte[]> consumer;
  private KafkaConsumer<byte[], byte[]> stateReader;
  private KafkaProducer<byte[], byte[]> producer;
  private TopicSetup.Layout layout;
  private final Map<TopicPartition, Slot> slots = new LinkedHashMap<>();
  private boolean txOpen;
  private long txStartNanos;
  private int recordsInTx;
  private int consecutiveAborts;
  /** {@link #commits} when a fence was last recovered from; -1 before any. */
  private long commitsAtLastFence = -1;
  private volatile Exception sendError;
  /**
   * The transaction that send errors count for. Callbacks of an earlier transaction (aborted, or
   * of a producer already replaced) arrive late and must not fail the current one.
   */
  private volatile long txGeneration;
  private Callback sendCallback = callbackFor(0);

  private Callback callbackFor(long generation) {
    return (md, e) -> {
      if (e != null && generation == txGeneration && sendError == null) sendError = e;
    };
  }

  /** Per input partition: its processor and what was last committed for it. */
  private final class Slot implements Emitter {
    final TopicPartition tp;
    final byte[] stateKey;
    final int predPart;
    final int coefPart;
    final int rejPart;
    final int settledPart;
    final int statePart;
    PartitionProcessor proc;
    /** {@code proc}'s output headers per output topic (empty for none). */
    List<org.apache.kafka.common.header.Header> headers = List.of();
    List<org.apache.kafka.common.header.Header> coefHeaders = List.of();
    List<org.apache.kafka.common.header.Header> rejHeaders = List.of();
    List<org.apache.kafka.common.header.Header> settledHeaders = List.of();
    long committedNext;
    byte[] committedCheckpoint;
    long next;
    boolean touched;
    /** What the transaction being committed carries for this partition, until its outcome is known. */
    long pendingNext = -1;
    byte[] pendingCheckpoint;
    /** With a processor that shares its model: per share partition, the offset of {@code <name>.shares} to hand it next; else null. */
    long[] shareNext;
    /** Offsets (not yet committed past) whose processing threw, with what was thrown; see {@link #setAsideAndRewind}. */
    final java.util.TreeMap<Long, String> setAside = new java.util.TreeMap<>();

    Slot(TopicPartition tp) {
      this.tp = tp;
      this.stateKey = (tp.topic() + "-" + tp.partition()).getBytes(StandardCharsets.UTF_8);
      this.predPart = tp.partition() % layout.predictionsPartitions();
      this.coefPart = tp.partition() % layout.coefficientsPartitions();
      this.rejPart = tp.partition() % layout.rejectsPartitions();
      this.settledPart = tp.partition() % layout.settledPartitions();
      this.statePart = tp.partition() % layout.statePartitions();
    }

    @Override public void prediction(byte[] key, byte[] value) {
      producer.send(new ProducerRecord<>(settings.predictionsTopic(), predPart, key, value, headers), sendCallback);
      outputsOut++;
    }

    @Override public void snapshot(byte[] key, byte[] value) {
      producer.send(new ProducerRecord<>(settings.coefficientsTopic(), coefPart, key, value, coefHeaders), sendCallback);
      outputsOut++;
    }

    @Override public void reject(byte[] key, byte[] value) {
      producer.send(new ProducerRecord<>(settings.rejectsTopic(), rejPart, key, value, rejHeaders), sendCallback);
      outputsOut++;
      rejects++;
    }

    @Override public void settled(byte[] key, byte[] value) {
      producer.send(new ProducerRecord<>(settings.settledTopic(), settledPart, key, value, settledHeaders), sendCallback);
      outputsOut++;
    }

    @Override public void share(byte[] key, byte[] value) {
      if (sharesPartitions == 0) throw new IllegalStateException("a share from a processor that does not share its model");
      producer.send(new ProducerRecord<>(settings.sharesTopic(), tp.partition() % sharesPartitions, key, value, headers), sendCallback);
    }
  }

  // ------------------------------------------------------------------ model shares (model.scope: global)

  /** {@code <name>.shares}' partition count; 0 until a processor shares its model. */
  private int sharesPartitions;
  /** Reads {@code <name>.shares} (read_committed, no group); made with {@link #sharesPartitions}. */
  private KafkaConsumer<byte[], byte[]> shareReader;
  /** Per share partition, the committed records read and not yet handed to every sharing processor. */
  private java.util.ArrayDeque<ConsumerRecord<byte[], byte[]>>[] shareLogs;
  /** Per share partition, the offset from which {@link #shareLogs} holds every committed record; MAX_VALUE for none yet. */
  private long[] shareLogFrom;

  /** Creates {@code <name>.shares} and its reader, once. */
  @SuppressWarnings("unchecked")
  private void ensureSharing() {
    if (sharesPartitions > 0) return;
    try (Admin admin = Admin.create(adminConfig())) {
      sharesPartitions = TopicSetup.ensureShares(admin, settings, layout.inputPartitions());
    } catch (IllegalStateException e) {
      throw new FatalException(e.getMessage(), e);
    } catch (InterruptedException e) {
      Thread.currentThread().interrupt();
      throw new FatalException("interrupted while creating " + settings.sharesTopic(), e);
    }
    shareReader = new KafkaConsumer<>(consumerConfig(null, "shares"));
    List<TopicPartition> parts = new ArrayList<>();
    for (int q = 0; q < sharesPartitions; q++) parts.add(new TopicPartition(settings.sharesTopic(), q));
    shareReader.assign(parts);
    shareLogs = new java.util.ArrayDeque[sharesPartitions];
    shareLogFrom = new long[sharesPartitions];
    for (int q = 0; q < sharesPartitions; q++) {
      shareLogs[q] = new java.util.ArrayDeque<>();
      shareLogFrom[q] = Long.MAX_VALUE;
    }
    LOG.info("runner {}: sharing the model through {} ({} partitions)", settings.name(), settings.sharesTopic(), sharesPartitions);
  }

  /**
   * Hands every sharing processor the committed shares it has not taken yet, in offset order per
   * share partition: each processor reads from the offsets its checkpoint carries (a restored one
   * from the last commit's), so a share is folded once per partition state, never twice, never
   * skipped. A processor that took a share is checkpointed at the next commit, with its input offset
   * unchanged. The shares read are kept until every sharing processor here is past them; a
   * processor behind them (restored, or newly assigned) makes the reader go back.
   */
  private void foldShares() {
    if (shareReader == null) return;
    long[] need = new long[sharesPartitions];
    java.util.Arrays.fill(need, Long.MAX_VALUE);
    boolean any = false;
    for (Slot s : slots.values()) {
      if (s.shareNext == null) continue;
      any = true;
      for (int q = 0; q < sharesPartitions; q++) need[q] = Math.min(need[q], s.shareNext[q]);
    }
    if (!any) return;
    for (int q = 0; q < sharesPartitions; q++) {
      java.util.ArrayDeque<ConsumerRecord<byte[], byte[]>> log = shareLogs[q];
      if (need[q] < shareLogFrom[q]) {
        shareReader.seek(new TopicPartition(settings.sharesTopic(), q), need[q]);
        log.clear();
        shareLogFrom[q] = need[q];
      } else {
        while (!log.isEmpty() && log.peekFirst().offset() < need[q]) log.pollFirst();
        shareLogFrom[q] = need[q];
      }
    }
    for (ConsumerRecord<byte[], byte[]> r : shareReader.poll(Duration.ZERO)) {
      if (r.offset() >= shareLogFrom[r.partition()]) shareLogs[r.partition()].addLast(r);
    }
    for (Slot s : slots.values()) {
      if (s.shareNext == null) continue;
      for (int q = 0; q < sharesPartitions; q++) {
        for (ConsumerRecord<byte[], byte[]> r : shareLogs[q]) {
          if (r.offset() < s.shareNext[q]) continue;
          boolean took;
          try {
            took = s.proc.foldShare(q, r.offset(), r.value());
          } catch (RuntimeException e) {
            throw new FatalException("the processor of " + s.tp + " cannot fold " + settings.sharesTopic() + "-" + q + " offset "
                + r.offset() + ": " + e.getMessage(), e);
          }
          if (!took) break;
          s.shareNext[q] = r.offset() + 1;
          beginIfNeeded();
          s.touched = true;
        }
      }
    }
  }

  /** Stops the runner: fencing, authorization, a processor that threw, a missing input topic. */
  private static final class FatalException extends RuntimeException {
    private static final long serialVersionUID = 1L;
    FatalException(String m, Throwable c) { super(m, c); }
  }

  /**
   * @param settings pipeline settings. Not modified.
   * @param factory creates one processor per assigned input partition
   */
  public ExactlyOnceRunner(RunnerSettings settings, ProcessorFactory factory) {
    this(settings, factory, System::getenv);
  }

  /** As {@link #ExactlyOnceRunner(RunnerSettings, ProcessorFactory)} with an explicit environment for {@code ${VAR}} values. */
  public ExactlyOnceRunner(RunnerSettings settings, ProcessorFactory factory, UnaryOperator<String> env) {
    this.settings = Objects.requireNonNull(settings, "settings must not be null");
    this.factory = Objects.requireNonNull(factory, "factory must not be null");
    this.env = Objects.requireNonNull(env, "env must not be null");
    for (String k : FORCED) {
      String v = settings.clientProperties().get(k);
      if (v == null) continue;
      boolean same = (k.equals(ConsumerConfig.ISOLATION_LEVEL_CONFIG) && v.equals("read_committed"))
          || (k.equals(ConsumerConfig.ENABLE_AUTO_COMMIT_CONFIG) && v.equals("false"))
          || (k.equals(ProducerConfig.ENABLE_IDEMPOTENCE_CONFIG) && v.equals("true"));
      if (!same) {
        throw new IllegalArgumentException("client property " + k + " is set by the exactly-once runner and cannot be overridden"
            + " (got " + (ClientConfig.isSecretKey(k) ? "****" : v) + "); use the runner settings instead");
      }
    }
    // resolve now so that a missing ${VAR} is a caller mistake reported at once
    for (ClientConfig.Kind kind : ClientConfig.Kind.values()) ClientConfig.forClient(settings.clientProperties(), kind, env);
  }

  /** The settings. */
  public RunnerSettings settings() { return settings; }

  /** Current counters (a snapshot). */
  public RunnerCounters counters() {
    return new RunnerCounters(recordsIn, outputsOut, rejects, commits, aborts, lastCommitMillis, lag, processingFailures,
        brokerAwaySinceMillis);
  }

  /** Sets who is told about commit and restore times; call before {@link #run()}. */
  public void setListener(RunnerListener l) { this.listener = Objects.requireNonNull(l, "listener must not be null"); }

  /** Per held input partition, the records behind its end at the last commit (partitions not yet measured left out). */
  public Map<TopicPartition, Long> lagByPartition() { return lagByPartition; }

  /** The input partitions this instance holds, each restored from its checkpoint. */
  public Set<TopicPartition> heldPartitions() { return held; }

  /** The input topic's partition count, -1 before the topics were set up. */
  public int inputPartitionCount() { return inputPartitionCount; }

  /**
   * Null when the runner serves: it has had its first assignment from the group and restored every
   * partition it holds; else why not, in words.
   */
  public String notReady() {
    if (failure != null) return "the runner stopped: " + failure;
    if (finished.getCount() == 0) return "the runner has stopped";
    if (closing) return "the runner is stopping";
    if (!started.get()) return "the runner has not started";
    if (!assignedOnce) return "waiting for the first partition assignment of group " + settings.groupId();
    if (restoring) return "restoring assigned partitions from " + settings.stateTopic();
    return null;
  }

  /** Why the runner stopped on its own, or null if it did not (yet). */
  public String failure() { return failure; }

  /** Runs until {@link #close()} or a fatal error ({@link #failure()}). */
  @Override public void run() {
    if (!started.compareAndSet(false, true)) throw new IllegalStateException("an ExactlyOnceRunner runs only once");
    runThread = Thread.currentThread();
    try {
      LOG.info("runner {} starting: input {}, group {}, transactional id {}, client properties {}", settings.name(),
          settings.inputTopic(), settings.groupId(), settings.transactionalId(), ClientConfig.masked(settings.clientProperties()));
      setUpTopics();
      if (closing) return;
      producer = newProducer();
      initTransactions();
      consumer = new KafkaConsumer<>(consumerConfig(settings.groupInstanceId(), "consumer"));
      consumer.subscribe(List.of(settings.inputTopic()), new Listener());
      loop();
      if (failure == null) finishOnClose();
    } catch (FatalException e) {
      fail(e);
    } catch (WakeupException e) {
      if (!closing) fail(new FatalException("unexpected wakeup", e));
      else finishOnClose();
    } catch (RuntimeException e) {
      fail(new FatalException("unexpected error: " + e, e));
    } finally {
      closeClients();
      finished.countDown();
    }
  }

  private void fail(FatalException e) {
    failure = e.getMessage();
    LOG.error("runner {} stopped: {}", settings.name(), e.getMessage(), e.getCause());
    if (producer != null) {
      producer.close(Duration.ZERO);
      producer = null;
    }
  }

  /** Stops the run loop: the open transaction is committed (or aborted, never half), then clients close. Waits up to 60 s. */
  @Override public void close() {
    closing = true;
    if (!started.get()) return;
    if (Thread.currentThread() == runThread) return; // called from a processor: the loop ends after this record batch
    KafkaConsumer<byte[], byte[]> c = consumer;
    if (c != null) c.wakeup();
    try {
      if (!finished.await(60, TimeUnit.SECONDS)) LOG.warn("runner {} did not stop within 60 s", settings.name());
    } catch (InterruptedException e) {
      Thread.currentThread().interrupt();
    }
  }

  // ------------------------------------------------------------------ main loop

  private void loop() {
    lastConnectedMillis = System.currentTimeMillis();
    while (!closing) {
      ConsumerRecords<byte[], byte[]> batch;
      try {
        watchBroker();
        watchOthers();
        batch = consumer.poll(Duration.ofMillis(200));
      } catch (WakeupException e) {
        if (closing) return;
        throw e;
      } catch (FatalException e) {
        throw e;
      } catch (KafkaException e) {
        handle(e);
        continue;
      }
      try {
        process(batch);
        foldShares();
        if (txOpen && (recordsInTx >= settings.commitIntervalRecords()
            || System.nanoTime() - txStartNanos >= settings.commitIntervalMs() * 1_000_000L)) {
          commit();
        }
      } catch (FatalException e) {
        throw e;
      } catch (KafkaException e) {
        handle(e);
      }
    }
  }

  // ------------------------------------------------------------------ broker reachability

  /** The consumer's open connections (metric {@code consumer-metrics/connection-count}); null until found. */
  private org.apache.kafka.common.Metric connectionCount;
  private long lastConnectedMillis;
  private long nextBrokerCheckMillis;
  /** When the broker was last seen before it went away; 0 while it is reachable. */
  private volatile long brokerAwaySinceMillis;
  private long nextAwayReportMillis;

  /**
   * Says, once, when the consumer has had no connection to the cluster for {@value #AWAY_REPORT_MS} ms (the
   * clients' own reconnect warnings are turned off in simplelogger.properties: they come several times a
   * second per client), then once a minute, and says when it is back. Checked at most once a second.
   */
  private void watchBroker() {
    long now = System.currentTimeMillis();
    if (now < nextBrokerCheckMillis) return;
    nextBrokerCheckMillis = now + 1000;
    if (connectionCount == null) {
      for (Map.Entry<org.apache.kafka.common.MetricName, ? extends org.apache.kafka.common.Metric> e : consumer.metrics().entrySet()) {
        if (e.getKey().name().equals("connection-count") && e.getKey().group().equals("consumer-metrics")) connectionCount = e.getValue();
      }
      if (connectionCount == null) return;
    }
    Object v = connectionCount.metricValue();
    boolean connected = v instanceof Number n && n.doubleValue() > 0;
    if (connected) {
      lastConnectedMillis = now;
      if (brokerAwaySinceMillis != 0) {
        LOG.info("broker at {} reachable again after {}; resuming", settings.bootstrapServers(), span(now - brokerAwaySinceMillis));
        brokerAwaySinceMillis = 0;
      }
    } else if (brokerAwaySinceMillis == 0) {
      if (now - lastConnectedMillis >= AWAY_REPORT_MS) {
        brokerAwaySinceMillis = lastConnectedMillis;
        nextAwayReportMillis = now + 60_000;
        LOG.warn("broker at {} not reachable for {}; the clients keep reconnecting (at most 1 s apart); nothing is lost,"
            + " outputs resume when it is back", settings.bootstrapServers(), span(now - lastConnectedMillis));
      }
    } else if (now >= nextAwayReportMillis) {
      nextAwayReportMillis = now + 60_000;
      LOG.warn("broker at {} still not reachable ({} so far)", settings.bootstrapServers(), span(now - brokerAwaySinceMillis));
    }
  }

  private static final long AWAY_REPORT_MS = 5000;

  private static String span(long ms) {
    long s = ms / 1000;
    return s < 120 ? s + " s" : s < 7200 ? (s / 60) + " min " + (s % 60) + " s" : (s / 3600) + " h " + (s % 3600 / 60) + " min";
  }

  // ------------------------------------------------------------------ partitions of other members

  private static final long OTHERS_CHECK_MS = 5000;
  private static final long DEFAULT_SESSION_TIMEOUT_MS = 45_000; // the classic consumer's default (ConsumerConfig)
  private long nextOthersCheckMillis;
  /** Per input partition not assigned here: {committed offset last seen, when it was first seen at that offset}. */
  private final Map<TopicPartition, long[]> othersSeen = new HashMap<>();
  private volatile String waitingReport;

  /** The warning about other members' partitions that wait, while they wait; null otherwise (for tests). */
  String waitingReport() { return waitingReport; }

  /** How long a partition of another member may show waiting records without a commit before it is reported. */
  private long stallReportMs() { return Math.max(10_000, 3 * settings.commitIntervalMs()); }

  private long sessionTimeoutMs() {
    Object v = ClientConfig.forClient(settings.clientProperties(), ClientConfig.Kind.CONSUMER, env).get(ConsumerConfig.SESSION_TIMEOUT_MS_CONFIG);
    try {
      return v == null ? DEFAULT_SESSION_TIMEOUT_MS : Long.parseLong(v.toString().trim());
    } catch (NumberFormatException e) {
      return DEFAULT_SESSION_TIMEOUT_MS;
    }
  }

  /** Admin client for {@link #watchOthers}; made when another member has partitions, closed with the runner. */
  private Admin othersAdmin;
  private org.apache.kafka.common.KafkaFuture<Map<TopicPartition, OffsetAndMetadata>> othersCommitted;
  private org.apache.kafka.common.KafkaFuture<Map<TopicPartition, org.apache.kafka.clients.admin.ListOffsetsResult.ListOffsetsResultInfo>> othersEnd;
  private Set<TopicPartition> othersAsked;

  /**
   * When one instance of a group dies without leaving it (a crash, SIGKILL, a lost machine), the group
   * coordinator waits {@code session.timeout.ms} without a heartbeat before it hands that member's
   * partitions to the others (with static membership, {@code group.instance.id}, an instance that comes
   * back with the same id before then gets them back without a rebalance). Meanwhile their records wait.
   * Every {@value #OTHERS_CHECK_MS} ms this asks, for the input partitions not assigned here, for the
   * group's last committed offsets (not waiting for a pending transaction of the dead member) and the end
   * offsets, without blocking the run loop (the answer is read at the next check), and says once which
   * partitions have records waiting without a commit, why, and for how long at most; and says when they
   * move again.
   */
  private void watchOthers() {
    long now = System.currentTimeMillis();
    if (now < nextOthersCheckMillis || brokerAwaySinceMillis != 0) return;
    nextOthersCheckMillis = now + OTHERS_CHECK_MS;
    if (othersCommitted != null) {
      if (!othersCommitted.isDone() || !othersEnd.isDone()) return; // still asking
      Map<TopicPartition, OffsetAndMetadata> committed;
      Map<TopicPartition, org.apache.kafka.clients.admin.ListOffsetsResult.ListOffsetsResultInfo> end;
      try {
        committed = othersCommitted.get();
        end = othersEnd.get();
      } catch (java.util.concurrent.ExecutionException | InterruptedException e) {
        if (e instanceof InterruptedException) Thread.currentThread().interrupt();
        committed = null;
        end = null;
      }
      Set<TopicPartition> asked = othersAsked;
      othersCommitted = null;
      othersEnd = null;
      if (committed != null) judgeOthers(asked, committed, end, now);
    }
    Set<TopicPartition> others = new HashSet<>();
    try {
      for (org.apache.kafka.common.PartitionInfo pi : consumer.partitionsFor(settings.inputTopic(), Duration.ofMillis(500))) {
        TopicPartition tp = new TopicPartition(pi.topic(), pi.partition());
        if (!slots.containsKey(tp)) others.add(tp);
      }
    } catch (TimeoutException e) {
      return;
    }
    othersSeen.keySet().retainAll(others);
    if (others.isEmpty()) {
      if (waitingReport != null) {
        waitingReport = null;
        LOG.info("runner {}: the partitions that were waiting are moving again", settings.name());
      }
      return;
    }
    if (othersAdmin == null) othersAdmin = Admin.create(adminConfig());
    Map<TopicPartition, org.apache.kafka.clients.admin.OffsetSpec> latest = new HashMap<>();
    for (TopicPartition tp : others) latest.put(tp, org.apache.kafka.clients.admin.OffsetSpec.latest());
    othersAsked = others;
    othersCommitted = othersAdmin.listConsumerGroupOffsets(settings.groupId(),
        new org.apache.kafka.clients.admin.ListConsumerGroupOffsetsOptions().requireStable(false)).partitionsToOffsetAndMetadata();
    othersEnd = othersAdmin.listOffsets(latest).all();
  }

  private void judgeOthers(Set<TopicPartition> asked, Map<TopicPartition, OffsetAndMetadata> committed,
      Map<TopicPartition, org.apache.kafka.clients.admin.ListOffsetsResult.ListOffsetsResultInfo> end, long now) {
    List<TopicPartition> stalled = new ArrayList<>();
    long waiting = 0;
    for (TopicPartition tp : asked) {
      if (slots.containsKey(tp)) continue; // ours by now
      OffsetAndMetadata om = committed.get(tp);
      long c = om == null ? -1 : om.offset();
      long e = end.get(tp) == null ? 0 : end.get(tp).offset();
      long[] seen = othersSeen.get(tp);
      if (seen == null || seen[0] != c) {
        othersSeen.put(tp, new long[] {c, now});
      } else if (e > Math.max(c, 0) && now - seen[1] >= stallReportMs()) {
        stalled.add(tp);
        waiting += e - Math.max(c, 0);
      }
    }
    stalled.sort(java.util.Comparator.comparingInt(TopicPartition::partition));
    if (!stalled.isEmpty() && waitingReport == null) {
      long since = now;
      for (TopicPartition tp : stalled) since = Math.min(since, othersSeen.get(tp)[1]);
      String msg = "runner " + settings.name() + ": partitions " + stalled + " have " + waiting + " records waiting and no commit for "
          + span(now - since) + "; they are not assigned here: their instance probably stopped without leaving group " + settings.groupId()
          + " (a crash, or a kill). The group hands them over after session.timeout.ms=" + sessionTimeoutMs() + " ms without a"
          + " heartbeat from it; restarting that instance with the same instance id takes them back sooner, without a rebalance"
          + " (static membership). A shorter session.timeout.ms (kafka.client_properties) moves them sooner but hands partitions"
          + " over during a slow restart too.";
      waitingReport = msg;
      LOG.warn(msg);
    } else if (stalled.isEmpty() && waitingReport != null) {
      waitingReport = null;
      LOG.info("runner {}: the partitions that were waiting are moving again", settings.name());
    }
  }

  /** True if the error (or a cause) says the cluster could not be reached in time. */
  private static boolean unreachable(Throwable e) {
    for (Throwable t = e; t != null; t = t.getCause()) {
      if (t instanceof TimeoutException || t instanceof org.apache.kafka.common.errors.NetworkException) return true;
      if (t.getCause() == t) break;
    }
    return false;
  }

  private void process(ConsumerRecords<byte[], byte[]> batch) {
    for (TopicPartition tp : batch.partitions()) {
      Slot s = slots.get(tp);
      if (s == null) continue; // not ours any more; the next owner replays them
      List<ConsumerRecord<byte[], byte[]>> recs = batch.records(tp);
      if (recs.isEmpty()) continue;
      beginIfNeeded();
      for (int i = 0; i < recs.size(); i++) {
        ConsumerRecord<byte[], byte[]> r = recs.get(i);
        String setAside = s.setAside.isEmpty() ? null : s.setAside.get(r.offset());
        if (setAside != null) {
          s.proc.processingFailed(r.offset(), r.timestamp(), r.key(), r.value(), setAside, s);
        } else {
          try {
            s.proc.process(r.offset(), r.timestamp(), r.key(), r.value(), s);
          } catch (KafkaException e) {
            throw e;
          } catch (RuntimeException | StackOverflowError e) {
            setAsideAndRewind(s, r.offset(), e);
            return; // every partition was rewound: the rest of this batch is fetched again
          }
        }
        s.next = r.offset() + 1;
        s.touched = true;
        recordsIn++;
        recordsInTx++;
      }
    }
  }

  /**
   * A record whose processing threw: remembered as set aside, then the open transaction is aborted and
   * every partition rewound to its last commit, so the replay rebuilds each state from the committed
   * checkpoint and, at this offset, emits a {@code processing_failed} reject instead of processing the
   * record. The state is then exactly that of the stream without the record, and its outputs are
   * committed once. Set-aside offsets are kept until a commit passes them; a restart finds the record
   * again by the same throw.
   */
  private void setAsideAndRewind(Slot s, long offset, Throwable e) {
    String message = e.getClass().getName() + ": " + e.getMessage();
    if (message.length() > MAX_FAILURE_MESSAGE_CHARS) message = message.substring(0, MAX_FAILURE_MESSAGE_CHARS) + "...";
    s.setAside.put(offset, message);
    processingFailures++;
    LOG.warn("runner {}: processing {} offset {} threw ({}); the record goes to {} as processing_failed and the partition"
        + " continues without it (the open transaction is aborted and replayed from the last commit)",
        settings.name(), s.tp, offset, message, settings.rejectsTopic(), e);
    int before = consecutiveAborts;
    consecutiveAborts = 0; // a set-aside record is no broker trouble: no back-off
    abortAndRewind(new KafkaException("record " + s.tp + " offset " + offset + " set aside"));
    consecutiveAborts = before;
  }

  private void beginIfNeeded() {
    if (txOpen) return;
    txGeneration++;
    sendError = null;
    sendCallback = callbackFor(txGeneration);
    producer.beginTransaction();
    txOpen = true;
    txStartNanos = System.nanoTime();
    recordsInTx = 0;
  }

  /** Commits the open transaction with checkpoints and offsets of the touched partitions. */
  private void commit() {
    if (!txOpen) return;
    long commitStart = System.nanoTime();
    Map<TopicPartition, OffsetAndMetadata> offsets = new HashMap<>();
    Map<TopicPartition, byte[]> checkpoints = new HashMap<>();
    for (Slot s : slots.values()) {
      if (!s.touched) continue;
      byte[] cp;
      try {
        cp = s.proc.checkpoint();
      } catch (RuntimeException e) {
        throw new FatalException("the processor of " + s.tp + " threw in checkpoint(): " + e, e);
      }
      if (cp == null) throw new FatalException("the processor of " + s.tp + " returned a null checkpoint", null);
      ProducerRecord<byte[], byte[]> rec = new ProducerRecord<>(settings.stateTopic(), s.statePart, s.stateKey, cp);
      rec.headers().add(NEXT_OFFSET_HEADER, Long.toString(s.next).getBytes(StandardCharsets.US_ASCII));
      producer.send(rec, sendCallback);
      offsets.put(s.tp, new OffsetAndMetadata(s.next));
      checkpoints.put(s.tp, cp);
      s.pendingNext = s.next;
      s.pendingCheckpoint = cp;
    }
    if (sendError != null) throw new KafkaException("an output record could not be sent: " + sendError, sendError);
    if (!offsets.isEmpty()) producer.sendOffsetsToTransaction(offsets, consumer.groupMetadata());
    long deadline = closing ? System.currentTimeMillis() + CLOSE_COMMIT_TIMEOUT_MS : Long.MAX_VALUE;
    while (true) {
      try {
        producer.commitTransaction();
        break;
      } catch (TimeoutException | InterruptException e) {
        if (e instanceof InterruptException) Thread.interrupted();
        if (System.currentTimeMillis() > deadline) {
          throw new FatalException("could not commit the last transaction within " + CLOSE_COMMIT_TIMEOUT_MS / 1000
              + " s while closing; it will be aborted by the broker or at the next start", e);
        }
        LOG.warn("broker at {} not reachable; retrying the commit in {} s", settings.bootstrapServers(), BACKOFF_MS / 1000);
        sleep(BACKOFF_MS);
      }
    }
    txOpen = false;
    consecutiveAborts = 0;
    for (Map.Entry<TopicPartition, byte[]> e : checkpoints.entrySet()) {
      Slot s = slots.get(e.getKey());
      s.committedNext = s.next;
      s.committedCheckpoint = e.getValue();
      s.touched = false;
      if (!s.setAside.isEmpty()) s.setAside.headMap(s.committedNext).clear();
      s.pendingNext = -1;
      s.pendingCheckpoint = null;
    }
    commits++;
    lastCommitMillis = System.currentTimeMillis();
    long total = 0;
    for (TopicPartition tp : slots.keySet()) {
      OptionalLong l = consumer.currentLag(tp);
      if (l.isEmpty()) { total = -1; break; }
      total += l.getAsLong();
    }
    lag = total;
    Map<TopicPartition, Long> perPartition = new LinkedHashMap<>();
    for (TopicPartition tp : slots.keySet()) {
      OptionalLong l = consumer.currentLag(tp);
      if (l.isPresent()) perPartition.put(tp, l.getAsLong());
    }
    lagByPartition = Collections.unmodifiableMap(perPartition);
    listener.committed(System.nanoTime() - commitStart);
  }

  /** Classifies an error: fatal ones stop the runner; the rest abort the transaction and rewind. */
  private void handle(KafkaException e) {
    Throwable fatal = fatalCause(e);
    if (fatal != null && !recoverableFence(fatal)) throw new FatalException(fatalMessage(fatal), e);
    if (closing && e instanceof WakeupException) throw e;
    abortAndRewind(e);
  }

  /**
   * A {@code ProducerFencedException} does not always mean a second instance: when the broker is
   * away longer than {@code transaction.timeout.ms}, the coordinator aborts the open transaction
   * and bumps the producer epoch, and this producer is then told it is fenced. So the first fence
   * after a successful commit is recovered from (new producer, rewind to what the broker has
   * committed); a second one without a commit in between stops the runner. A real second instance
   * with the same instance id is also caught by static membership ({@code FencedInstanceIdException}).
   */
  private boolean recoverableFence(Throwable fatal) {
    if (!(fatal instanceof ProducerFencedException)) return false;
    if (commits == commitsAtLastFence) return false;
    commitsAtLastFence = commits;
    LOG.warn("runner {}: producer fenced ({}); if no other instance uses transactional id {}, the coordinator aborted a"
        + " transaction that outlived transaction.timeout.ms; starting a new producer and rewinding to the last commit",
        settings.name(), fatal.getMessage(), settings.transactionalId());
    return true;
  }

  private static Throwable fatalCause(Throwable e) {
    for (Throwable t = e; t != null; t = t.getCause()) {
      if (t instanceof ProducerFencedException || t instanceof FencedInstanceIdException || t instanceof AuthorizationException
          || t instanceof AuthenticationException || t instanceof UnsupportedVersionException
          || t instanceof org.apache.kafka.common.errors.RecordTooLargeException) {
        return t;
      }
      if (t.getCause() == t) break;
    }
    return null;
  }

  /**
   * The ACLs an instance needs, as the authorization failure names them: READ on the input and the
   * group; DESCRIBE on every topic it checks at start; WRITE on the outputs and READ too on the
   * state topic (a partition taken over is restored from it); with {@code model.scope: global}
   * READ and WRITE on {@code <name>.shares} (its shares are written in the transactions and the
   * others' read with read_committed, by assignment, without a group); CREATE on a topic that does
   * not exist yet (or create it by hand); WRITE and DESCRIBE on the transactional id.
   */
  static String aclsNeeded(RunnerSettings s) {
    return "needs READ and DESCRIBE on " + s.inputTopic() + ", READ on group " + s.groupId() + ", WRITE and DESCRIBE on "
        + s.predictionsTopic() + ", " + s.coefficientsTopic() + ", " + s.rejectsTopic() + " and " + s.settledTopic()
        + ", READ, WRITE and DESCRIBE on " + s.stateTopic() + ", with model.scope: global READ, WRITE and DESCRIBE on "
        + s.sharesTopic() + ", CREATE on those of them that do not exist yet (or create them by hand, docs/operations.md),"
        + " WRITE and DESCRIBE on transactional id " + s.transactionalId();
  }

  private String fatalMessage(Throwable t) {
    if (t instanceof ProducerFencedException) {
      return "another instance with transactional id " + settings.transactionalId() + " has started (this one is fenced off);"
          + " give every instance its own instance id. Stopping.";
    }
    if (t instanceof FencedInstanceIdException) {
      return "another consumer with group.instance.id " + settings.groupInstanceId() + " joined group " + settings.groupId()
          + "; give every instance its own instance id. Stopping.";
    }
    if (t instanceof AuthorizationException || t instanceof AuthenticationException) {
      return "not allowed by the cluster at " + settings.bootstrapServers() + ": " + t.getMessage() + " (" + aclsNeeded(settings)
          + "). Stopping.";
    }
    if (t instanceof org.apache.kafka.common.errors.RecordTooLargeException) {
      return "an output or checkpoint record is too large (" + t.getMessage() + "); the state topic accepts "
          + TopicSetup.STATE_MAX_MESSAGE_BYTES + " bytes per checkpoint and other topics their max.message.bytes;"
          + " raise max.message.bytes on the topic and producer.max.request.size, or make the state smaller. Stopping.";
    }
    return "the cluster at " + settings.bootstrapServers() + " does not support transactions as needed: " + t.getMessage() + ". Stopping.";
  }

  private void abortAndRewind(Exception cause) {
    if (unreachable(cause)) {
      // e.g. after a long outage only "Cannot execute transactional method because we are in an error state",
      // caused by the sends that expired while the broker was away
      LOG.warn("broker at {} not reachable in time ({}); the open transaction is aborted and {} partition(s) rewound to the last"
          + " commit; they are processed again once it is back", settings.bootstrapServers(), rootMessage(cause), slots.size());
    } else {
      LOG.warn("runner {}: transaction aborted after {}; rewinding {} partition(s) to the last commit", settings.name(), cause.toString(),
          slots.size());
    }
    if (txOpen) {
      // A new producer, not abortTransaction(): its initTransactions() returns only once the
      // coordinator has settled the interrupted transaction (aborted it, or finished a commit it had
      // already decided), so the committed offsets asked for below are the final ones. With an
      // abort on the old producer, the offset check could run while a commit decided before a
      // broker crash was still being completed, and the runner rewound behind it (a batch written
      // twice, seen in BrokerRestartTest).
      recreateProducer();
    } else if (cause instanceof InvalidProducerEpochException || fatalCause(cause) instanceof ProducerFencedException) {
      recreateProducer();
    }
    txOpen = false;
    txGeneration++; // late callbacks of the aborted transaction no longer count
    sendError = null;
    aborts++;
    adoptCommitsThatHappened();
    for (Slot s : slots.values()) resetSlot(s);
    if (groupMembershipProblem(cause)) {
      // the coordinator no longer accepts our generation: rejoin, and restore whatever we are given
      LOG.warn("runner {}: the group no longer accepts this member's commits; rejoining group {}", settings.name(), settings.groupId());
      consumer.enforceRebalance("offset commit refused: " + cause.getMessage());
    }
    // back off when aborts follow each other without a commit in between, so a persistent problem does not spin
    consecutiveAborts++;
    if (consecutiveAborts > 1) sleep(Math.min(BACKOFF_MS, 50L << Math.min(consecutiveAborts, 6)));
  }

  private static String rootMessage(Throwable e) {
    Throwable t = e;
    while (t.getCause() != null && t.getCause() != t) t = t.getCause();
    return t.getClass().getSimpleName() + ": " + t.getMessage();
  }

  /**
   * A failed {@code commitTransaction()} does not say whether the commit happened: the broker may
   * have written the commit decision before the connection broke, and a new producer's
   * {@code initTransactions()} then completes it. Rewinding to the previous commit would then
   * process those records twice. So before rewinding, ask the group coordinator which offsets are
   * committed (a read_committed consumer waits for pending transactional offsets) and adopt the
   * interrupted transaction's checkpoint where its offsets are the committed ones.
   */
  private void adoptCommitsThatHappened() {
    Map<TopicPartition, Slot> pending = new LinkedHashMap<>();
    for (Slot s : slots.values()) {
      if (s.pendingCheckpoint != null) pending.put(s.tp, s);
    }
    if (pending.isEmpty()) return;
    Map<TopicPartition, OffsetAndMetadata> committed;
    while (true) {
      try {
        committed = consumer.committed(new HashSet<>(pending.keySet()), Duration.ofSeconds(15));
        break;
      } catch (TimeoutException e) {
        if (closing) throw new WakeupException();
        LOG.warn("broker at {} not reachable; retrying the offset check in {} s", settings.bootstrapServers(), BACKOFF_MS / 1000);
        sleep(BACKOFF_MS);
      }
    }
    for (Slot s : pending.values()) {
      OffsetAndMetadata o = committed.get(s.tp);
      if (o != null && o.offset() == s.pendingNext) {
        LOG.info("runner {}: the interrupted commit of {} had gone through (offset {}); resuming after it",
            settings.name(), s.tp, s.pendingNext);
        s.committedNext = s.pendingNext;
        s.committedCheckpoint = s.pendingCheckpoint;
      }
      s.pendingNext = -1;
      s.pendingCheckpoint = null;
    }
  }

  private static boolean groupMembershipProblem(Throwable e) {
    for (Throwable t = e; t != null; t = t.getCause()) {
      if (t instanceof org.apache.kafka.clients.consumer.CommitFailedException || t instanceof org.apache.kafka.common.errors.RebalanceInProgressException
          || t instanceof org.apache.kafka.common.errors.IllegalGenerationException || t instanceof org.apache.kafka.common.errors.UnknownMemberIdException) {
        return true;
      }
      if (t.getCause() == t) break;
    }
    return false;
  }

  private void resetSlot(Slot s) {
    consumer.seek(s.tp, s.committedNext);
    try {
      s.proc = factory.create(s.tp);
      s.headers = List.of(s.proc.outputHeaders(PartitionProcessor.OutputTopic.PREDICTIONS));
      s.coefHeaders = List.of(s.proc.outputHeaders(PartitionProcessor.OutputTopic.COEFFICIENTS));
      s.rejHeaders = List.of(s.proc.outputHeaders(PartitionProcessor.OutputTopic.REJECTS));
      s.settledHeaders = List.of(s.proc.outputHeaders(PartitionProcessor.OutputTopic.SETTLED));
      s.proc.restore(s.committedCheckpoint == null ? null : s.committedCheckpoint.clone());
    } catch (RuntimeException e) {
      throw new FatalException("the processor of " + s.tp + " could not be created or restored from its checkpoint ("
          + (s.committedCheckpoint == null ? "none" : s.committedCheckpoint.length + " bytes") + ", resuming at offset " + s.committedNext
          + "): " + e, e);
    }
    if (s.proc.sharesModel()) {
      ensureSharing();
      s.shareNext = new long[sharesPartitions];
      for (int q = 0; q < sharesPartitions; q++) s.shareNext[q] = s.proc.shareOffset(q);
    } else {
      s.shareNext = null;
    }
    s.next = s.committedNext;
    s.touched = false;
  }

  private void recreateProducer() {
    if (producer != null) producer.close(Duration.ZERO);
    producer = newProducer();
    initTransactions();
  }

  private void initTransactions() {
    while (true) {
      try {
        producer.initTransactions();
        return;
      } catch (TimeoutException e) {
        if (closing) throw new WakeupException();
        LOG.warn("broker at {} not reachable; retrying in {} s", settings.bootstrapServers(), BACKOFF_MS / 1000);
        sleep(BACKOFF_MS);
      } catch (KafkaException e) {
        Throwable fatal = fatalCause(e);
        if (fatal != null) throw new FatalException(fatalMessage(fatal), e);
        throw e;
      }
    }
  }

  private Map<String, Object> adminConfig() {
    Map<String, Object> cfg = new HashMap<>(ClientConfig.forClient(settings.clientProperties(), ClientConfig.Kind.ADMIN, env));
    cfg.put(AdminClientConfig.BOOTSTRAP_SERVERS_CONFIG, settings.bootstrapServers());
    cfg.putIfAbsent(AdminClientConfig.CLIENT_ID_CONFIG, "runnel-" + settings.name() + "-" + settings.instanceId() + "-admin");
    cfg.putIfAbsent(AdminClientConfig.DEFAULT_API_TIMEOUT_MS_CONFIG, 10_000);
    cfg.putIfAbsent(AdminClientConfig.REQUEST_TIMEOUT_MS_CONFIG, 5_000);
    return cfg;
  }

  private void setUpTopics() {
    try (Admin admin = Admin.create(adminConfig())) {
      while (!closing) {
        try {
          layout = TopicSetup.ensure(admin, settings);
          inputPartitionCount = layout.inputPartitions();
          return;
        } catch (TimeoutException e) {
          LOG.warn("broker at {} not reachable; retrying in {} s", settings.bootstrapServers(), BACKOFF_MS / 1000);
          sleep(BACKOFF_MS);
        } catch (IllegalStateException e) {
          throw new FatalException(e.getMessage(), e);
        } catch (KafkaException e) {
          Throwable fatal = fatalCause(e);
          if (fatal != null) throw new FatalException(fatalMessage(fatal), e);
          LOG.warn("runner {}: topic setup failed ({}); retrying in {} s", settings.name(), e.toString(), BACKOFF_MS / 1000);
          sleep(BACKOFF_MS);
        } catch (InterruptedException e) {
          Thread.currentThread().interrupt();
          throw new FatalException("interrupted during topic setup", e);
        }
      }
    }
  }

  private void finishOnClose() {
    if (consumer == null || producer == null) return;
    try {
      commit();
    } catch (FatalException e) {
      fail(e);
    } catch (KafkaException e) {
      LOG.warn("runner {}: the last transaction could not be committed ({}); aborting it", settings.name(), e.toString());
      try {
        if (txOpen) producer.abortTransaction();
      } catch (KafkaException ignored) {
        // closing the producer leaves it to the broker to abort
      }
      txOpen = false;
    }
  }

  private void closeClients() {
    if (consumer != null) {
      try {
        consumer.close(CloseOptions.groupMembershipOperation(CloseOptions.GroupMembershipOperation.LEAVE_GROUP)
            .withTimeout(Duration.ofSeconds(10)));
      } catch (RuntimeException e) {
        LOG.warn("runner {}: consumer close: {}", settings.name(), e.toString());
      }
      consumer = null;
    }
    if (stateReader != null) {
      stateReader.close(CloseOptions.timeout(Duration.ofSeconds(5)));
      stateReader = null;
    }
    if (shareReader != null) {
      shareReader.close(CloseOptions.timeout(Duration.ofSeconds(5)));
      shareReader = null;
    }
    if (othersAdmin != null) {
      othersAdmin.close(Duration.ofSeconds(5));
      othersAdmin = null;
    }
    if (producer != null) {
      try {
        producer.close(Duration.ofSeconds(10));
      } catch (RuntimeException e) {
        LOG.warn("runner {}: producer close: {}", settings.name(), e.toString());
      }
      producer = null;
    }
    LOG.info("runner {} stopped: {}", settings.name(), counters());
  }

  // ------------------------------------------------------------------ assignment

  private final class Listener implements ConsumerRebalanceListener {
    @Override public void onPartitionsRevoked(Collection<TopicPartition> partitions) {
      if (producer != null && txOpen) {
        try {
          commit();
        } catch (FatalException e) {
          throw e;
        } catch (KafkaException e) {
          handle(e);
        }
      }
      for (TopicPartition tp : partitions) slots.remove(tp);
      heldChanged();
    }

    @Override public void onPartitionsLost(Collection<TopicPartition> partitions) {
      // another member may own them already: nothing of the open transaction may be committed
      if (txOpen) abortAndRewind(new KafkaException("partitions lost: " + partitions));
      for (TopicPartition tp : partitions) slots.remove(tp);
      heldChanged();
    }

    @Override public void onPartitionsAssigned(Collection<TopicPartition> partitions) {
      List<TopicPartition> fresh = new ArrayList<>();
      for (TopicPartition tp : partitions) if (!slots.containsKey(tp)) fresh.add(tp);
      if (!fresh.isEmpty()) {
        restoring = true;
        long start = System.nanoTime();
        try {
          assign(fresh);
        } finally {
          restoring = false;
        }
        listener.restored(fresh.size(), System.nanoTime() - start);
      }
      heldChanged();
      assignedOnce = true;
    }
  }

  private void heldChanged() {
    held = Collections.unmodifiableSet(new java.util.LinkedHashSet<>(slots.keySet()));
    Map<TopicPartition, Long> lags = new LinkedHashMap<>(lagByPartition);
    lags.keySet().retainAll(slots.keySet()); // a partition given away has no lag here any more
    lagByPartition = Collections.unmodifiableMap(lags);
  }

  private void assign(List<TopicPartition> fresh) {
    long stateDeadline = System.currentTimeMillis() + STATE_VISIBLE_TIMEOUT_MS;
    while (true) {
      try {
        // committed() of a read_committed consumer waits for pending transactional offsets (stable offsets)
        Map<TopicPartition, OffsetAndMetadata> committed = consumer.committed(new HashSet<>(fresh), Duration.ofSeconds(15));
        Map<TopicPartition, Checkpoint> state = readState(fresh);
        // commitTransaction() returns before the commit markers are written everywhere: a checkpoint older than the
        // (stable) committed offset means the last transaction's markers are not on the state topic yet. Read again.
        List<TopicPartition> behind = new ArrayList<>();
        for (TopicPartition tp : fresh) {
          OffsetAndMetadata om = committed.get(tp);
          Checkpoint cp = state.get(tp);
          if (om != null && (cp == null || cp.nextOffset < om.offset())) behind.add(tp);
        }
        if (!behind.isEmpty()) {
          if (System.currentTimeMillis() < stateDeadline) {
            sleep(100);
            continue;
          }
          throw new FatalException("the state topic " + settings.stateTopic() + " has no checkpoint matching the committed offsets of "
              + behind + " after " + STATE_VISIBLE_TIMEOUT_MS / 1000 + " s; was group " + settings.groupId()
              + " used by another application, or the state topic deleted? Reset the group's offsets or restore the topic.", null);
        }
        List<TopicPartition> noOffset = new ArrayList<>();
        for (TopicPartition tp : fresh) if (state.get(tp) == null && committed.get(tp) == null) noOffset.add(tp);
        Map<TopicPartition, Long> beginning = noOffset.isEmpty() ? Map.of() : consumer.beginningOffsets(noOffset, Duration.ofSeconds(15));
        for (TopicPartition tp : fresh) {
          Slot s = new Slot(tp);
          Checkpoint cp = state.get(tp);
          OffsetAndMetadata om = committed.get(tp);
          if (cp != null) {
            if (om != null && om.offset() != cp.nextOffset) {
              LOG.warn("runner {}: {} has committed offset {} but its checkpoint is for offset {}; resuming at the checkpoint's",
                  settings.name(), tp, om.offset(), cp.nextOffset);
            }
            s.committedNext = cp.nextOffset;
            s.committedCheckpoint = cp.bytes;
          } else {
            s.committedNext = om != null ? om.offset() : beginning.get(tp);
            s.committedCheckpoint = null;
          }
          resetSlot(s);
          slots.put(tp, s);
        }
        LOG.info("runner {}: assigned {} (restored {} from checkpoints)", settings.name(), fresh, state.size());
        return;
      } catch (TimeoutException e) {
        if (closing) throw new WakeupException();
        LOG.warn("broker at {} not reachable while restoring {}; retrying in {} s", settings.bootstrapServers(), fresh, BACKOFF_MS / 1000);
        sleep(BACKOFF_MS);
      }
    }
  }

  private record Checkpoint(long nextOffset, byte[] bytes) {}

  /** Reads {@code <name>.state} to its end (read_committed) for the given input partitions; latest value per key. */
  private Map<TopicPartition, Checkpoint> readState(List<TopicPartition> inputs) {
    if (stateReader == null) stateReader = new KafkaConsumer<>(consumerConfig(null, "state"));
    Map<String, TopicPartition> byKey = new HashMap<>();
    Set<TopicPartition> parts = new HashSet<>();
    for (TopicPartition tp : inputs) {
      byKey.put(tp.topic() + "-" + tp.partition(), tp);
      parts.add(new TopicPartition(settings.stateTopic(), tp.partition() % layout.statePartitions()));
    }
    stateReader.assign(parts);
    stateReader.seekToBeginning(parts);
    Map<TopicPartition, Long> end = stateReader.endOffsets(parts, Duration.ofSeconds(15));
    Map<TopicPartition, Checkpoint> out = new HashMap<>();
    long deadline = System.currentTimeMillis() + 120_000;
    while (true) {
      boolean done = true;
      for (TopicPartition p : parts) if (stateReader.position(p, Duration.ofSeconds(15)) < end.get(p)) { done = false; break; }
      if (done) break;
      if (System.currentTimeMillis() > deadline) throw new TimeoutException("state topic " + settings.stateTopic() + " not read to its end in 120 s");
      for (ConsumerRecord<byte[], byte[]> r : stateReader.poll(Duration.ofMillis(200))) {
        if (r.key() == null) continue;
        TopicPartition tp = byKey.get(new String(r.key(), StandardCharsets.UTF_8));
        if (tp == null) continue;
        if (r.value() == null) { out.remove(tp); continue; }
        Header h = r.headers().lastHeader(NEXT_OFFSET_HEADER);
        if (h == null) {
          LOG.warn("runner {}: state record at {}-{} offset {} has no {} header; ignored", settings.name(), r.topic(), r.partition(),
              r.offset(), NEXT_OFFSET_HEADER);
          continue;
        }
        out.put(tp, new Checkpoint(Long.parseLong(new String(h.value(), StandardCharsets.US_ASCII)), r.value()));
      }
    }
    stateReader.unsubscribe();
    return out;
  }

  // ------------------------------------------------------------------ client configs

  private Map<String, Object> consumerConfig(String groupInstanceId, String role) {
    Map<String, Object> c = new HashMap<>();
    c.put(ConsumerConfig.CLIENT_ID_CONFIG, "runnel-" + settings.name() + "-" + settings.instanceId() + "-" + role);
    c.put(ConsumerConfig.MAX_POLL_RECORDS_CONFIG, 1000);
    c.put(ConsumerConfig.AUTO_OFFSET_RESET_CONFIG, "earliest");
    c.put(ConsumerConfig.GROUP_PROTOCOL_CONFIG, "classic");
    c.put(ConsumerConfig.PARTITION_ASSIGNMENT_STRATEGY_CONFIG, RangeAssignor.class.getName());
    c.putAll(ClientConfig.forClient(settings.clientProperties(), ClientConfig.Kind.CONSUMER, env));
    if (!role.equals("consumer")) {
      // the state reader: no group, its own client id
      c.put(ConsumerConfig.CLIENT_ID_CONFIG, c.get(ConsumerConfig.CLIENT_ID_CONFIG) + "-state");
      c.remove(ConsumerConfig.GROUP_INSTANCE_ID_CONFIG);
      c.remove(ConsumerConfig.GROUP_PROTOCOL_CONFIG);
      c.remove(ConsumerConfig.PARTITION_ASSIGNMENT_STRATEGY_CONFIG);
      c.put(ConsumerConfig.MAX_PARTITION_FETCH_BYTES_CONFIG, TopicSetup.STATE_MAX_MESSAGE_BYTES + 1024 * 1024);
    } else {
      c.put(ConsumerConfig.GROUP_ID_CONFIG, settings.groupId());
      c.putIfAbsent(ConsumerConfig.GROUP_INSTANCE_ID_CONFIG, groupInstanceId);
    }
    c.put(ConsumerConfig.BOOTSTRAP_SERVERS_CONFIG, settings.bootstrapServers());
    c.put(ConsumerConfig.ISOLATION_LEVEL_CONFIG, "read_committed");
    c.put(ConsumerConfig.ENABLE_AUTO_COMMIT_CONFIG, false);
    c.put(ConsumerConfig.KEY_DESERIALIZER_CLASS_CONFIG, ByteArrayDeserializer.class.getName());
    c.put(ConsumerConfig.VALUE_DESERIALIZER_CLASS_CONFIG, ByteArrayDeserializer.class.getName());
    return c;
  }

  private KafkaProducer<byte[], byte[]> newProducer() {
    Map<String, Object> p = new HashMap<>();
    p.put(ProducerConfig.CLIENT_ID_CONFIG, "runnel-" + settings.name() + "-" + settings.instanceId() + "-producer");
    p.put(ProducerConfig.ACKS_CONFIG, "all");
    p.put(ProducerConfig.COMPRESSION_TYPE_CONFIG, "lz4");
    p.put(ProducerConfig.LINGER_MS_CONFIG, 5);
    // 256 KB batches instead of the client's 16 KB: EndToEndBenchmark (docs/performance.md) measured
    // the pipeline at +57 % throughput on the embedded broker, with lower latency; lz4 beat none and zstd there
    p.put(ProducerConfig.BATCH_SIZE_CONFIG, 256 * 1024);
    p.put(ProducerConfig.MAX_BLOCK_MS_CONFIG, 10_000);
    p.put(ProducerConfig.MAX_REQUEST_SIZE_CONFIG, TopicSetup.STATE_MAX_MESSAGE_BYTES);
    p.put(ProducerConfig.BUFFER_MEMORY_CONFIG, 2L * TopicSetup.STATE_MAX_MESSAGE_BYTES + 32L * 1024 * 1024);
    p.putAll(ClientConfig.forClient(settings.clientProperties(), ClientConfig.Kind.PRODUCER, env));
    p.put(ProducerConfig.BOOTSTRAP_SERVERS_CONFIG, settings.bootstrapServers());
    p.put(ProducerConfig.TRANSACTIONAL_ID_CONFIG, settings.transactionalId());
    p.put(ProducerConfig.ENABLE_IDEMPOTENCE_CONFIG, true);
    p.put(ProducerConfig.KEY_SERIALIZER_CLASS_CONFIG, ByteArraySerializer.class.getName());
    p.put(ProducerConfig.VALUE_SERIALIZER_CLASS_CONFIG, ByteArraySerializer.class.getName());
    return new KafkaProducer<>(p);
  }

  private void sleep(long ms) {
    try {
      Thread.sleep(ms);
    } catch (InterruptedException e) {
      Thread.currentThread().interrupt();
      throw new FatalException("interrupted", e);
    }
  }
}
