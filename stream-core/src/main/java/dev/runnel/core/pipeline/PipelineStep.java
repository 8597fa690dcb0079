package dev.runnel.core.pipeline;

import dev.runnel.core.config.Correction;
import dev.runnel.core.config.ModelScope;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.drift.DriftMonitor;
import dev.runnel.core.feature.Featurizer;
import dev.runnel.core.model.ModelSettings;
import dev.runnel.core.model.GlobalModel;
import dev.runnel.core.model.ModelShare;
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
import java.util.TreeMap;

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
 * through {@link Sink#settled}, before its own prediction. Before the clock sees an actual, it is
 * rejected when its target time is more than {@code max_actual_lag} behind the clock
 * ({@code actual_too_late}), or when the bounded {@link LearnedActuals} memory already learned its
 * (entity, target time): with the same value ({@code repeated_actual}), or with another value under
 * {@code corrections: reject} ({@code corrected_actual}); under {@code replace} the first value is
 * removed from the model by {@link RlsModel#downdate} (its row kept in column ids and first bases,
 * {@link ColumnBases}) after the clock took the record, and the forecasts it settled are settled again. The
 * history features (lag, smoothed; docs/features.md) read the record's entity, its target time and
 * its issue time (its event time).
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
   * Latest version of the checkpoint layout: 4 adds the pending forecasts, 5 the memory of learned
   * actuals (and, for {@code corrections: replace}, what removing one needs), 6 the error metrics of
   * settled forecasts by horizon, 7 the change attribution (a flag for the forecast state, then the
   * attribution's window and latest result), 8 the state of the features that read each entity's
   * history (lag, smoothed), in the featurizer's part, with the rest laid out as in 7, 9 the
   * weight-break scan's blocks after the attribution's state (laid out as 8 otherwise). A step with the
   * scan on writes 9 once the scan has seen a record; otherwise a step with a history feature always
   * writes 8, and one without writes 7 only once the attribution has state (an error-level alarm
   * opened its window); before that, a step without {@code input.forecast} still writes version 3,
   * byte for byte as before, and one with it version 6. Version 10 ({@link #CHECKPOINT_VERSION_GLOBAL})
   * is written only with {@code model.scope: global}.
   */
  public static final int CHECKPOINT_VERSION = 9;
  private static final int CHECKPOINT_VERSION_WITH_HISTORY = 8;
  private static final int CHECKPOINT_VERSION_WITH_ATTRIBUTION = 7;
  /**
   * Written only with {@code model.scope: global}: the version 9 layout (the weight-break scan's
   * section always present) with a {@link GlobalModel} in the model's place and the sharing
   * bookkeeping at the end.
   */
  public static final int CHECKPOINT_VERSION_GLOBAL = 10;
  private static final int CHECKPOINT_VERSION_WITH_FORECASTS = 6;
  private static final int CHECKPOINT_VERSION_WITHOUT_FORECASTS = 3;
  /** The weight, in records, the noise estimate keeps when it restarts after a reset's hold. */
  static final double NOISE_RESTART_RECORDS = 10.0;
  private static final int CHECKPOINT_MAGIC = 0x524E4C43; // "RNLC"
  /**
   * How many per-reason counters every checkpoint holds: the 15 that checkpoints held before the
   * reasons for actuals were added (the 15th was then {@code processing_failed}, which the step never
   * counts, so it was always 0); the counters after them are written once one of them is counted.
   */
  private static final int LEGACY_REJECT_COUNTS = 15;

  private final PipelineConfig config;
  private final JsonRecordDecoder decoder;
  private final EventRecord record;
  private final Featurizer featurizer;
  private RlsModel model;
  /** {@code model.scope: global}: the shared model (its view is {@link #model}); null for a model per partition. */
  private GlobalModel global;
  /** Global scope: {@link #trained} at the last share, the clock's share period then, and where each share partition is read to. */
  private long trainedAtLastShare;
  private long periodOfLastShare = Long.MIN_VALUE;
  private final TreeMap<Integer, Long> shareOffsets = new TreeMap<>();
  private long sharesMade;
  private long sharesFolded;
  /** The input partition given at construction (the source of this step's shares). */
  private final int partitionNumber;
  private final PrequentialMetrics metrics;
  private final DriftMonitor drift;
  /** The stream's one clock: admission of event times, forgetting, expiry, snapshot periods. */
  private final StreamClock clock;
  private final Prediction prediction = new Prediction();
  private final int targetSlot;
  /** {@code model.target_transform}: the model's scale of the target and the way back. */
  private final TargetScaling targetScaling;
  private final long configFingerprint;
  /** {@code input.forecast}: null when absent (target time = event time, nothing remembered). */
  private final PendingForecasts pending;
  /** The settled forecasts' errors by horizon bucket; null without {@code input.forecast}. */
  private final HorizonMetrics horizonMetrics;
  private final int[] entitySlots;
  private final int targetTimeSlot;
  /** The entity text of this record: each entity field's length (two chars) then its chars. */
  private char[] entityKey = new char[64];
  private int entityKeyLength;
  private final SettledForecast settledForecast = new SettledForecast();
  /** {@code input.forecast.max_actual_lag}: an actual further behind the clock is rejected. */
  private final long maxActualLagMillis;
  /** The (entity, target time) keys learned, with their values; null without input.forecast or with max_learned_actuals: 0. */
  private final LearnedActuals learned;
  private final Correction corrections;
  /** {@code corrections: replace} only (else null): column ids and bases, settled forecasts kept for re-settling. */
  private final ColumnBases bases;
  private final PendingForecasts settledKept;
  /** {@code corrections: replace}: the sum of log(lambda) over every update since the state began, and model restarts. */
  private double logDecay;
  private long generation;
  private long replacedActuals;
  private long resettledForecasts;
  /** Scratch: the replaced observation's row in today's layout. */
  private double[] oldRow = new double[8];
  private String correctionDetail = "";
  /** Scratch: the forecasts taken for re-settling, copied out (issue, partition, offset; forecast, low, high). */
  private long[] keptLongs = new long[24];
  private double[] keptDoubles = new double[24];
  /** Set only inside {@link #processRequest}: the target time it names. */
  private boolean hasRequestTarget;
  private long requestTargetMillis;
  private double[] row;
  /** The row in raw units, only while the change attribution's window is open. */
  private double[] rawRow = new double[0];
  /** Kept between snapshot periods for the drift monitor (observeSnapshotForDrift). */
  private double[] driftWeights = new double[0];
  private double[] driftSe = new double[0];
  private double[] driftRaw = new double[0];
  private double[] driftRawSe = new double[0];
  private String[] driftNames = new String[0];
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
    this(config, 0);
  }

  /**
   * @param config a checked configuration. Not modified.
   * @param partition the input partition this step serves: with {@code model.scope: global}, the
   *     source its shares carry (every partition of a pipeline needs its own); otherwise unused
   */
  public PipelineStep(PipelineConfig config, int partition) {
    this.config = config;
    this.partitionNumber = partition;
    PipelineConfig.Input in = config.input();
    this.decoder = in.eventTime().isPresent()
        ? new JsonRecordDecoder(in.schema(), in.limits(), in.eventTime().get().field(), in.eventTime().get().format())
        : new JsonRecordDecoder(in.schema(), in.limits());
    this.record = new EventRecord(in.schema());
    this.featurizer = new Featurizer(config);
    this.model = new RlsModel(featurizer.dimension(), modelSettings(config));
    this.featurizer.setListener(model);
    if (config.model().scope() == ModelScope.GLOBAL) {
      this.global = newGlobal(partition);
      this.model = global.view();
      this.featurizer.setListener(global);
    }
    this.metrics = new PrequentialMetrics(config.outputs().metricsHalfLifeRecords());
    this.drift = new DriftMonitor(config.drift());
    PipelineConfig.Model m = config.model();
    PipelineConfig.Clock c = in.clock();
    this.clock = new StreamClock(c.maxAheadMillis(), c.confirmRecords(), m.forgettingFactor(), m.forgettingHalfLifeMillis());
    this.targetSlot = config.targetSlot();
    this.targetScaling = new TargetScaling(config.targetScale());
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
      this.maxActualLagMillis = fc.maxActualLagMillis();
      this.corrections = fc.corrections();
      boolean replace = fc.maxLearnedActuals() > 0 && fc.corrections() == Correction.REPLACE;
      this.learned = fc.maxLearnedActuals() > 0 ? new LearnedActuals(fc.maxLearnedActuals(), fc.maxActualLagMillis(), replace) : null;
      if (replace) {
        this.bases = new ColumnBases(featurizer.dimension());
        this.settledKept = new PendingForecasts(fc.maxPending(), fc.maxActualLagMillis());
        featurizer.setListener(listener());
      } else {
        this.bases = null;
        this.settledKept = null;
      }
      long[] bounds = new long[fc.horizonBucketsMillis().size()];
      for (int i = 0; i < bounds.length; i++) {
        bounds[i] = fc.horizonBucketsMillis().get(i);
      }
      this.horizonMetrics = new HorizonMetrics(bounds, config.outputs().metricsHalfLifeRecords(), fc.maxMetricEntities());
    } else {
      this.pending = null;
      this.horizonMetrics = null;
      this.entitySlots = new int[0];
      this.targetTimeSlot = -1;
      this.maxActualLagMillis = Long.MAX_VALUE;
      this.learned = null;
      this.corrections = Correction.REJECT;
      this.bases = null;
      this.settledKept = null;
    }
  }

  /** A global model at its prior over the featurizer's columns. */
  private GlobalModel newGlobal(int partition) {
    String[] names = new String[featurizer.dimension()];
    for (int j = 0; j < names.length; j++) {
      names[j] = featurizer.columnName(j);
    }
    long h = config.model().forgettingHalfLifeMillis();
    return new GlobalModel(partition, names, modelSettings(config), h > 0 ? (double) h : Double.POSITIVE_INFINITY);
  }

  /** What the featurizer reports layout changes to: the model, through the column bases when they are kept. */
  private dev.runnel.core.layout.LayoutListener listener() {
    if (global != null) {
      return global; // corrections: replace is refused with the global scope (ConfigLoader)
    }
    if (bases == null) {
      return model;
    }
    bases.forwardTo(model);
    return bases;
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
   * Counts a record its source could not turn into a record at all (a value that is not of the
   * configured input format, e.g. bytes that are not Avro of the schema): a {@code reason} reject
   * with {@code detail}; nothing else changes.
   */
  public void processUnreadable(RejectReason reason, String detail, Sink sink) {
    reject(reason, detail, sink);
  }

  /**
   * Processes a record already decoded into {@link #record()} by the caller (used by tests and by
   * sources that are not JSON). Counts it as one record.
   */
  public void processRecord(long fallbackTimeMillis, long partition, long offset, Sink sink) {
    processDecoded(fallbackTimeMillis, partition, offset, sink);
  }

  /**
   * Processes the record in {@link #record()} (filled by the caller) as a forecast request issued
   * at {@code issueTimeMillis} for {@code targetTimeMillis}, whatever its own event time, target and
   * target-time fields say: the target is cleared, the event time set to the issue time. Scored and
   * remembered like any request; changes no other state. Used by the backtest to simulate a
   * forecast issued ahead of an actual (docs/backtesting.md, "Horizons").
   *
   * @param partition source partition copied into the prediction and the pending forecast
   * @param offset source offset copied likewise
   */
  public void processRequest(long issueTimeMillis, long targetTimeMillis, long partition, long offset, Sink sink) {
    record.setAbsent(targetSlot);
    if (config.input().eventTime().isPresent()) {
      record.setEventTimeMillis(issueTimeMillis);
    }
    requestTargetMillis = targetTimeMillis;
    hasRequestTarget = true;
    try {
      processDecoded(issueTimeMillis, partition, offset, sink);
    } finally {
      hasRequestTarget = false;
    }
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
    if (hasTarget && !targetScaling.identity && !targetScaling.accepts(record.number(targetSlot))) {
      reject(RejectReason.TARGET_OUT_OF_DOMAIN, "field " + config.target() + " (the target): "
          + record.number(targetSlot) + " is outside the target's domain; " + targetScaling.domain(), sink);
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
    if (hasRequestTarget) {
      target = requestTargetMillis;
    }
    // an actual with input.forecast: too late, a repeat, or a correction (docs/forecasting.md)
    int known = -1;
    if (hasTarget && pending != null) {
      long now = clock.nowMillis();
      // judged against a confirmed clock only: while it is provisional (a wrong first record dated
      // 2039), the records far behind it are the clock's to judge (time_jump until K agree)
      if (now != Long.MIN_VALUE && !clock.provisional() && now - target > maxActualLagMillis) {
        reject(RejectReason.ACTUAL_TOO_LATE, "target time " + java.time.Instant.ofEpochMilli(target) + " is "
            + java.time.Duration.ofMillis(now - target) + " behind the stream clock " + java.time.Instant.ofEpochMilli(now)
            + ", more than input.forecast.max_actual_lag (" + java.time.Duration.ofMillis(maxActualLagMillis) + ")", sink);
        return;
      }
      if (learned != null) {
        known = learned.find(entityKey, entityKeyLength, target, now);
        if (known >= 0) {
          double before = learned.value(known);
          double y = record.number(targetSlot);
          if (before == y) {
            reject(RejectReason.REPEATED_ACTUAL, "an actual for this entity and target time "
                + java.time.Instant.ofEpochMilli(target) + " was already learned with the same value " + y, sink);
            return;
          }
          if (corrections == Correction.REJECT) {
            reject(RejectReason.CORRECTED_ACTUAL, "an actual for this entity and target time "
                + java.time.Instant.ofEpochMilli(target) + " was already learned with the value " + before + ", not " + y
                + " (input.forecast.corrections: reject keeps the first; replace or learn_as_new take corrections)", sink);
            return;
          }
          if (corrections == Correction.REPLACE && !oldRowToday(known)) {
            reject(RejectReason.CORRECTED_ACTUAL, correctionDetail, sink);
            return;
          }
        }
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
        if (global != null) {
          global.restartFromPrior();
          model = global.view();
        } else {
          model = new RlsModel(featurizer.dimension(), modelSettings(config));
          featurizer.setListener(listener());
        }
        modelRestarts++;
        generation++;
      }
    }
    double y = hasTarget ? record.number(targetSlot) : Double.NaN;
    double replaced = Double.NaN;
    if (known >= 0 && corrections == Correction.REPLACE) {
      replaced = learned.value(known);
      if (!removeOld(known, sink)) {
        return;
      }
    }
    // the model learns, predicts and is checked for drift in its own scale (model.target_transform)
    double yModel = targetScaling.identity || !hasTarget ? y : targetScaling.forward(y);
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
      // after an "up" alarm with drift.reset_to_records: one update with a cut information, and
      // the noise estimate held while the model catches up (off by default: no change)
      boolean held = drift.noiseHeld();
      model.holdNoise(held);
      // the forgetting this update applies (the clock's, or a reset's cut): what corrections: replace decays by
      double lambda = drift.forgettingFor(clock.lambda(), model.effectiveSampleSize());
      if (global != null ? !global.update(row, yModel, lambda, aPriori) : !model.update(row, yModel, lambda, aPriori)) {
        reject(RejectReason.MODEL_REFUSED,
            "the update would have made the model's state non-finite; the model is unchanged", sink);
        return;
      }
      if (bases != null && lambda != 1.0) {
        logDecay += StrictMath.log(lambda);
      }
      if (held && drift.afterUpdate(warm ? sq(yModel - aPriori[1]) / (noiseBefore * noiseBefore * (1.0 + aPriori[0])) : Double.NaN)) {
        model.restartNoise(NOISE_RESTART_RECORDS);
      }
      if (warm) {
        p.predicted = aPriori[1];
        half = model.settings().intervalZ() * noiseBefore * Math.sqrt(1.0 + aPriori[0]);
      }
    } else if (warm) {
      // a forecast request: prediction and leverage from one forward substitution
      forecastRow(row, aPriori);
      p.predicted = aPriori[1];
      half = model.settings().intervalZ() * noiseBefore * Math.sqrt(1.0 + aPriori[0]);
    }
    double centre = p.predicted;
    if (Double.isNaN(half)) {
      p.low = Double.NaN;
      p.high = Double.NaN;
    } else if (targetScaling.identity) {
      p.low = p.predicted - half;
      p.high = p.predicted + half;
    } else {
      // back to the target's units: the transform is monotone, so the interval's ends are the
      // back-transformed ends (the same quantiles); the point is the median or the mean
      p.predicted = targetScaling.point(centre, half / model.settings().intervalZ());
      p.low = targetScaling.back(centre - half);
      p.high = targetScaling.back(centre + half);
    }
    records++;
    if (hasTarget) {
      trained++;
      if (drift.attribution().isOpen() || drift.breaks().enabled()) {
        observeRaw(yModel, t);
      }
      if (p.status == Prediction.Status.SCORED) {
        metrics.add(y - p.predicted, p.covered());
        // the a priori error and its predictive sd s·√(1 + xᵀPx) = half-width / z
        if (drift.observeError(yModel - centre, half / model.settings().intervalZ(), model.noiseSd(), t, trained)
            && drift.lastErrorAlarmUp()) {
          openAttribution();
        }
      }
    } else {
      forecasts++;
    }
    if (p.status == Prediction.Status.WARMING_UP) {
      warmingUp++;
    }
    if (hasTarget && learned != null) {
      remember(known, target, y);
    }
    if (pending != null) {
      if (hasTarget) {
        if (!Double.isNaN(replaced)) {
          resettle(target, y, replaced, partition, offset, sink);
        }
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

  /**
   * While the change attribution's window is open, and for the weight-break scan (kept all the
   * time when on): this record's row in raw units ({@code v = z·s + m} for a scaled column), O(p)
   * plus the attribution's and the scan's O(p²).
   */
  private void observeRaw(double y, long t) {
    int n = featurizer.dimension();
    if (rawRow.length < n) {
      rawRow = new double[Math.max(n, row.length)];
    }
    boolean constant = featurizer.hasConstantTerm();
    for (int j = 0; j < n; j++) {
      rawRow[j] = row[j] * featurizer.scale(j) + (constant ? featurizer.centre(j) : 0.0);
    }
    if (drift.attribution().isOpen()) {
      drift.observeTrained(rawRow, y, n, featurizer.layoutVersion(), t, trained);
    }
    drift.observeBreak(rawRow, y, n, featurizer.layoutVersion(), t, trained, columnNames);
  }

  /** The column names by index, for the weight-break scan's alarms (one object, made once). */
  private final java.util.function.IntFunction<String> columnNames = this::columnNameAt;

  private String columnNameAt(int j) { return featurizer.columnName(j); }

  /** Rare path (an error-level alarm fired): the raw-unit weights now open the attribution's window. */
  private void openAttribution() {
    if (!model.ready() || !drift.attribution().enabled()) {
      return;
    }
    int n = modelDimension();
    double[] w = new double[n];
    modelWeights(w);
    String[] names = new String[n];
    double[] raw = new double[n];
    boolean constant = featurizer.hasConstantTerm();
    double c = constant ? w[0] : 0.0;
    for (int j = 0; j < n; j++) {
      names[j] = featurizer.columnName(j);
      raw[j] = w[j] / featurizer.scale(j);
      if (constant && j > 0) {
        c -= w[j] * featurizer.centre(j) / featurizer.scale(j);
      }
    }
    if (constant) {
      raw[0] = c;
    }
    drift.openAttribution(names, raw, n, model.effectiveSampleSize(), featurizer.layoutVersion(), trained);
  }

  private static double sq(double v) { return v * v; }

  /**
   * Once per snapshot period: the weight alarms and baselines move on. The drift monitor gets the
   * columns' names, raw-unit weights and raw-unit standard errors, computed here the way
   * {@link Snapshot#of} computes them (same operations in the same order, so the same bits), into
   * arrays kept between periods; the snapshot itself (vocabularies, scalers, contrasts, forecasting
   * tables) is built only when the sink asks for it.
   */
  private void observeSnapshotForDrift() {
    int p = modelDimension();
    if (driftWeights.length < p) {
      driftWeights = new double[p];
      driftSe = new double[p];
      driftRaw = new double[p];
      driftRawSe = new double[p];
      driftNames = new String[p];
    }
    double[] w = driftWeights;
    double[] se = driftSe;
    modelWeights(w);
    modelStandardErrors(se);
    boolean ready = model.ready();
    boolean constant = featurizer.hasConstantTerm();
    double rawConstant = constant ? w[0] : Double.NaN;
    double rawConstantSe = Double.NaN;
    if (constant && ready) {
      double[] cov = modelCovariance();
      for (int j = 1; j < p; j++) {
        rawConstant -= w[j] * featurizer.centre(j) / featurizer.scale(j);
      }
      // q = c' cov c with c = (1, -m_1/s_1, ..., -m_{p-1}/s_{p-1}), summed as Snapshot.of sums it
      double q = 0.0;
      for (int i = 0; i < p; i++) {
        double s = 0.0;
        for (int j = 0; j < p; j++) {
          s += cov[i * p + j] * constantContrast(j);
        }
        q += constantContrast(i) * s;
      }
      rawConstantSe = model.residualSd() * Math.sqrt(Math.max(0.0, q));
    } // not ready: every raw weight is NaN below, the constant's too
    for (int j = 0; j < p; j++) {
      boolean isConstant = constant && j == 0;
      double sj = featurizer.scale(j);
      driftNames[j] = featurizer.columnName(j);
      driftRaw[j] = !ready ? Double.NaN : isConstant ? rawConstant : w[j] / sj;
      driftRawSe[j] = isConstant ? rawConstantSe : se[j] / sj;
    }
    drift.observeSnapshot(snapshotsTaken, snapshotTimeMillis(), trained, driftNames, driftRaw, driftRawSe, p);
    snapshotsTaken++;
  }

  /** Column j's coefficient in the raw-unit constant: 1 for the constant, {@code -m_j/s_j} for the others. */
  private double constantContrast(int j) {
    return j == 0 ? 1.0 : -featurizer.centre(j) / featurizer.scale(j);
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
    if (n == 0) {
      return;
    }
    int entity = horizonMetrics.entity(entityKey, entityKeyLength);
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
      s.correction = false;
      s.replacedActual = Double.NaN;
      horizonMetrics.add(entity, s.horizonMillis(), s.error(), s.covered());
      sink.settled(s, record);
    }
    if (settledKept != null) {
      // kept until their target time is max_actual_lag behind the clock, to be settled again by a correction
      for (int i = 0; i < n; i++) {
        settledKept.add(entityKey, entityKeyLength, target, pending.takenIssueMillis(i), pending.takenForecast(i),
            pending.takenLow(i), pending.takenHigh(i), pending.takenPartition(i), pending.takenOffset(i), clock.nowMillis());
      }
    }
  }

  /**
   * A correction under {@code corrections: replace}: every forecast settled earlier by the replaced
   * actual is settled again, against the corrected one, marked as a correction; they stay kept
   * for a later correction.
   */
  private void resettle(long target, double actual, double replacedActual, long partition, long offset, Sink sink) {
    int n = settledKept.take(entityKey, entityKeyLength, target, clock.nowMillis());
    if (keptLongs.length < 3 * n) {
      keptLongs = new long[3 * n];
      keptDoubles = new double[3 * n];
    }
    SettledForecast s = settledForecast;
    for (int i = 0; i < n; i++) {
      // copied out: the entries taken are reused by the next add
      keptLongs[3 * i] = settledKept.takenIssueMillis(i);
      keptLongs[3 * i + 1] = settledKept.takenPartition(i);
      keptLongs[3 * i + 2] = settledKept.takenOffset(i);
      keptDoubles[3 * i] = settledKept.takenForecast(i);
      keptDoubles[3 * i + 1] = settledKept.takenLow(i);
      keptDoubles[3 * i + 2] = settledKept.takenHigh(i);
    }
    for (int i = 0; i < n; i++) {
      s.issueTimeMillis = keptLongs[3 * i];
      s.targetTimeMillis = target;
      s.forecast = keptDoubles[3 * i];
      s.low = keptDoubles[3 * i + 1];
      s.high = keptDoubles[3 * i + 2];
      s.actual = actual;
      s.requestPartition = keptLongs[3 * i + 1];
      s.requestOffset = keptLongs[3 * i + 2];
      s.actualPartition = partition;
      s.actualOffset = offset;
      s.correction = true;
      s.replacedActual = replacedActual;
      sink.settled(s, record);
      resettledForecasts++;
    }
    for (int i = 0; i < n; i++) {
      settledKept.add(entityKey, entityKeyLength, target, keptLongs[3 * i], keptDoubles[3 * i], keptDoubles[3 * i + 1],
          keptDoubles[3 * i + 2], keptLongs[3 * i + 1], keptLongs[3 * i + 2], clock.nowMillis());
    }
  }

  /**
   * Writes the observation learned for entry {@code e} in today's layout into {@link #oldRow}
   * (corrections: replace). False, with {@link #correctionDetail} saying why, when a column it used
   * has been removed since (its information was marginalized, so it cannot be taken out exactly).
   */
  private boolean oldRowToday(int e) {
    int d = featurizer.dimension();
    if (oldRow.length < d) {
      oldRow = new double[Math.max(d, oldRow.length * 2)];
    }
    Arrays.fill(oldRow, 0, d, 0.0);
    if (learned.generation(e) != generation) {
      return true; // the model restarted since: nothing of the old observation is left in it
    }
    for (int i = 0; i < learned.rowLength(e); i++) {
      int j = bases.indexOf(learned.rowId(e, i));
      if (j < 0) {
        correctionDetail = "an actual for this entity and target time was already learned with the value " + learned.value(e)
            + ", and a column its row used has expired since, so its information cannot be removed exactly;"
            + " the first value stays (input.forecast.corrections: replace)";
        return false;
      }
      oldRow[j] = bases.toToday(j, learned.rowValue(e, i));
    }
    return true;
  }

  /** Removes the observation learned for entry {@code e} from the model (its row in {@link #oldRow}). */
  private boolean removeOld(int e, Sink sink) {
    if (learned.generation(e) != generation) {
      replacedActuals++;
      return true; // forgotten entirely by the restart
    }
    double w = StrictMath.exp(logDecay - learned.logDecay(e));
    // the memory keeps the value as it came; the model learned it in its own scale (model.target_transform)
    double old = targetScaling.identity ? learned.value(e) : targetScaling.forward(learned.value(e));
    if (w > 0.0 && !model.downdate(oldRow, old, Math.min(1.0, w))) {
      reject(RejectReason.CORRECTED_ACTUAL, "an actual for this entity and target time was already learned with the value "
          + learned.value(e) + ", and the model could not remove it exactly (too little information left beside it);"
          + " the first value stays (input.forecast.corrections: replace)", sink);
      return false;
    }
    replacedActuals++;
    return true;
  }

  /** After an actual was learned: its key and value go into the memory (with its row for replace). */
  private void remember(int known, long target, double y) {
    int e = known;
    if (e < 0) {
      e = learned.add(entityKey, entityKeyLength, target, y, clock.nowMillis());
    } else {
      learned.setValue(e, y);
    }
    if (bases != null) {
      learned.keepRow(e, row, featurizer.dimension(), bases, logDecay, generation);
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

  /** The model's prediction and leverage for a row in the layout (element 0 leverage, element 1 prediction). */
  void forecastRow(double[] x, double[] out) {
    if (global != null) {
      global.forecast(x, out);
    } else {
      model.forecast(x, out);
    }
  }

  /** The number of weights snapshots show: the layout's columns (with the global scope, the view may hold more). */
  int modelDimension() {
    return global != null ? global.localDimension() : model.dimension();
  }

  /** The weights of the layout's columns. @param w receives {@link #modelDimension()} weights. Modified. */
  void modelWeights(double[] w) {
    if (global != null) {
      global.localWeights(w);
    } else {
      model.weights(w);
    }
  }

  /** The standard errors of the layout's columns. @param se receives them. Modified. */
  void modelStandardErrors(double[] se) {
    if (global != null) {
      global.localStandardErrors(se);
    } else {
      model.standardErrors(se);
    }
  }

  /** The unscaled covariance of the layout's columns' weights, row-major (a new array). */
  double[] modelCovariance() {
    return global != null ? global.localUnscaledCovariance() : model.unscaledCovariance();
  }

  // ------------------------------------------------------------------ one model across partitions

  /** The shared model with {@code model.scope: global}, else null (read only between records). */
  public GlobalModel globalModel() { return global; }

  /**
   * With {@code model.scope: global}, after a record: the share of what this partition's records
   * contributed since its last share, when one is due ({@code model.share_every_records} own
   * trained records since the last, or the clock in a new {@code model.share_every} period), else
   * null. Publish it in the same transaction as the checkpoint taken after this call.
   *
   * @return the share, or null when none is due (always null for a model per partition)
   */
  public ModelShare shareIfDue() {
    if (global == null || trained == trainedAtLastShare || clock.nowMillis() == Long.MIN_VALUE) {
      return null;
    }
    PipelineConfig.Model m = config.model();
    boolean due = m.shareEveryRecords() > 0 && trained - trainedAtLastShare >= m.shareEveryRecords();
    long period = m.shareEveryMillis() > 0 ? Math.floorDiv(clock.nowMillis(), m.shareEveryMillis()) : Long.MIN_VALUE;
    if (m.shareEveryMillis() > 0 && period != periodOfLastShare) {
      due |= periodOfLastShare != Long.MIN_VALUE;
      if (periodOfLastShare == Long.MIN_VALUE) {
        periodOfLastShare = period; // the first period starts with the first record
      }
    }
    return due ? shareNow() : null;
  }

  /**
   * With {@code model.scope: global}: the share of everything this partition's records contributed
   * since its last share, now (a sync point), or null when it has learned nothing since.
   */
  public ModelShare shareNow() {
    if (global == null || trained == trainedAtLastShare || clock.nowMillis() == Long.MIN_VALUE) {
      return null;
    }
    trainedAtLastShare = trained;
    if (config.model().shareEveryMillis() > 0) {
      periodOfLastShare = Math.floorDiv(clock.nowMillis(), config.model().shareEveryMillis());
    }
    sharesMade++;
    return global.share(clock.nowMillis());
  }

  /**
   * With {@code model.scope: global}: folds another partition's share into this partition's view
   * at the stream clock's time.
   *
   * @param s the share. Not modified.
   * @return what the fold did, or null (nothing changed) when the clock has no time yet: a share
   *     decays from its time to the receiver's clock, which starts with the first training record,
   *     so it is folded after that
   * @throws IllegalArgumentException as {@link GlobalModel#fold}, or if the scope is not global
   */
  public GlobalModel.FoldResult fold(ModelShare s) {
    if (global == null) {
      throw new IllegalArgumentException("a share can be folded only with model.scope: global");
    }
    if (clock.nowMillis() == Long.MIN_VALUE && config.model().forgetsByTime()) {
      return null;
    }
    long now = clock.nowMillis() == Long.MIN_VALUE ? s.eventTimeMillis() : clock.nowMillis();
    GlobalModel.FoldResult r = global.fold(s, now);
    if (r == GlobalModel.FoldResult.FOLDED) {
      sharesFolded++;
    }
    return r;
  }

  /**
   * The runner's bookkeeping of the share topic, kept in the checkpoint: the offset to read next in
   * share partition {@code sharePartition}, 0 when none is recorded.
   */
  public long shareOffset(int sharePartition) {
    Long v = shareOffsets.get(sharePartition);
    return v == null ? 0L : v;
  }

  /** Records the offset to read next in a share partition (see {@link #shareOffset}). */
  public void shareOffset(int sharePartition, long next) {
    shareOffsets.put(sharePartition, next);
  }

  /** The input partition this step was made for (the source its shares carry). */
  public int partitionOfShares() { return partitionNumber; }

  /** Shares this step made (since its state began). */
  public long sharesMade() { return sharesMade; }

  /** Shares of other partitions folded into the view (since its state began). */
  public long sharesFolded() { return sharesFolded; }

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

  /** Keys (entity, target time) remembered as learned now (0 without the memory). */
  public int learnedActuals() { return learned != null ? learned.size() : 0; }

  /** Learned keys forgotten by {@code input.forecast.max_learned_actuals} while an actual for them could still come. */
  public long learnedActualsForgottenEarly() { return learned != null ? learned.forgottenEarly() : 0; }

  /** Actuals whose earlier value was removed from the model and replaced ({@code corrections: replace}). */
  public long replacedActuals() { return replacedActuals; }

  /** Settled forecasts published again against a corrected actual ({@code corrections: replace}). */
  public long resettledForecasts() { return resettledForecasts; }

  /** The settled forecasts' errors by horizon bucket, or null without {@code input.forecast}. */
  HorizonMetrics horizonMetrics() { return horizonMetrics; }

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
      boolean v9 = global != null || drift.hasBreakState();
      boolean v7 = v9 || featurizer.readsHistory() || drift.hasAttributionState();
      out.writeInt(global != null ? CHECKPOINT_VERSION_GLOBAL : v9 ? CHECKPOINT_VERSION
          : featurizer.readsHistory() ? CHECKPOINT_VERSION_WITH_HISTORY
          : v7 ? CHECKPOINT_VERSION_WITH_ATTRIBUTION
          : pending != null ? CHECKPOINT_VERSION_WITH_FORECASTS : CHECKPOINT_VERSION_WITHOUT_FORECASTS);
      out.writeLong(configFingerprint);
      out.writeLong(records);
      out.writeLong(trained);
      out.writeLong(forecasts);
      out.writeLong(warmingUp);
      out.writeLong(rejected);
      // the counters of the first reasons always, later ones only once counted (so a checkpoint
      // that never met a newer reason keeps the bytes it had before that reason existed)
      int counted = LEGACY_REJECT_COUNTS;
      for (int i = rejectCounts.length - 1; i >= counted; i--) {
        if (rejectCounts[i] != 0) {
          counted = i + 1;
          break;
        }
      }
      out.writeInt(counted);
      for (int i = 0; i < counted; i++) {
        out.writeLong(rejectCounts[i]);
      }
      out.writeLong(trainedAtLastSnapshot);
      out.writeLong(periodOfLastSnapshot);
      clock.writeTo(out);
      metrics.writeTo(out);
      featurizer.writeTo(out);
      if (global != null) {
        global.writeTo(out);
      } else {
        model.writeTo(out);
      }
      out.writeLong(snapshotsTaken);
      drift.writeTo(out);
      if (v7) {
        out.writeBoolean(pending != null);
      }
      if (pending != null) {
        pending.writeTo(out);
        out.writeBoolean(learned != null);
        if (learned != null) {
          learned.writeTo(out);
        }
        out.writeBoolean(bases != null);
        if (bases != null) {
          bases.writeTo(out);
          out.writeDouble(logDecay);
          out.writeLong(generation);
          out.writeLong(replacedActuals);
          out.writeLong(resettledForecasts);
          settledKept.writeTo(out);
        }
        horizonMetrics.writeTo(out);
      }
      if (v7) {
        drift.writeAttributionTo(out);
      }
      if (v9) {
        drift.writeBreakTo(out);
      }
      if (global != null) {
        out.writeLong(trainedAtLastShare);
        out.writeLong(periodOfLastShare);
        out.writeLong(sharesMade);
        out.writeLong(sharesFolded);
        out.writeInt(shareOffsets.size());
        for (java.util.Map.Entry<Integer, Long> e : shareOffsets.entrySet()) {
          out.writeInt(e.getKey());
          out.writeLong(e.getValue());
        }
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
   * versions 1 to 3 (before forecasts were remembered) restore with no forecast pending; versions 1
   * to 4 (before the memory of learned actuals) restore with an empty memory; versions 1 to 5 (before
   * errors by horizon) restore with empty horizon tables; versions 1 to 8 (before the weight-break
   * scan) restore with the scan empty (it starts summing afresh). A version 6 checkpoint whose
   * {@code input.forecast.horizon_buckets} differ from the configured ones restores with empty
   * horizon tables (the rest of the state as written).
   *
   * @throws IllegalArgumentException if the bytes are not a checkpoint, are of an unknown version,
   *     or were written under a configuration whose features or model differ
   * @throws IllegalStateException if this step has already learned from a record (refused before
   *     anything changes)
   */
  public void restore(byte[] checkpoint) {
    if (!featurizer.isFresh()) {
      // refused before anything is read, so a refused restore leaves this step as it was
      throw new IllegalStateException("restore needs a fresh pipeline step; this one has learned from "
          + featurizer.trainingRecords() + " records");
    }
    try {
      DataInputStream in = new DataInputStream(new ByteArrayInputStream(checkpoint));
      if (in.readInt() != CHECKPOINT_MAGIC) {
        throw new IllegalArgumentException("not a Runnel pipeline checkpoint");
      }
      int version = in.readInt();
      if (version < 1 || version > CHECKPOINT_VERSION_GLOBAL) {
        throw new IllegalArgumentException("checkpoint format version " + version
            + " is not supported; this Runnel reads versions 1 to " + CHECKPOINT_VERSION_GLOBAL);
      }
      if ((version == CHECKPOINT_VERSION_GLOBAL) != (global != null)) {
        throw new IllegalArgumentException("the checkpoint was written with model.scope: "
            + (version == CHECKPOINT_VERSION_GLOBAL ? "global" : "partition") + "; keep that scope, or start a new pipeline"
            + " name (or reset its state) to change it");
      }
      if (featurizer.readsHistory() && version < CHECKPOINT_VERSION_WITH_HISTORY) {
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
      Arrays.fill(rejectCounts, 0L);
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
      if (global != null) {
        global = GlobalModel.readFrom(in);
        model = global.view();
      } else {
        model = RlsModel.readFrom(in);
      }
      featurizer.setListener(listener());
      if (version >= 2) {
        snapshotsTaken = in.readLong();
        drift.readFrom(in);
      }
      boolean hasPending = (version >= 4 && version <= 6) || (version >= 7 && in.readBoolean());
      if (hasPending) {
        if (pending == null) {
          throw new IllegalArgumentException("the checkpoint holds pending forecasts (it was written with input.forecast);"
              + " keep input.forecast in the configuration, or start a new pipeline name (or reset its state) without it");
        }
        pending.readFrom(in);
      } else if (pending != null) {
        pending.clear();
      }
      boolean fromPending = hasPending;
      if (pending != null) {
        readLearned(fromPending ? version : 3, in);
        if (fromPending && version >= 6) {
          horizonMetrics.readFrom(in);
        } else {
          horizonMetrics.clearAll();
        }
      }
      drift.readAttributionFrom(version >= 7 ? in : null);
      drift.readBreakFrom(version >= 9 ? in : null);
      shareOffsets.clear();
      if (global != null) {
        trainedAtLastShare = in.readLong();
        periodOfLastShare = in.readLong();
        sharesMade = in.readLong();
        sharesFolded = in.readLong();
        int n2 = in.readInt();
        if (n2 < 0 || n2 > 1_000_000) {
          throw new IOException("corrupt share offsets: " + n2 + " share partitions");
        }
        for (int i = 0; i < n2; i++) {
          shareOffsets.put(in.readInt(), in.readLong());
        }
      }
      ensureRow();
    } catch (IOException e) {
      throw new IllegalArgumentException("the checkpoint is truncated or corrupt: " + e.getMessage(), e);
    }
  }

  /**
   * The memory of learned actuals (version 5; before it, empty): refused when the checkpoint was
   * written with a memory of another kind than the configuration asks for.
   */
  private void readLearned(int version, DataInputStream in) throws IOException {
    logDecay = 0.0;
    generation = 0;
    replacedActuals = 0;
    resettledForecasts = 0;
    if (learned != null) {
      learned.clear();
    }
    if (settledKept != null) {
      settledKept.clear();
    }
    if (bases != null) {
      // before version 5 the columns had no ids: number them afresh from today's layout
      ColumnBases fresh = new ColumnBases(featurizer.dimension());
      java.io.ByteArrayOutputStream b = new java.io.ByteArrayOutputStream();
      fresh.writeTo(new DataOutputStream(b));
      bases.readFrom(new DataInputStream(new ByteArrayInputStream(b.toByteArray())), featurizer.dimension());
    }
    if (version < 5) {
      return;
    }
    boolean hasLearned = in.readBoolean();
    if (hasLearned != (learned != null)) {
      throw new IllegalArgumentException("the checkpoint was written " + (hasLearned ? "with" : "without")
          + " a memory of learned actuals (input.forecast.max_learned_actuals); keep that setting, or start a new pipeline name (or reset its state)");
    }
    if (learned != null) {
      learned.readFrom(in);
    }
    boolean hasBases = in.readBoolean();
    if (hasBases != (bases != null)) {
      throw new IllegalArgumentException("the checkpoint was written " + (hasBases ? "with" : "without")
          + " input.forecast.corrections: replace; keep that setting, or start a new pipeline name (or reset its state)");
    }
    if (bases != null) {
      bases.readFrom(in, featurizer.dimension());
      logDecay = in.readDouble();
      generation = in.readLong();
      replacedActuals = in.readLong();
      resettledForecasts = in.readLong();
      settledKept.readFrom(in);
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
    if (!c.targetScale().isNone()) {
      text += "|" + c.targetScale(); // absent by default, so a checkpoint's fingerprint is as before
    }
    byte[] b = text.getBytes(StandardCharsets.UTF_8);
    long h = 0xcbf29ce484222325L;
    for (byte x : b) {
      h ^= (x & 0xff);
      h *= 0x100000001b3L;
    }
    return h;
  }
}
