package dev.runnel.core.config;

import dev.runnel.core.record.RecordLimits;
import dev.runnel.core.record.RecordSchema;
import dev.runnel.core.record.TimeFormat;
import java.time.ZoneId;
import java.util.List;
import java.util.Map;
import java.util.Optional;

/**
 * A whole, checked pipeline configuration. Immutable. Built by {@link ConfigLoader}.
 *
 * @param name pipeline name; output topics are {@code <name>.predictions} etc.
 * @param sourceName where the configuration came from (a file name), for messages
 * @param drift the {@code drift} section: weight and error-level alarms
 * @param warnings what the loader found probably unintended (a key left out whose default is
 *     surprising, a former key name), in the order found; the commands print them at start
 * @param targetScale the scale the model learns the target in ({@code model.target_transform},
 *     {@code target_point}, {@code target_non_negative}); {@link TargetScale#NONE} by default
 */
public record PipelineConfig(String name, Input input, String target, List<FeatureConfig> features, Model model,
                             Outputs outputs, Kafka kafka, Web web, String sourceName, Drift drift,
                             List<ConfigWarning> warnings, TargetScale targetScale) {

  /** Copies the lists. */
  public PipelineConfig {
    features = List.copyOf(features);
    warnings = List.copyOf(warnings);
    java.util.Objects.requireNonNull(targetScale, "targetScale");
  }

  /** A configuration whose model learns the target as it is. */
  public PipelineConfig(String name, Input input, String target, List<FeatureConfig> features, Model model,
                        Outputs outputs, Kafka kafka, Web web, String sourceName, Drift drift,
                        List<ConfigWarning> warnings) {
    this(name, input, target, features, model, outputs, kafka, web, sourceName, drift, warnings, TargetScale.NONE);
  }

  /** A configuration with no warnings. */
  public PipelineConfig(String name, Input input, String target, List<FeatureConfig> features, Model model,
                        Outputs outputs, Kafka kafka, Web web, String sourceName, Drift drift) {
    this(name, input, target, features, model, outputs, kafka, web, sourceName, drift, List.of());
  }

  /** A configuration with the default {@code drift} section. */
  public PipelineConfig(String name, Input input, String target, List<FeatureConfig> features, Model model,
                        Outputs outputs, Kafka kafka, Web web, String sourceName) {
    this(name, input, target, features, model, outputs, kafka, web, sourceName, Drift.DEFAULTS);
  }

  /**
   * The same configuration under another pipeline name and input topic (a demo run, a test, a
   * second pipeline on the same features). The name is not re-checked here; {@link ConfigLoader}
   * checks names read from files.
   */
  public PipelineConfig withNameAndTopic(String newName, String newTopic) {
    return new PipelineConfig(newName,
        new Input(Optional.of(newTopic), input.schema(), input.eventTime(), input.timeZone(), input.limits(), input.clock(), input.forecast(),
            input.encoding()),
        target, features, model, outputs, kafka, web, sourceName, drift, warnings, targetScale);
  }

  /** The slot of the target field in {@code input().schema()}. */
  public int targetSlot() { return input.schema().slot(target); }

  /**
   * The {@code input} section.
   *
   * @param topic the input topic, if given
   * @param eventTime where the event time is read, if anywhere
   * @param timeZone zone for calendar features
   * @param clock {@code input.clock}: the event-time policy
   * @param forecast {@code input.forecast}: the entity and target time of forecasts, and the bounds
   *     of the pending forecasts ({@link Forecast#NONE} when absent: target time = event time)
   * @param encoding {@code input.format} and {@code input.avro_schema_file}: how the input topic's
   *     record values are encoded ({@link Encoding#JSON} by default)
   */
  public record Input(Optional<String> topic, RecordSchema schema, Optional<EventTime> eventTime, ZoneId timeZone,
                      RecordLimits limits, Clock clock, Forecast forecast, Encoding encoding) {
    public Input {
      java.util.Objects.requireNonNull(encoding, "encoding");
    }

    /** A JSON input. */
    public Input(Optional<String> topic, RecordSchema schema, Optional<EventTime> eventTime, ZoneId timeZone,
                 RecordLimits limits, Clock clock, Forecast forecast) {
      this(topic, schema, eventTime, timeZone, limits, clock, forecast, Encoding.JSON);
    }
    /** An input without {@code input.forecast}. */
    public Input(Optional<String> topic, RecordSchema schema, Optional<EventTime> eventTime, ZoneId timeZone,
                 RecordLimits limits, Clock clock) {
      this(topic, schema, eventTime, timeZone, limits, clock, Forecast.NONE);
    }

    /** An input with the default {@code input.clock}. */
    public Input(Optional<String> topic, RecordSchema schema, Optional<EventTime> eventTime, ZoneId timeZone,
                 RecordLimits limits) {
      this(topic, schema, eventTime, timeZone, limits, Clock.DEFAULTS);
    }
  }

  /** {@code input.format}: how the input topic's record values are encoded (docs/operations.md, "Input formats"). */
  public enum InputFormat {
    /** One JSON object a record value. */
    JSON("json"),
    /** Plain Avro binary of the schema in {@code input.avro_schema_file}. */
    AVRO("avro"),
    /** One byte 0, a 4-byte big-endian schema id, then the Avro binary (the common registry framing). */
    AVRO_FRAMED("avro_framed");

    private final String word;

    InputFormat(String word) { this.word = word; }

    /** The configuration word. */
    public String word() { return word; }
  }

  /** {@code outputs.encoding}: how predictions, settled forecasts and rejects are written (docs/formats.md). */
  public enum OutputEncoding {
    /** One JSON object a record (the default). */
    JSON("json"),
    /** Avro binary of the published writer schemas, the schema's fingerprint in a header. */
    AVRO("avro");

    private final String word;

    OutputEncoding(String word) { this.word = word; }

    /** The configuration word. */
    public String word() { return word; }
  }

  /**
   * How the input topic's record values are encoded.
   *
   * @param format {@code input.format}
   * @param avroSchemaFile {@code input.avro_schema_file}: the Avro schema (JSON) the values were written
   *     with; empty for JSON
   */
  public record Encoding(InputFormat format, String avroSchemaFile) {
    /** JSON values, no schema file. */
    public static final Encoding JSON = new Encoding(InputFormat.JSON, "");
  }

  /**
   * {@code input.clock}: how far a training record may jump ahead of the stream clock, and how
   * many consecutive agreeing records confirm a larger jump (docs/model.md, "The stream clock").
   *
   * @param maxAheadMillis {@code max_ahead}, at least 1 ms
   * @param confirmRecords {@code confirm_records}, at least 1
   */
  public record Clock(long maxAheadMillis, int confirmRecords) {
    /** The defaults: one day ahead, three records to confirm a jump. */
    public static final Clock DEFAULTS = new Clock(86_400_000L, 3);
  }

  /**
   * {@code input.forecast}: which fields identify the entity a forecast is for, which field holds
   * the target time (the time whose value is forecast, as distinct from the event time, when the
   * record was issued or arrived), and the bounds of the pending forecasts (docs/forecasting.md).
   *
   * @param entityFields {@code entity_fields}: declared text fields, at least one when enabled; empty when absent
   * @param targetTimeField {@code target_time_field}: a declared time field; null when absent
   * @param maxPending {@code max_pending}: most forecasts remembered until their actual arrives
   * @param maxActualDelayMillis {@code max_actual_delay}: how long past its target time a forecast waits for its actual
   * @param maxActualLagMillis {@code max_actual_lag}: an actual whose target time is further than this behind
   *     the stream clock is rejected ({@code actual_too_late}); at least {@code maxActualDelayMillis}
   * @param maxLearnedActuals {@code max_learned_actuals}: most (entity, target time) keys remembered as
   *     learned, to reject a repeated actual and to find a correction; 0: none (every actual is learned)
   * @param corrections {@code corrections}: what a second actual with a different value does
   * @param horizonBucketsMillis {@code horizon_buckets}: the upper bounds of the horizon buckets of the
   *     settled-forecast metrics, in milliseconds, strictly increasing, each at least 1 ms (a last,
   *     open bucket holds the horizons beyond the largest)
   * @param maxMetricEntities {@code max_metric_entities}: most entities with their own per-horizon
   *     metrics (0: the overall table only)
   */
  public record Forecast(List<String> entityFields, String targetTimeField, int maxPending, long maxActualDelayMillis,
                         long maxActualLagMillis, int maxLearnedActuals, Correction corrections,
                         List<Long> horizonBucketsMillis, int maxMetricEntities) {
    /** The defaults of the bounds. */
    public static final int DEFAULT_MAX_PENDING = 100_000;
    public static final long DEFAULT_MAX_ACTUAL_DELAY_MILLIS = 7 * 86_400_000L;
    public static final int DEFAULT_MAX_LEARNED_ACTUALS = 100_000;
    public static final Correction DEFAULT_CORRECTIONS = Correction.REJECT;
    /** The default horizon buckets: up to 1 hour, 6 hours, 1 day, 7 days (and beyond). */
    public static final List<Long> DEFAULT_HORIZON_BUCKETS_MILLIS = List.of(3_600_000L, 21_600_000L, 86_400_000L, 604_800_000L);
    /** The default of {@code max_metric_entities}. */
    public static final int DEFAULT_MAX_METRIC_ENTITIES = 100;
    /** Most horizon buckets a configuration may list. */
    public static final int MAX_HORIZON_BUCKETS = 16;
    /** No {@code input.forecast}: the target time is the event time and nothing is remembered. */
    public static final Forecast NONE = new Forecast(List.of(), null, DEFAULT_MAX_PENDING, DEFAULT_MAX_ACTUAL_DELAY_MILLIS,
        DEFAULT_MAX_ACTUAL_DELAY_MILLIS, DEFAULT_MAX_LEARNED_ACTUALS, DEFAULT_CORRECTIONS, DEFAULT_HORIZON_BUCKETS_MILLIS,
        DEFAULT_MAX_METRIC_ENTITIES);

    /** Copies the lists. */
    public Forecast {
      entityFields = List.copyOf(entityFields);
      horizonBucketsMillis = List.copyOf(horizonBucketsMillis);
    }

    /** With the defaults of everything after the two bounds. */
    public Forecast(List<String> entityFields, String targetTimeField, int maxPending, long maxActualDelayMillis) {
      this(entityFields, targetTimeField, maxPending, maxActualDelayMillis, maxActualDelayMillis, DEFAULT_MAX_LEARNED_ACTUALS,
          DEFAULT_CORRECTIONS, DEFAULT_HORIZON_BUCKETS_MILLIS, DEFAULT_MAX_METRIC_ENTITIES);
    }

    /** Whether {@code input.forecast} is given. */
    public boolean enabled() { return targetTimeField != null; }
  }

  /** {@code input.event_time}: the field that holds the event time and its format. */
  public record EventTime(String field, TimeFormat format) { }

  /**
   * The {@code model} section.
   *
   * @param priorVariance prior variance of each weight in standardized units; {@code +Infinity} for
   *     {@code prior_variance: no_prior}
   * @param diffuse no prior ({@code prior_variance: no_prior}): weights are reported once the
   *     information is full rank
   * @param windupGuard key {@code model.forget_towards_prior} (formerly {@code windup_guard}): forgetting
   *     pulls each weight's information back towards the prior, so unseen columns' variance stays
   *     bounded (the component keeps its old name: a checkpoint's configuration fingerprint is
   *     computed from this record's text)
   * @param forgettingFactor per-record factor in (0, 1]; 1 when a half-life is used instead
   * @param forgettingHalfLifeMillis event-time half-life of the data's weight; 0 when the factor is used
   * @param noiseHalfLifeRecords fading window of the noise-variance estimate, in records
   * @param scope key {@code model.scope}: a model per partition, or one across partitions
   * @param shareEveryRecords key {@code model.share_every_records}: with the global scope, a partition
   *     shares after this many of its own trained records (0: not by count)
   * @param shareEveryMillis key {@code model.share_every}: with the global scope, a partition shares
   *     when its stream clock enters a new period of this length (0: not by event time)
   */
  public record Model(boolean constantTerm, double priorVariance, boolean diffuse, double forgettingFactor,
                      long forgettingHalfLifeMillis, boolean windupGuard, double intervalLevel,
                      double noiseHalfLifeRecords, ModelScope scope, long shareEveryRecords, long shareEveryMillis) {
    /** The default share periods ({@code model.share_every_records}, no {@code model.share_every}). */
    public Model(boolean constantTerm, double priorVariance, boolean diffuse, double forgettingFactor,
                 long forgettingHalfLifeMillis, boolean windupGuard, double intervalLevel, double noiseHalfLifeRecords,
                 ModelScope scope) {
      this(constantTerm, priorVariance, diffuse, forgettingFactor, forgettingHalfLifeMillis, windupGuard, intervalLevel,
          noiseHalfLifeRecords, scope, ConfigKeys.SHARE_EVERY_RECORDS.defaultValue(), 0L);
    }

    /** A model per partition (the default scope). */
    public Model(boolean constantTerm, double priorVariance, boolean diffuse, double forgettingFactor,
                 long forgettingHalfLifeMillis, boolean windupGuard, double intervalLevel, double noiseHalfLifeRecords) {
      this(constantTerm, priorVariance, diffuse, forgettingFactor, forgettingHalfLifeMillis, windupGuard, intervalLevel,
          noiseHalfLifeRecords, ModelScope.PARTITION);
    }

    /** Whether forgetting is by event time rather than per record. */
    public boolean forgetsByTime() { return forgettingHalfLifeMillis > 0; }

    /**
     * The text a record of the eight components before {@code scope} would have, followed by the
     * scope only when it is not the default: the checkpoint's configuration fingerprint is
     * computed from this text, so checkpoints of a model per partition keep theirs
     * ({@code ConfigLoaderTest} compares it with such a record's own text).
     */
    @Override
    public String toString() {
      return "Model[constantTerm=" + constantTerm + ", priorVariance=" + priorVariance + ", diffuse=" + diffuse
          + ", forgettingFactor=" + forgettingFactor + ", forgettingHalfLifeMillis=" + forgettingHalfLifeMillis
          + ", windupGuard=" + windupGuard + ", intervalLevel=" + intervalLevel + ", noiseHalfLifeRecords="
          + noiseHalfLifeRecords + (scope == ModelScope.PARTITION ? "" : ", scope=" + scope.word()) + "]";
    }
  }

  /**
   * How the model sees the target (keys {@code model.target_transform}, {@code model.target_point},
   * {@code model.target_non_negative}; docs/model.md, "Transformed target").
   *
   * @param transform the scale the model learns in
   * @param point which point of the back-transformed predictive distribution is published
   * @param nonNegative the target is never below 0: a negative target is rejected, and the
   *     published prediction and interval are never below 0
   */
  public record TargetScale(TargetTransform transform, TargetPoint point, boolean nonNegative) {
    /** The target as it is, the median, no bound: the behaviour before these keys. */
    public static final TargetScale NONE = new TargetScale(TargetTransform.NONE, TargetPoint.MEDIAN, false);

    /** Whether this is {@link #NONE}. */
    public boolean isNone() { return equals(NONE); }
  }

  /**
   * The {@code outputs} section.
   *
   * @param snapshotEveryRecords a coefficient snapshot every this many training records; 0 = off
   * @param snapshotEveryMillis a snapshot every this much event time; 0 = off
   * @param metricsHalfLifeRecords fading window of the prequential metrics, in records
   * @param echoFields {@code echo_fields}: the declared text and flag fields echoed under a prediction's
   *     {@code fields}, in this order; empty = none (the default)
   * @param significantDigits {@code significant_digits}: 0 = every prediction number exact (shortest
   *     decimal that reads back as the same double); 1..15 = predicted, low, high and error rounded to
   *     that many significant digits
   * @param encoding {@code encoding}: how predictions, settled forecasts and rejects are written (snapshots
   *     and checkpoints do not change)
   */
  public record Outputs(long snapshotEveryRecords, long snapshotEveryMillis, double metricsHalfLifeRecords,
      List<String> echoFields, int significantDigits, OutputEncoding encoding) {
    public Outputs {
      echoFields = List.copyOf(echoFields);
      java.util.Objects.requireNonNull(encoding, "encoding");
    }

    /** JSON outputs (the default encoding). */
    public Outputs(long snapshotEveryRecords, long snapshotEveryMillis, double metricsHalfLifeRecords,
        List<String> echoFields, int significantDigits) {
      this(snapshotEveryRecords, snapshotEveryMillis, metricsHalfLifeRecords, echoFields, significantDigits, OutputEncoding.JSON);
    }

    /** The same outputs in another encoding. */
    public Outputs withEncoding(OutputEncoding e) {
      return new Outputs(snapshotEveryRecords, snapshotEveryMillis, metricsHalfLifeRecords, echoFields, significantDigits, e);
    }

    /** The defaults of the newer keys: nothing echoed, exact numbers. */
    public Outputs(long snapshotEveryRecords, long snapshotEveryMillis, double metricsHalfLifeRecords) {
      this(snapshotEveryRecords, snapshotEveryMillis, metricsHalfLifeRecords, List.of(), 0);
    }
  }

  /**
   * The {@code kafka} section, kept as plain values (stream-core does not use Kafka).
   *
   * @param bootstrapServers empty = start the embedded broker
   * @param clientProperties passed to the Kafka clients as given; {@code ${ENV}} is resolved by connectors
   */
  public record Kafka(String bootstrapServers, long commitIntervalMs, long commitIntervalRecords,
                      Map<String, String> clientProperties, Embedded embedded) {
    /** Copies the map. */
    public Kafka { clientProperties = java.util.Collections.unmodifiableMap(new java.util.LinkedHashMap<>(clientProperties)); }
  }

  /** {@code kafka.embedded}: where the embedded broker keeps its data and its port (0 = any free port). */
  public record Embedded(String dataDir, int port) { }

  /**
   * The {@code web} section.
   *
   * @param allowedHosts host names a request's {@code Host} header may name besides the loopback
   *     names ({@code localhost}, {@code 127.0.0.1}, {@code ::1}); lower case; copied
   * @param tokenFile a file holding the bearer token the web server asks for; "" = none (the environment
   *     variable {@code RUNNEL_WEB_TOKEN} may give it instead)
   * @param forecastKeyField the text field whose value is a record's Kafka key, for {@code /forecast}; "" = the
   *     first of {@code input.forecast.entity_fields}
   */
  public record Web(boolean enabled, String bind, int port, java.util.List<String> allowedHosts, String tokenFile,
                    String forecastKeyField, String keyStoreFile, String keyStorePasswordFile) {
    public Web { allowedHosts = java.util.List.copyOf(allowedHosts); }

    /** No TLS. */
    public Web(boolean enabled, String bind, int port, java.util.List<String> allowedHosts, String tokenFile,
               String forecastKeyField) {
      this(enabled, bind, port, allowedHosts, tokenFile, forecastKeyField, "", "");
    }

    /** No token file, the forecast key field by default. */
    public Web(boolean enabled, String bind, int port, java.util.List<String> allowedHosts) {
      this(enabled, bind, port, allowedHosts, "", "");
    }

    /** No host names beyond the loopback ones. */
    public Web(boolean enabled, String bind, int port) { this(enabled, bind, port, java.util.List.of()); }
  }

  /**
   * The {@code drift} section: alarms computed in the pipeline and carried in the snapshots.
   *
   * @param weightAlarmSe a weight alarm is raised when a raw-unit weight is more than this many
   *     standard errors from its baseline ({@code |w − w_b| / √(se² + se_b²)}); 0 = off
   * @param baseline which earlier snapshot a weight is compared with
   * @param baselineSnapshots how many snapshots back for {@link DriftBaseline#SNAPSHOTS_AGO}
   * @param errorTest the sequential test on the error level
   * @param errorAllowance the Page–Hinkley allowance δ, in units of the absolute standardized error
   * @param errorThreshold the Page–Hinkley threshold λ, same units
   * @param errorWarmupRecords scored records after a start or an alarm before the test may fire
   * @param alarmHoldSnapshots snapshots an error-level alarm stays listed after it fired
   * @param attributionRecords records after an error-level alarm whose least-squares fit is compared
   *     with the weights at the alarm, to name the changed columns; 0 = off
   * @param attributionSe a column is named when its before/after difference exceeds this many
   *     standard errors
   * @param resetToRecords after an error-level "up" alarm the model's information is cut to this
   *     many records' worth (covariance resetting) and the noise estimate is held for as many
   *     records, then restarted; 0 = off
   * @param contrastLevels per one-hot feature, snapshots carry the contrasts of this many of its
   *     most recorded levels against the mean of its levels, with standard errors; 0 = none
   * @param breakBlockRecords the weight-break scan sums trained records in blocks of this many and
   *     looks once per block; 0 = off
   * @param breakBlocks complete blocks the weight-break scan keeps (its longest recent stretch is half)
   * @param breakSe the weight-break scan names a column above this many standard errors
   */
  public record Drift(double weightAlarmSe, DriftBaseline baseline, int baselineSnapshots, ErrorTest errorTest,
                      double errorAllowance, double errorThreshold, long errorWarmupRecords, int alarmHoldSnapshots,
                      int attributionRecords, double attributionSe, int resetToRecords,
                      int contrastLevels, int breakBlockRecords, int breakBlocks, double breakSe) {
    /** The defaults, as documented in docs/drift.md. */
    public static final Drift DEFAULTS = new Drift(4.0, DriftBaseline.SNAPSHOTS_AGO, 8, ErrorTest.PAGE_HINKLEY,
        0.1, 30.0, 100, 4, 1200, 4.0, 0, 0, 144, 64, 4.75);

    /** The section with the default weight-break scan. */
    public Drift(double weightAlarmSe, DriftBaseline baseline, int baselineSnapshots, ErrorTest errorTest,
                 double errorAllowance, double errorThreshold, long errorWarmupRecords, int alarmHoldSnapshots,
                 int attributionRecords, double attributionSe, int resetToRecords, int contrastLevels) {
      this(weightAlarmSe, baseline, baselineSnapshots, errorTest, errorAllowance, errorThreshold, errorWarmupRecords,
          alarmHoldSnapshots, attributionRecords, attributionSe, resetToRecords, contrastLevels, 144, 64, 4.75);
    }

    /** The section with the default change attribution. */
    public Drift(double weightAlarmSe, DriftBaseline baseline, int baselineSnapshots, ErrorTest errorTest,
                 double errorAllowance, double errorThreshold, long errorWarmupRecords, int alarmHoldSnapshots) {
      this(weightAlarmSe, baseline, baselineSnapshots, errorTest, errorAllowance, errorThreshold, errorWarmupRecords,
          alarmHoldSnapshots, 1200, 4.0, 0, 0);
    }
  }
}
