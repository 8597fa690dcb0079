package dev.runnel.core.pipeline;

import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.drift.DriftMonitor;
import dev.runnel.core.feature.Featurizer;
import dev.runnel.core.model.ModelSettings;
import dev.runnel.core.model.RlsModel;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.JsonRecordDecoder;
import dev.runnel.core.record.RejectReason;
import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.util.Arrays;

/**
 * The whole per-record job for one stream (one input partition): decode, featurize, predict a
 * priori, update the model when the target is present, keep prequential metrics, and say when a
 * coefficient snapshot is due. Pure and deterministic: the same records in the same order give
 * the same bits out, and {@link #restore(byte[])} of a {@link #checkpoint()} continues exactly as
 * the uninterrupted run would. One thread.
 *
 * <p>Order of work for a record that carries its target (test, then train):
 * <ol>
 *   <li>decode, pick the event time (the one "event time missing" check) and check the fields;
 *       on bad input a reject, and nothing else changes;</li>
 *   <li>the {@link StreamClock} decides on the time: a jump it does not (yet) accept is a
 *       {@code time_jump} reject, and nothing but the clock's pending run changes;</li>
 *   <li>if the clock entered a later snapshot period, the snapshot of the period that ended is
 *       published now, without this record (periods are half-open);</li>
 *   <li>featurize with learning: vocabulary expiry (by the clock) and admission and scaler
 *       changes reach the model first (as layout events), so the row is encoded in the model's
 *       current basis;</li>
 *   <li>predict with the model as it was before this record's target (a priori), with the
 *       interval; {@code warming_up} (no value) while the model has no weights or no noise
 *       estimate;</li>
 *   <li>update the model, forgetting by the clock's factor (after 64 half-lives or more the model
 *       restarts from its prior instead);</li>
 *   <li>update the metrics with the a priori error of a {@code scored} record; publish; a
 *       snapshot every N training records comes after the N-th.</li>
 * </ol>
 * A record without the target is a forecast request: it is encoded read-only and scored at its
 * own time, and changes no state at all (not even the clock).
 *
 * <p>With {@code input.forecast} (docs/forecasting.md) a record also has an entity (its entity
 * fields, required) and a target time (its target-time field, else its event time); the calendar
 * features read the target time, the clock still reads the event time. A forecast request that got
 * a value is remembered in the bounded {@link PendingForecasts} (the one state it changes); an
 * accepted actual, once learned from, settles every forecast pending for its (entity, target time)
 * through {@link Sink#settled}, before its own prediction. The history features (lag, smoothed;
 * docs/features.md) read the record's entity, its target time and its issue time (its event time).
 */
public final class PipelineStep {

  /** Receives what one record produced. Objects passed in are reused: copy what you keep. */
  public interface Sink {
    /** A prediction for a record that was not rejected. */
    void prediction(Prediction prediction, EventRecord record);

    /** A rejected record; the state was not changed by it. */
    void reject(RejectReason reason, String detail);

    /** A coefficient snapshot became due after this record. */
    void snapshotDue();

    /**
     * A pending forecast settled by this record's actual ({@code input.forecast}, docs/forecasting.md):
     * called once per forecast, in the order they were issued, before this record's own
     * {@link #prediction}. The entity is this record's entity fields. Does nothing unless overridden.
     */
    default void settled(SettledForecast settled, EventRecord record) { }
  }

  /**
   * Latest version of the checkpoint layout: 4 adds the pending forecasts; 5 is written when a
   * feature reads each entity's history (lag, smoothed), whose state sits in the featurizer's part
   * (the layout is version 4's). A step without {@code input.forecast} has none and still writes
   * version 3, and one without a history feature version 4, byte for byte as before.
   */
  public static final int CHECKPOINT_VERSION = 5;
  private static final int CHECKPOINT_VERSION_WITHOUT_HISTORY = 4;
  private static final int CHECKPOINT_VERSION_WITHOUT_FORECASTS = 3;
  private static final int CHECKPOINT_MAGIC = 0x524E4C43; // "RNLC"

  private final PipelineConfig config;
  private final JsonRecordDecoder decoder;
  private final EventRecord record;
  private final Featurizer featurizer;
  private RlsModel model;
  private final PrequentialMetrics metrics;
  private final DriftMonitor drift;
  /** The stream's one clock: admission of event times, forgetting, expiry, snapshot periods. */
  private final StreamClock clock;
  private final Prediction prediction = new Prediction();
  private final int targetSlot;
  private final long configFingerprint;
  /** {@code input.forecast}: null when absent (target time = event time, nothing remembered). */
  private final PendingForecasts pending;
  private final int[] entitySlots;
  private final int targetTimeSlot;
  /** The entity text of this record: each entity field's length (two chars) then its chars. */
  private char[] entityKey = new char[64];
  private int entityKeyLength;
  private final SettledForecast settledForecast = new SettledForecast();
  private double[] row;
  /** The model's a-priori leverage (element 0) and prediction (element 1) for this record. */
  private final double[] aPriori = new double[2];

  private long records;
  private long trained;
  private long forecasts;
  private long warmingUp;
  private long modelRestarts;
  private long rejected;
  private final long[] rejectCounts = new long[RejectReason.values().length];
  private long trainedAtLastSnapshot;
  private long periodOfLastSnapshot = Long.MIN_VALUE;
  /** Set only while a due snapshot is handed to the sink: the time it is stamped with. */
  private long snapshotStampMillis = Long.MIN_VALUE;
  private long snapshotsTaken;

  /**
   * @param config a checked configuration. Not modified.
   */
  public PipelineStep(PipelineConfig config) {
    this.config = config;
    PipelineConfig.Input in = config.input();
    this.decoder = in.eventTime().isPresent()
        ? new JsonRecordDecoder(in.schema(), in.limits(), in.eventTime().get().field(), in.eventTime().get().format())
        : new JsonRecordDecoder(in.schema(), in.limits());
    this.record = new EventRecord(in.schema());
    this.featurizer = new Featurizer(config);
    this.model = new RlsModel(featurizer.dimension(), modelSettings(config));
    this.featurizer.setListener(model);
    this.metrics = new PrequentialMetrics(config.outputs().metricsHalfLifeRecords());
    this.drift = new DriftMonitor(config.drift());
    PipelineConfig.Model m = config.model();
    PipelineConfig.Clock c = in.clock();
    this.clock = new StreamClock(c.maxAheadMillis(), c.confirmRecords(), m.forgettingFactor(), m.forgettingHalfLifeMillis());
    this.targetSlot = config.targetSlot();
    this.row = new double[Math.max(8, featurizer.maxDimension())];
    this.configFingerprint = fingerprint(config);
    PipelineConfig.Forecast fc = in.forecast();
    if (fc.enabled()) {
      this.pending = new PendingForecasts(fc.maxPending(), fc.maxActualDelayMillis());
      this.entitySlots = new int[fc.entityFields().size()];
      for (int i = 0; i < entitySlots.length; i++) {
        entitySlots[i] = in.schema().slot(fc.entityFields().get(i));
      }
      this.targetTimeSlot = in.schema().slot(fc.targetTimeField());
      this.settledForecast.entitySlots = entitySlots;
    } else {
      this.pending = null;
      this.entitySlots = new int[0];
      this.targetTimeSlot = -1;
    }
  }

  /** The model settings a configuration asks for. */
  static ModelSettings modelSettings(PipelineConfig config) {
    PipelineConfig.Model m = config.model();
    double prior = m.diffuse() ? ModelSettings.DIFFUSE : m.priorVariance();
    return new ModelSettings(prior, m.constantTerm(), m.windupGuard(),
        ModelSettings.zForLevel(m.intervalLevel()), m.noiseHalfLifeRecords());
  }

  /**
   * Processes one record given as JSON bytes.
   *
   * @param buf the bytes. Not modified.
   * @param off start of the record in {@code buf}
   * @param len length of the record
   * @param fallbackTimeMillis the event time to use when the configuration names no time field
   *     (e.g. the Kafka record timestamp)
   * @param partition source partition, copied into the prediction (-1 if none)
   * @param offset source offset or line number, copied into the prediction (-1 if none)
   * @param sink receives the outcome
   */
  public void process(byte[] buf, int off, int len, long fallbackTimeMillis, long partition, long offset, Sink sink) {
    RejectReason reason = decoder.decode(buf, off, len, record);
    if (reason != null) {
      reject(reason, decoder.lastDetail(), sink);
      return;
    }
    processDecoded(fallbackTimeMillis, partition, offset, sink);
  }

  /**
   * Counts a record its source could not hold whole because it is larger than
   * {@code input.limits.max_record_bytes} (a file line read only in part): a
   * {@code RECORD_TOO_LARGE} reject with its size; nothing else changes.
   *
   * @param recordBytes the record's whole size in bytes
   */
  public void processTooLarge(long recordBytes, Sink sink) {
    records++;
    RejectReason reason = decoder.tooLarge(recordBytes);
    reject(reason, decoder.lastDetail(), sink);
  }

  /**
   * Processes a record already decoded into {@link #record()} by the caller (used by tests and by
   * sources that are not JSON). Counts it as one record.
   */
  public void processRecord(long fallbackTimeMillis, long partition, long offset, Sink sink) {
    processDecoded(fallbackTimeMillis, partition, offset, sink);
  }

  /** The reusable record that {@link #processRecord} reads; fill it, then call that method. */
  public EventRecord record() {
    return record;
  }

  private void processDecoded(long fallbackTimeMillis, long partition, long offset, Sink sink) {
    // the one "event time missing" check: the configured field, else the transport's time
    long t;
    if (config.input().eventTime().isPresent()) {
      if (!record.hasEventTime()) {
        reject(RejectReason.MISSING_FIELD,
            "field " + config.input().eventTime().get().field() + " (the event time): missing", sink);
        return;
      }
      t = record.eventTimeMillis();
    } else {
      t = fallbackTimeMillis;
    }
    boolean hasTarget = record.present(targetSlot);
    RejectReason reason = featurizer.check(record);
    if (reason != null) {
      reject(reason, featurizer.lastDetail(), sink);
      return;
    }
    // the time whose value is forecast or reported: the target-time field, else the event time
    long target = t;
    if (pending != null) {
      if (!entityKey(sink)) {
        return;
      }
      if (record.present(targetTimeSlot)) {
        target = record.timeMillis(targetTimeSlot);
      }
    }
    if (hasTarget) {
      // the stream clock decides whether this time may move event time (docs/model.md)
      StreamClock.Verdict verdict = clock.accept(t);
      if (verdict == StreamClock.Verdict.REJECTED) {
        reject(RejectReason.TIME_JUMP, clock.lastDetail(), sink);
        return;
      }
      // periods are half-open [start, end): the record that opens a period first closes the last
      periodSnapshotBefore(verdict, sink);
      if (clock.forgetsAll()) {
        // 64 half-lives or more since the clock: what came before weighs under 2^-64 of this
        // record; the model starts again from its prior over the current columns
        model = new RlsModel(featurizer.dimension(), modelSettings(config));
        featurizer.setListener(model);
        modelRestarts++;
      }
    }
    double y = hasTarget ? record.number(targetSlot) : Double.NaN;
    ensureRow();
    Prediction p = prediction;
    p.eventTimeMillis = t;
    p.sourcePartition = partition;
    p.sourceOffset = offset;
    p.actual = y;
    p.stamped = pending != null;
    p.targetTimeMillis = target;
    p.targetPassed = !hasTarget && pending != null && clock.nowMillis() != Long.MIN_VALUE && target <= clock.nowMillis();
    // calendar features describe the target time (the event time when no target-time field is configured)
    if (hasTarget) {
      featurizer.learnAndEncode(record, target, t, clock.nowMillis(), row);
    } else {
      featurizer.encode(record, target, t, row);
    }
    p.layoutVersion = featurizer.layoutVersion();
    double half = Double.NaN;
    boolean ready = model.ready();
    double noiseBefore = model.noiseSd();
    // warming up: no weights yet (diffuse start) or no noise estimate yet (the first record), so
    // neither a point value nor an interval can be given honestly
    boolean warm = ready && !Double.isNaN(noiseBefore);
    p.status = !warm ? Prediction.Status.WARMING_UP
        : hasTarget ? Prediction.Status.SCORED : Prediction.Status.FORECAST;
    p.predicted = Double.NaN;
    if (hasTarget) {
      // the prediction and its interval are the a priori ones (the model before this record's
      // target, noise sd before this record); the update gives the prediction and the leverage
      // from its own rotations, so no triangular solve is needed
      if (!model.update(row, y, clock.lambda(), aPriori)) {
        reject(RejectReason.MODEL_REFUSED,
            "the update would have made the model's state non-finite; the model is unchanged", sink);
        return;
      }
      if (warm) {
        p.predicted = aPriori[1];
        half = model.settings().intervalZ() * noiseBefore * Math.sqrt(1.0 + aPriori[0]);
      }
    } else if (warm) {
      // a forecast request: prediction and leverage from one forward substitution
      model.forecast(row, aPriori);
      p.predicted = aPriori[1];
      half = model.settings().intervalZ() * noiseBefore * Math.sqrt(1.0 + aPriori[0]);
    }
    if (Double.isNaN(half)) {
      p.low = Double.NaN;
      p.high = Double.NaN;
    } else {
      p.low = p.predicted - half;
      p.high = p.predicted + half;
    }
    records++;
    if (hasTarget) {
      trained++;
      if (p.status == Prediction.Status.SCORED) {
        metrics.add(y - p.predicted, p.covered());
        // the a priori error and its predictive sd s·√(1 + xᵀPx) = half-width / z
        drift.observeError(y - p.predicted, half / model.settings().intervalZ(), model.noiseSd(), t, trained);
      }
    } else {
      forecasts++;
    }
    if (p.status == Prediction.Status.WARMING_UP) {
      warmingUp++;
    }
    if (pending != null) {
      if (hasTarget) {
        settle(target, y, partition, offset, sink);
      } else if (p.status == Prediction.Status.FORECAST) {
        pending.add(entityKey, entityKeyLength, target, t, p.predicted, p.low, p.high, partition, offset, clock.nowMillis());
      } else {
        pending.expireFront(clock.nowMillis());
      }
    }
    sink.prediction(p, record);
    if (hasTarget) {
      PipelineConfig.Outputs o = config.outputs();
      if (o.snapshotEveryRecords() > 0 && trained - trainedAtLastSnapshot >= o.snapshotEveryRecords()) {
        publishSnapshot(clock.nowMillis(), sink);
      }
    }
  }

  /**
   * Called for an accepted training record after the clock took its time and before anything
   * else changed: when the clock entered a later snapshot period, the snapshot of the period
   * that ended is published now, stamped with that period's end, without this record.
   */
  private void periodSnapshotBefore(StreamClock.Verdict verdict, Sink sink) {
    long every = config.outputs().snapshotEveryMillis();
    if (every <= 0) {
      return;
    }
    long period = Math.floorDiv(clock.nowMillis(), every);
    if (periodOfLastSnapshot == Long.MIN_VALUE || (period < periodOfLastSnapshot && verdict == StreamClock.Verdict.JUMPED)) {
      periodOfLastSnapshot = period; // the first record, or a provisional clock moved back
    } else if (period > periodOfLastSnapshot) {
      long end = (periodOfLastSnapshot + 1) * every;
      periodOfLastSnapshot = period;
      publishSnapshot(end, sink);
    }
  }

  private void publishSnapshot(long stampMillis, Sink sink) {
    trainedAtLastSnapshot = trained;
    snapshotStampMillis = stampMillis;
    try {
      observeSnapshotForDrift();
      sink.snapshotDue();
    } finally {
      snapshotStampMillis = Long.MIN_VALUE;
    }
  }

  /** Cold path: the weight alarms and baselines move on once per published snapshot. */
  private void observeSnapshotForDrift() {
    Snapshot s = Snapshot.of(this);
    int n = s.columns().size();
    String[] names = new String[n];
    double[] raw = new double[n];
    double[] se = new double[n];
    for (int j = 0; j < n; j++) {
      Snapshot.Column c = s.columns().get(j);
      names[j] = c.name();
      raw[j] = s.ready() ? c.rawWeight() : Double.NaN;
      se[j] = c.rawStandardError();
    }
    drift.observeSnapshot(snapshotsTaken, snapshotTimeMillis(), trained, names, raw, se, n);
    snapshotsTaken++;
  }

  /**
   * Builds this record's entity text from its entity fields (each as its length in two chars, then
   * its chars, so no two field lists give the same text); a missing field is a reject.
   *
   * @return false when the record was rejected
   */
  private boolean entityKey(Sink sink) {
    int n = 0;
    for (int slot : entitySlots) {
      int len = record.present(slot) ? record.textLength(slot) : -1;
      if (len < 0) {
        reject(RejectReason.MISSING_FIELD, "field " + config.input().schema().name(slot)
            + " (an entity field, input.forecast.entity_fields): missing", sink);
        return false;
      }
      if (entityKey.length < n + 2 + len) {
        entityKey = Arrays.copyOf(entityKey, Math.max(entityKey.length * 2, n + 2 + len));
      }
      entityKey[n++] = (char) (len >>> 16);
      entityKey[n++] = (char) len;
      System.arraycopy(record.textChars(slot), 0, entityKey, n, len);
      n += len;
    }
    entityKeyLength = n;
    return true;
  }

  /** Hands every forecast pending for this record's (entity, target time) to the sink, settled by {@code actual}. */
  private void settle(long target, double actual, long partition, long offset, Sink sink) {
    int n = pending.take(entityKey, entityKeyLength, target, clock.nowMillis());
    SettledForecast s = settledForecast;
    for (int i = 0; i < n; i++) {
      s.issueTimeMillis = pending.takenIssueMillis(i);
      s.targetTimeMillis = target;
      s.forecast = pending.takenForecast(i);
      s.low = pending.takenLow(i);
      s.high = pending.takenHigh(i);
      s.actual = actual;
      s.requestPartition = pending.takenPartition(i);
      s.requestOffset = pending.takenOffset(i);
      s.actualPartition = partition;
      s.actualOffset = offset;
      sink.settled(s, record);
    }
  }

  private void reject(RejectReason reason, String detail, Sink sink) {
    records++;
    rejected++;
    rejectCounts[reason.ordinal()]++;
    sink.reject(reason, detail);
  }

  private void ensureRow() {
    int need = featurizer.maxDimension();
    if (row.length < need) {
      row = Arrays.copyOf(row, need);
    }
  }

  // ------------------------------------------------------------------ reading (cold path)

  public PipelineConfig config() { return config; }

  public Featurizer featurizer() { return featurizer; }

  public RlsModel model() { return model; }

  public PrequentialMetrics metrics() { return metrics; }

  /** The drift alarms' state. */
  public DriftMonitor drift() { return drift; }

  /**
   * Snapshots that became due so far; the latest due snapshot has index {@code snapshotsTaken() − 1}.
   */
  public long snapshotsTaken() { return snapshotsTaken; }

  /** Records handed in, including rejected ones. */
  public long records() { return records; }

  /** Records the model learned from. */
  public long trained() { return trained; }

  /** Records scored without a target. */
  public long forecasts() { return forecasts; }

  /** Records scored while the model was still warming up. */
  public long warmingUp() { return warmingUp; }

  /** Rejected records. */
  public long rejected() { return rejected; }

  /** Times the model restarted from its prior after a step of 64 half-lives or more (since this step was made or restored). */
  public long modelRestarts() { return modelRestarts; }

  /** Rejected records with this reason. */
  public long rejected(RejectReason reason) { return rejectCounts[reason.ordinal()]; }

  /** The stream clock's time (docs/model.md), or {@code Long.MIN_VALUE} before the first training record. */
  public long lastEventTimeMillis() { return clock.nowMillis(); }

  /** Whether {@code input.forecast} is configured: forecasts are remembered and settled. */
  public boolean remembersForecasts() { return pending != null; }

  /** Forecasts pending now (0 without {@code input.forecast}). */
  public int pendingForecasts() { return pending != null ? pending.size() : 0; }

  /** Forecasts remembered until their actual, since the state began. */
  public long rememberedForecasts() { return pending != null ? pending.remembered() : 0; }

  /** Forecasts settled by their actual, since the state began. */
  public long settledForecasts() { return pending != null ? pending.settled() : 0; }

  /** Forecasts dropped by {@code input.forecast.max_pending} (the one issued first), since the state began. */
  public long droppedForecastsFull() { return pending != null ? pending.droppedFull() : 0; }

  /**
   * Forecasts dropped by {@code input.forecast.max_actual_delay} (their actual did not come in time,
   * or the request's target time was already that far behind the clock), since the state began.
   */
  public long droppedForecastsExpired() { return pending != null ? pending.droppedExpired() : 0; }

  /** The stream clock (read only between records). */
  public StreamClock clock() { return clock; }

  /**
   * The event time a snapshot built now carries: inside {@link Sink#snapshotDue()} for a
   * period, the end of the period it closes; otherwise the clock's time.
   */
  public long snapshotTimeMillis() {
    return snapshotStampMillis != Long.MIN_VALUE ? snapshotStampMillis : clock.nowMillis();
  }

  /**
   * Builds a coefficient snapshot of the current state (allocates; O(p³)). Its index, alarms and
   * per-column drift scores are those of the latest due snapshot, so called from
   * {@link Sink#snapshotDue()} it is exactly the snapshot that became due.
   */
  public Snapshot snapshot() {
    return Snapshot.of(this);
  }

  /**
   * Takes one snapshot now, outside the schedule, with the next index (its weight alarms and
   * drift scores are computed as for a due one): for the end of a finite stream, such as a file
   * replay, whose last records came after the latest due snapshot. The schedule of due snapshots
   * is not changed. Cold path; then {@link #snapshot()} is the snapshot taken.
   */
  public void takeSnapshotNow() {
    observeSnapshotForDrift();
  }

  // ------------------------------------------------------------------ checkpoints

  /**
   * The whole state as bytes: layout, vocabularies, scalers, model, metrics, counters.
   *
   * @return a checkpoint that {@link #restore} accepts under the same configuration
   */
  public byte[] checkpoint() {
    try {
      ByteArrayOutputStream bytes = new ByteArrayOutputStream(4096);
      DataOutputStream out = new DataOutputStream(bytes);
      out.writeInt(CHECKPOINT_MAGIC);
      out.writeInt(pending == null ? CHECKPOINT_VERSION_WITHOUT_FORECASTS
          : featurizer.readsHistory() ? CHECKPOINT_VERSION : CHECKPOINT_VERSION_WITHOUT_HISTORY);
      out.writeLong(configFingerprint);
      out.writeLong(records);
      out.writeLong(trained);
      out.writeLong(forecasts);
      out.writeLong(warmingUp);
      out.writeLong(rejected);
      out.writeInt(rejectCounts.length);
      for (long c : rejectCounts) {
        out.writeLong(c);
      }
      out.writeLong(trainedAtLastSnapshot);
      out.writeLong(periodOfLastSnapshot);
      clock.writeTo(out);
      metrics.writeTo(out);
      featurizer.writeTo(out);
      model.writeTo(out);
      out.writeLong(snapshotsTaken);
      drift.writeTo(out);
      if (pending != null) {
        pending.writeTo(out);
      }
      out.flush();
      return bytes.toByteArray();
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /**
   * Replaces the whole state with a checkpoint's.
   *
   * @param checkpoint bytes from {@link #checkpoint()}. Not modified.
   * A version 1 checkpoint (before drift alarms) is read with a fresh drift state; versions 1 and
   * 2 (before the one stream clock) give the clock their largest training time, with no jump pending;
   * versions 1 to 3 (before forecasts were remembered) restore with no forecast pending.
   *
   * @throws IllegalArgumentException if the bytes are not a checkpoint, are of an unknown version,
   *     or were written under a configuration whose features or model differ
   */
  public void restore(byte[] checkpoint) {
    try {
      DataInputStream in = new DataInputStream(new ByteArrayInputStream(checkpoint));
      if (in.readInt() != CHECKPOINT_MAGIC) {
        throw new IllegalArgumentException("not a Runnel pipeline checkpoint");
      }
      int version = in.readInt();
      if (version < 1 || version > CHECKPOINT_VERSION) {
        throw new IllegalArgumentException("checkpoint format version " + version
            + " is not supported; this Runnel reads version " + CHECKPOINT_VERSION);
      }
      if (featurizer.readsHistory() && version < CHECKPOINT_VERSION) {
        throw new IllegalArgumentException("checkpoint format version " + version + " has no history state (it was written"
            + " before lag or smoothed features existed); start a new pipeline name (or reset its state) to use them");
      }
      long fp = in.readLong();
      if (fp != configFingerprint) {
        throw new IllegalArgumentException("the checkpoint was written under a different feature or model"
            + " configuration; start a new pipeline name (or reset its state) to use the changed configuration");
      }
      records = in.readLong();
      trained = in.readLong();
      forecasts = in.readLong();
      warmingUp = in.readLong();
      rejected = in.readLong();
      int n = in.readInt();
      for (int i = 0; i < n; i++) {
        long c = in.readLong();
        if (i < rejectCounts.length) {
          rejectCounts[i] = c;
        }
      }
      long legacyForgettingClock = Long.MIN_VALUE;
      if (version < 3) {
        in.readLong(); // the latest event time seen, now the clock's
      }
      trainedAtLastSnapshot = in.readLong();
      periodOfLastSnapshot = in.readLong();
      if (version < 3) {
        legacyForgettingClock = in.readLong();
      } else {
        clock.readFrom(in);
      }
      metrics.readFrom(in);
      long legacyStreamTime = featurizer.readFrom(in);
      if (version < 3) {
        // versions 1 and 2 kept three times; the featurizer's (largest training time) is the
        // clock's, and equals the forgetting clock when forgetting is by half-life
        clock.restoreLegacy(legacyStreamTime != Long.MIN_VALUE ? legacyStreamTime : legacyForgettingClock, trained);
      }
      model = RlsModel.readFrom(in);
      featurizer.setListener(model);
      if (version >= 2) {
        snapshotsTaken = in.readLong();
        drift.readFrom(in);
      }
      if (version >= 4) {
        if (pending == null) {
          throw new IllegalArgumentException("the checkpoint holds pending forecasts (it was written with input.forecast);"
              + " keep input.forecast in the configuration, or start a new pipeline name (or reset its state) without it");
        }
        pending.readFrom(in);
      } else if (pending != null) {
        pending.clear();
      }
      ensureRow();
    } catch (IOException e) {
      throw new IllegalArgumentException("the checkpoint is truncated or corrupt: " + e.getMessage(), e);
    }
  }

  /**
   * A fingerprint of the parts of the configuration that shape the state (schema, target,
   * features, model), so a checkpoint is never restored under a different layout. FNV-1a over a
   * canonical text (records' toString is stable for the value types used).
   */
  private static long fingerprint(PipelineConfig c) {
    String text = c.input().schema() + "|" + c.target() + "|" + c.features() + "|" + c.model()
        + "|" + c.input().timeZone();
    byte[] b = text.getBytes(StandardCharsets.UTF_8);
    long h = 0xcbf29ce484222325L;
    for (byte x : b) {
      h ^= (x & 0xff);
      h *= 0x100000001b3L;
    }
    return h;
  }
}
