package dev.runnel.core.config;

import dev.runnel.core.model.ModelSettings;
import dev.runnel.core.record.RecordLimits;
import dev.runnel.core.record.TimeFormat;
import java.time.DateTimeException;
import java.time.ZoneId;
import java.util.ArrayList;
import java.util.Collections;
import java.util.List;

/**
 * Every configuration key, one line each: section, name, type, default and check. {@link ConfigLoader}
 * reads values (and the defaults of an absent section) only through these, a section accepts exactly
 * the keys listed for it (and their former names), and {@code ConfigDocsTest} checks that each key
 * appears in docs/configuration.md with the same default.
 *
 * <p>To add a key: add one line below (in its section, in the order the docs list it), read it in
 * {@link ConfigLoader} with {@code KEY.read(section)}, and add its row to docs/configuration.md. To
 * rename one: give the new name and add {@code .formerly("old_name")}; the old name keeps working with
 * a warning that names the new key.
 *
 * <p>Defaults that other packages also use are defined there and referred to here: the model's in
 * {@link ModelSettings} ({@code DEFAULT_*}), the input limits in {@link RecordLimits#DEFAULTS}, the
 * drift alarms' in {@link PipelineConfig.Drift#DEFAULTS}.
 */
public final class ConfigKeys {

  private ConfigKeys() { }

  private static final List<ConfigKey<?>> ALL = new ArrayList<>();

  private static <T> ConfigKey<T> add(ConfigKey<T> k) {
    ALL.add(k);
    return k;
  }

  private static final RecordLimits LIMITS = RecordLimits.DEFAULTS;
  private static final PipelineConfig.Drift DRIFT = PipelineConfig.Drift.DEFAULTS;
  static final String ZONE_ALLOWED = "use an IANA time-zone name such as Europe/Amsterdam, or UTC";

  // ---- top level ----
  public static final ConfigKey<?> NAME = add(ConfigKey.structured("", "name", "text", "required"));
  public static final ConfigKey<?> INPUT = add(ConfigKey.structured("", "input", "mapping", "required"));
  public static final ConfigKey<?> TARGET = add(ConfigKey.structured("", "target", "text", "required"));
  public static final ConfigKey<?> FEATURES = add(ConfigKey.structured("", "features", "list", "empty"));
  public static final ConfigKey<?> MODEL = add(ConfigKey.structured("", "model", "mapping", "all defaults"));
  public static final ConfigKey<?> OUTPUTS = add(ConfigKey.structured("", "outputs", "mapping", "all defaults"));
  public static final ConfigKey<?> KAFKA = add(ConfigKey.structured("", "kafka", "mapping", "all defaults"));
  public static final ConfigKey<?> DRIFT_SECTION = add(ConfigKey.structured("", "drift", "mapping", "all defaults"));
  public static final ConfigKey<?> WEB = add(ConfigKey.structured("", "web", "mapping", "all defaults"));

  // ---- input ----
  public static final ConfigKey<?> TOPIC = add(ConfigKey.structured("input", "topic", "text", "absent"));
  public static final ConfigKey<?> FIELDS = add(ConfigKey.structured("input", "fields", "mapping", "required"));
  public static final ConfigKey<?> EVENT_TIME = add(ConfigKey.structured("input", "event_time", "mapping", "absent"));
  public static final ConfigKey<?> EVENT_TIME_FIELD = add(ConfigKey.structured("input.event_time", "field", "text", "required"));
  public static final ConfigKey<TimeFormat> EVENT_TIME_FORMAT = add(ConfigKey.choice("input.event_time", "format", TimeFormat.ISO8601, TimeFormat.values(), TimeFormat::word));
  public static final ConfigKey<ZoneId> TIME_ZONE = add(ConfigKey.custom("input", "time_zone", "text", ZoneId.of("UTC"), ZONE_ALLOWED, ZoneId::getId, ConfigKeys::zone));
  public static final ConfigKey<PipelineConfig.InputFormat> INPUT_FORMAT = add(ConfigKey.choice("input", "format", PipelineConfig.InputFormat.JSON, PipelineConfig.InputFormat.values(), PipelineConfig.InputFormat::word));
  public static final ConfigKey<String> AVRO_SCHEMA_FILE = add(ConfigKey.text("input", "avro_schema_file", "", "a path to an Avro schema file (.avsc, JSON)"));
  public static final ConfigKey<?> LIMITS_SECTION = add(ConfigKey.structured("input", "limits", "mapping", "all defaults"));
  public static final ConfigKey<Integer> MAX_TEXT_LENGTH = add(ConfigKey.wholeInt("input.limits", "max_text_length", LIMITS.maxTextLength(), 1, 1_000_000));
  public static final ConfigKey<Integer> MAX_RECORD_BYTES = add(ConfigKey.wholeInt("input.limits", "max_record_bytes", LIMITS.maxRecordBytes(), 64, 16_777_216));
  public static final ConfigKey<Double> MAX_ABS_VALUE = add(ConfigKey.number("input.limits", "max_abs_value", LIMITS.maxAbsValue(), 0, true, Double.MAX_VALUE, false, "use a number greater than 0, e.g. 1.0e12"));
  public static final ConfigKey<Integer> MIN_YEAR = add(ConfigKey.wholeInt("input.limits", "min_year", LIMITS.minYear(), 1, 9999));
  public static final ConfigKey<Integer> MAX_YEAR = add(ConfigKey.wholeInt("input.limits", "max_year", LIMITS.maxYear(), 1, 9999));
  public static final ConfigKey<?> CLOCK_SECTION = add(ConfigKey.structured("input", "clock", "mapping", "all defaults"));
  public static final ConfigKey<Long> CLOCK_MAX_AHEAD = add(ConfigKey.duration("input.clock", "max_ahead", PipelineConfig.Clock.DEFAULTS.maxAheadMillis(), "P1D"));
  public static final ConfigKey<Integer> CLOCK_CONFIRM_RECORDS = add(ConfigKey.wholeInt("input.clock", "confirm_records", PipelineConfig.Clock.DEFAULTS.confirmRecords(), 1, 1000));
  public static final ConfigKey<?> FORECAST_SECTION = add(ConfigKey.structured("input", "forecast", "mapping", "absent"));
  public static final ConfigKey<?> FORECAST_ENTITY_FIELDS = add(ConfigKey.structured("input.forecast", "entity_fields", "list of texts", "required"));
  public static final ConfigKey<?> FORECAST_TARGET_TIME_FIELD = add(ConfigKey.structured("input.forecast", "target_time_field", "text", "required"));
  public static final ConfigKey<Integer> FORECAST_MAX_PENDING = add(ConfigKey.wholeInt("input.forecast", "max_pending", PipelineConfig.Forecast.DEFAULT_MAX_PENDING, 1, 10_000_000));
  public static final ConfigKey<Long> FORECAST_MAX_ACTUAL_DELAY = add(ConfigKey.duration("input.forecast", "max_actual_delay", PipelineConfig.Forecast.DEFAULT_MAX_ACTUAL_DELAY_MILLIS, "P7D"));
  public static final ConfigKey<?> FORECAST_MAX_ACTUAL_LAG = add(ConfigKey.structured("input.forecast", "max_actual_lag", "ISO 8601 duration", "max_actual_delay"));
  public static final ConfigKey<Integer> FORECAST_MAX_LEARNED_ACTUALS = add(ConfigKey.wholeInt("input.forecast", "max_learned_actuals", PipelineConfig.Forecast.DEFAULT_MAX_LEARNED_ACTUALS, 0, 10_000_000));
  public static final ConfigKey<Correction> FORECAST_CORRECTIONS = add(ConfigKey.choice("input.forecast", "corrections", PipelineConfig.Forecast.DEFAULT_CORRECTIONS, Correction.values(), Correction::word));
  public static final ConfigKey<?> FORECAST_HORIZON_BUCKETS = add(ConfigKey.structured("input.forecast", "horizon_buckets", "list of ISO 8601 durations", "[PT1H, PT6H, P1D, P7D]"));
  public static final ConfigKey<Integer> FORECAST_MAX_METRIC_ENTITIES = add(ConfigKey.wholeInt("input.forecast", "max_metric_entities", PipelineConfig.Forecast.DEFAULT_MAX_METRIC_ENTITIES, 0, 100_000));

  // ---- features: kind onehot ----
  public static final ConfigKey<?> ONEHOT_FIELD = add(ConfigKey.structured("features.onehot", "field", "text", "required"));
  public static final ConfigKey<?> ONEHOT_NAME = add(ConfigKey.structured("features.onehot", "name", "text", "the field name"));
  public static final ConfigKey<Integer> MAX_LEVELS = add(ConfigKey.wholeInt("features.onehot", "max_levels", 1000, 1, 1_000_000));
  public static final ConfigKey<Integer> MIN_COUNT = add(ConfigKey.wholeInt("features.onehot", "min_count", 1, 1, 1_000_000));
  public static final ConfigKey<Long> EXPIRE_AFTER = add(ConfigKey.duration("features.onehot", "expire_after"));
  public static final ConfigKey<Long> EXPIRE_AFTER_RECORDS = add(ConfigKey.whole("features.onehot", "expire_after_records", 0, 0, Long.MAX_VALUE));

  // ---- features: kind cyclic ----
  public static final ConfigKey<Cycle> CYCLE = add(ConfigKey.choice("features.cyclic", "cycle", null, Cycle.values(), Cycle::word));
  public static final ConfigKey<?> CYCLIC_FIELD = add(ConfigKey.structured("features.cyclic", "field", "text", "absent"));
  public static final ConfigKey<Integer> HARMONICS = add(ConfigKey.wholeInt("features.cyclic", "harmonics", 1, 1, 12));
  public static final ConfigKey<?> CYCLIC_NAME = add(ConfigKey.structured("features.cyclic", "name", "text", "the cycle word"));

  // ---- features: kind numeric ----
  static final String EXPONENT_ALLOWED = "use a non-zero number from -1000 to 1000";
  static final String WEIGHTING_ALLOWED = "use 0 (no weighting) or a number of records greater than 0";
  static final String CLIP_ALLOWED = "use 0 (off) or a bound on |z| greater than 0";
  public static final ConfigKey<?> NUMERIC_FIELD = add(ConfigKey.structured("features.numeric", "field", "text", "required"));
  public static final ConfigKey<?> NUMERIC_NAME = add(ConfigKey.structured("features.numeric", "name", "text", "the field name"));
  public static final ConfigKey<Transform> TRANSFORM = add(ConfigKey.choice("features.numeric", "transform", Transform.NONE, Transform.values(), Transform::word));
  public static final ConfigKey<Double> EXPONENT = add(ConfigKey.number("features.numeric", "exponent", 1.0, -1.0e3, false, 1.0e3, false, EXPONENT_ALLOWED).documentedDefault("required with `power`"));
  public static final ConfigKey<Scaling> NUMERIC_SCALING = add(ConfigKey.choice("features.numeric", "scaling", Scaling.STANDARDIZE, Scaling.values(), Scaling::word));
  public static final ConfigKey<Double> NUMERIC_WEIGHTING = add(ConfigKey.number("features.numeric", "weighting_half_life_records", 0, 0, false, 1.0e15, false, WEIGHTING_ALLOWED));
  public static final ConfigKey<Double> NUMERIC_CLIP = add(ConfigKey.number("features.numeric", "clip", 0, 0, false, 1.0e6, false, CLIP_ALLOWED));

  // ---- features: kind polynomial ----
  public static final ConfigKey<?> POLYNOMIAL_FIELD = add(ConfigKey.structured("features.polynomial", "field", "text", "required"));
  public static final ConfigKey<Integer> DEGREE = add(ConfigKey.wholeInt("features.polynomial", "degree", 2, 1, 16).documentedDefault("required"));
  public static final ConfigKey<?> POLYNOMIAL_NAME = add(ConfigKey.structured("features.polynomial", "name", "text", "the field name"));
  public static final ConfigKey<Scaling> POLYNOMIAL_SCALING = add(ConfigKey.choice("features.polynomial", "scaling", Scaling.STANDARDIZE, Scaling.values(), Scaling::word));
  public static final ConfigKey<Double> POLYNOMIAL_WEIGHTING = add(ConfigKey.number("features.polynomial", "weighting_half_life_records", 0, 0, false, 1.0e15, false, WEIGHTING_ALLOWED));
  public static final ConfigKey<Double> POLYNOMIAL_CLIP = add(ConfigKey.number("features.polynomial", "clip", 0, 0, false, 1.0e6, false, CLIP_ALLOWED));

  // ---- features: kind cross ----
  public static final ConfigKey<?> CROSS_OF = add(ConfigKey.structured("features.cross", "of", "list of two texts", "required"));
  public static final ConfigKey<?> CROSS_NAME = add(ConfigKey.structured("features.cross", "name", "text", "`<a>*<b>`"));

  // ---- features: kind bends ----
  public static final ConfigKey<?> BENDS_FIELD = add(ConfigKey.structured("features.bends", "field", "text", "required"));
  public static final ConfigKey<?> BENDS_NAME = add(ConfigKey.structured("features.bends", "name", "text", "the field name"));
  public static final ConfigKey<BendBasis> BENDS_BASIS = add(ConfigKey.choice("features.bends", "basis", BendBasis.HINGE, BendBasis.values(), BendBasis::word));
  public static final ConfigKey<?> BENDS_KNOTS = add(ConfigKey.structured("features.bends", "knots", "list of numbers", "required"));
  public static final ConfigKey<Scaling> BENDS_SCALING = add(ConfigKey.choice("features.bends", "scaling", Scaling.STANDARDIZE, Scaling.values(), Scaling::word));
  public static final ConfigKey<Double> BENDS_WEIGHTING = add(ConfigKey.number("features.bends", "weighting_half_life_records", 0, 0, false, 1.0e15, false, WEIGHTING_ALLOWED));
  public static final ConfigKey<Double> BENDS_CLIP = add(ConfigKey.number("features.bends", "clip", 0, 0, false, 1.0e6, false, CLIP_ALLOWED));

  // ---- features: kind special_days ----
  public static final ConfigKey<?> SPECIAL_NAME = add(ConfigKey.structured("features.special_days", "name", "text", "`special_day`"));
  public static final ConfigKey<?> SPECIAL_DATES = add(ConfigKey.structured("features.special_days", "dates", "list of dates", "[]"));
  public static final ConfigKey<?> SPECIAL_DATES_FILE = add(ConfigKey.structured("features.special_days", "dates_file", "text", "absent"));
  public static final ConfigKey<?> SPECIAL_HOLIDAY_COUNTRY = add(ConfigKey.structured("features.special_days", "holiday_country", "text", "absent"));
  public static final ConfigKey<?> SPECIAL_HOLIDAY_REGION = add(ConfigKey.structured("features.special_days", "holiday_region", "text", "absent"));
  public static final ConfigKey<Integer> SPECIAL_DAYS_BEFORE = add(ConfigKey.wholeInt("features.special_days", "days_before", 0, 0, 7));
  public static final ConfigKey<Integer> SPECIAL_DAYS_AFTER = add(ConfigKey.wholeInt("features.special_days", "days_after", 0, 0, 7));

  // ---- features: kind lag ----
  static final int DEFAULT_MAX_ENTITIES = 100_000;
  static final long DEFAULT_HISTORY_EXPIRY_MILLIS = 30 * 86_400_000L;
  public static final ConfigKey<?> LAG_FIELD = add(ConfigKey.structured("features.lag", "field", "text", "the target"));
  public static final ConfigKey<?> LAG_NAME = add(ConfigKey.structured("features.lag", "name", "text", "`<field>_lag_<offset>`"));
  public static final ConfigKey<?> LAG_OFFSET = add(ConfigKey.structured("features.lag", "offset", "ISO 8601 duration", "required"));
  public static final ConfigKey<Long> LAG_GRID = add(ConfigKey.duration("features.lag", "grid", 3_600_000L, "PT1H"));
  public static final ConfigKey<Long> LAG_TOLERANCE = add(ConfigKey.duration("features.lag", "tolerance"));
  public static final ConfigKey<Integer> LAG_MAX_ENTITIES = add(ConfigKey.wholeInt("features.lag", "max_entities", DEFAULT_MAX_ENTITIES, 1, 10_000_000));
  public static final ConfigKey<Long> LAG_EXPIRE_AFTER = add(ConfigKey.duration("features.lag", "expire_after", DEFAULT_HISTORY_EXPIRY_MILLIS, "P30D"));

  // ---- features: kind smoothed ----
  public static final ConfigKey<?> SMOOTHED_FIELD = add(ConfigKey.structured("features.smoothed", "field", "text", "the target"));
  public static final ConfigKey<?> SMOOTHED_NAME = add(ConfigKey.structured("features.smoothed", "name", "text", "`<field>_smoothed`"));
  public static final ConfigKey<?> SMOOTHED_HALF_LIFE = add(ConfigKey.structured("features.smoothed", "half_life", "ISO 8601 duration", "required"));
  public static final ConfigKey<Season> SEASON = add(ConfigKey.choice("features.smoothed", "season", Season.NONE, Season.values(), Season::word));
  public static final ConfigKey<Integer> SMOOTHED_MAX_ENTITIES = add(ConfigKey.wholeInt("features.smoothed", "max_entities", DEFAULT_MAX_ENTITIES, 1, 10_000_000));
  public static final ConfigKey<Long> SMOOTHED_EXPIRE_AFTER = add(ConfigKey.duration("features.smoothed", "expire_after", DEFAULT_HISTORY_EXPIRY_MILLIS, "P30D"));

  // ---- model ----
  static final String PRIOR_ALLOWED = "use a number greater than 0, or the word no_prior";
  public static final ConfigKey<Boolean> CONSTANT_TERM = add(ConfigKey.flag("model", "constant_term", ModelSettings.DEFAULT_CONSTANT_TERM));
  public static final ConfigKey<Double> PRIOR_VARIANCE = add(ConfigKey.custom("model", "prior_variance", "number or `no_prior`", ModelSettings.DEFAULT_PRIOR_VARIANCE, PRIOR_ALLOWED, String::valueOf, ConfigKeys::priorVariance));
  public static final ConfigKey<?> FORGETTING = add(ConfigKey.structured("model", "forgetting", "mapping", "absent"));
  public static final ConfigKey<Double> FORGETTING_FACTOR = add(ConfigKey.number("model.forgetting", "factor", 1.0, 0, true, 1, false, "use a number greater than 0 and at most 1"));
  public static final ConfigKey<Long> FORGETTING_HALF_LIFE = add(ConfigKey.duration("model.forgetting", "half_life"));
  public static final ConfigKey<Boolean> FORGET_TOWARDS_PRIOR = add(ConfigKey.flag("model", "forget_towards_prior", ModelSettings.DEFAULT_WINDUP_GUARD).formerly("windup_guard"));
  public static final ConfigKey<Double> INTERVAL_LEVEL = add(ConfigKey.number("model", "interval_level", ModelSettings.DEFAULT_INTERVAL_LEVEL, 0, true, 1, true, "use a number between 0 and 1 (both excluded), e.g. 0.9"));
  public static final ConfigKey<Double> NOISE_HALF_LIFE_RECORDS = add(ConfigKey.number("model", "noise_half_life_records", ModelSettings.DEFAULT_NOISE_HALF_LIFE_RECORDS, 0, true, 1.0e15, false, "use a number of records greater than 0"));
  public static final ConfigKey<TargetTransform> TARGET_TRANSFORM = add(ConfigKey.choice("model", "target_transform", TargetTransform.NONE, TargetTransform.values(), TargetTransform::word));
  public static final ConfigKey<TargetPoint> TARGET_POINT = add(ConfigKey.choice("model", "target_point", TargetPoint.MEDIAN, TargetPoint.values(), TargetPoint::word));
  public static final ConfigKey<Boolean> TARGET_NON_NEGATIVE = add(ConfigKey.flag("model", "target_non_negative", false));
  public static final ConfigKey<ModelScope> MODEL_SCOPE = add(ConfigKey.choice("model", "scope", ModelScope.PARTITION, ModelScope.values(), ModelScope::word));
  public static final ConfigKey<Long> SHARE_EVERY_RECORDS = add(ConfigKey.whole("model", "share_every_records", 1000, 0, 1_000_000_000));
  public static final ConfigKey<Long> SHARE_EVERY = add(ConfigKey.duration("model", "share_every"));

  // ---- outputs ----
  public static final ConfigKey<Long> SNAPSHOT_EVERY_RECORDS = add(ConfigKey.whole("outputs", "snapshot_every_records", 1000, 0, Long.MAX_VALUE));
  public static final ConfigKey<Long> SNAPSHOT_EVERY = add(ConfigKey.duration("outputs", "snapshot_every"));
  public static final ConfigKey<Double> METRICS_HALF_LIFE_RECORDS = add(ConfigKey.number("outputs", "metrics_half_life_records", 1000, 0, true, 1.0e15, false, "use a number of records greater than 0"));
  public static final ConfigKey<?> ECHO_FIELDS = add(ConfigKey.structured("outputs", "echo_fields", "list of texts", "[] (none)"));
  public static final ConfigKey<Integer> SIGNIFICANT_DIGITS = add(ConfigKey.wholeInt("outputs", "significant_digits", 0, 0, 15));
  public static final ConfigKey<PipelineConfig.OutputEncoding> OUTPUT_ENCODING = add(ConfigKey.choice("outputs", "encoding", PipelineConfig.OutputEncoding.JSON, PipelineConfig.OutputEncoding.values(), PipelineConfig.OutputEncoding::word));

  // ---- kafka ----
  public static final ConfigKey<String> BOOTSTRAP_SERVERS = add(ConfigKey.textOrEmpty("kafka", "bootstrap_servers", "", "use host:port[,host:port...], or \"\" for the embedded broker"));
  public static final ConfigKey<Long> COMMIT_INTERVAL_MS = add(ConfigKey.whole("kafka", "commit_interval_ms", 1000, 1, 3_600_000));
  public static final ConfigKey<Long> COMMIT_INTERVAL_RECORDS = add(ConfigKey.whole("kafka", "commit_interval_records", 5000, 1, 1_000_000_000));
  public static final ConfigKey<?> CLIENT_PROPERTIES = add(ConfigKey.structured("kafka", "client_properties", "mapping", "{}"));
  public static final ConfigKey<?> EMBEDDED = add(ConfigKey.structured("kafka", "embedded", "mapping", "all defaults"));
  public static final ConfigKey<String> EMBEDDED_DATA_DIR = add(ConfigKey.text("kafka.embedded", "data_dir", ".runnel/broker", "use a folder path"));
  public static final ConfigKey<Integer> EMBEDDED_PORT = add(ConfigKey.wholeInt("kafka.embedded", "port", 0, 0, 65535));

  // ---- drift ----
  public static final ConfigKey<Double> WEIGHT_ALARM_SE = add(ConfigKey.number("drift", "weight_alarm_se", DRIFT.weightAlarmSe(), 0, false, 1.0e6, false, "use 0 (off) or a number of standard errors greater than 0, e.g. 4"));
  public static final ConfigKey<DriftBaseline> BASELINE = add(ConfigKey.choice("drift", "baseline", DRIFT.baseline(), DriftBaseline.values(), DriftBaseline::word));
  public static final ConfigKey<Integer> BASELINE_SNAPSHOTS = add(ConfigKey.wholeInt("drift", "baseline_snapshots", DRIFT.baselineSnapshots(), 1, 10_000));
  public static final ConfigKey<ErrorTest> ERROR_TEST = add(ConfigKey.choice("drift", "error_test", DRIFT.errorTest(), ErrorTest.values(), ErrorTest::word));
  public static final ConfigKey<Double> ERROR_ALLOWANCE = add(ConfigKey.number("drift", "error_allowance", DRIFT.errorAllowance(), 0, false, 100, false, "use a number from 0 to 100 (units of the absolute standardized error), e.g. 0.1"));
  public static final ConfigKey<Double> ERROR_THRESHOLD = add(ConfigKey.number("drift", "error_threshold", DRIFT.errorThreshold(), 0, true, 1.0e9, false, "use a number greater than 0 (units of the absolute standardized error), e.g. 30"));
  public static final ConfigKey<Long> ERROR_WARMUP_RECORDS = add(ConfigKey.whole("drift", "error_warmup_records", DRIFT.errorWarmupRecords(), 1, 1_000_000_000));
  public static final ConfigKey<Integer> ALARM_HOLD_SNAPSHOTS = add(ConfigKey.wholeInt("drift", "alarm_hold_snapshots", DRIFT.alarmHoldSnapshots(), 1, 10_000));
  public static final ConfigKey<Integer> ATTRIBUTION_RECORDS = add(ConfigKey.wholeInt("drift", "attribution_records", DRIFT.attributionRecords(), 0, 1_000_000));
  public static final ConfigKey<Double> ATTRIBUTION_SE = add(ConfigKey.number("drift", "attribution_se", DRIFT.attributionSe(), 0, true, 1.0e6, false, "use a number of standard errors greater than 0, e.g. 4"));
  public static final ConfigKey<Integer> RESET_TO_RECORDS = add(ConfigKey.wholeInt("drift", "reset_to_records", DRIFT.resetToRecords(), 0, 1_000_000));
  public static final ConfigKey<Integer> CONTRAST_LEVELS = add(ConfigKey.wholeInt("drift", "contrast_levels", DRIFT.contrastLevels(), 0, 100));
  public static final ConfigKey<Integer> BREAK_BLOCK_RECORDS = add(ConfigKey.wholeInt("drift", "break_block_records", DRIFT.breakBlockRecords(), 0, 1_000_000));
  public static final ConfigKey<Integer> BREAK_BLOCKS = add(ConfigKey.wholeInt("drift", "break_blocks", DRIFT.breakBlocks(), 2, 1024));
  public static final ConfigKey<Double> BREAK_SE = add(ConfigKey.number("drift", "break_se", DRIFT.breakSe(), 0, true, 1.0e6, false, "use a number of standard errors greater than 0, e.g. 4.75"));

  // ---- web ----
  public static final ConfigKey<Boolean> WEB_ENABLED = add(ConfigKey.flag("web", "enabled", true));
  public static final ConfigKey<String> WEB_BIND = add(ConfigKey.text("web", "bind", "127.0.0.1", "use an IP address of this machine (127.0.0.1, ::1, 0.0.0.0 for all) or its host name"));
  public static final ConfigKey<Integer> WEB_PORT = add(ConfigKey.wholeInt("web", "port", 8642, 0, 65535));
  public static final ConfigKey<?> WEB_ALLOWED_HOSTS = add(ConfigKey.structured("web", "allowed_hosts", "list", "[]"));
  public static final ConfigKey<String> WEB_TOKEN_FILE = add(ConfigKey.text("web", "token_file", "", "a path to a file that holds the bearer token on one line"));
  public static final ConfigKey<String> WEB_FORECAST_KEY_FIELD = add(ConfigKey.text("web", "forecast_key_field", "", "a text field of input.fields: the one the producers key records by"));
  public static final ConfigKey<String> WEB_KEY_STORE_FILE = add(ConfigKey.text("web", "key_store_file", "", "a path to a PKCS12 or JKS key store with the server's key and certificate"));
  public static final ConfigKey<String> WEB_KEY_STORE_PASSWORD_FILE = add(ConfigKey.text("web", "key_store_password_file", "", "a path to a file that holds the key store's password on one line"));

  /** Every key, in the order docs/configuration.md lists them. */
  public static List<ConfigKey<?>> all() { return Collections.unmodifiableList(ALL); }

  /** The names (and former names) a section accepts, e.g. {@code in("model")}. */
  static List<String> in(String scope) {
    List<String> out = new ArrayList<>();
    for (ConfigKey<?> k : ALL) {
      if (k.scope().equals(scope)) {
        out.add(k.name());
        out.addAll(k.formerNames());
      }
    }
    return out;
  }

  // ---- readers of keys with their own words ----

  private static ZoneId zone(ConfigLoader.Section s, String name, ConfigKey<ZoneId> k) {
    if (!s.has(name)) return k.defaultValue();
    String z = s.text(name, null, ZONE_ALLOWED);
    try {
      return ZoneId.of(z);
    } catch (DateTimeException e) {
      throw ConfigLoader.notAllowed(s.p(name), s.get(name), ZONE_ALLOWED);
    }
  }

  /** A number &gt; 0, or {@code no_prior} (+Infinity); the former word {@code diffuse} still works, with a warning. */
  private static Double priorVariance(ConfigLoader.Section s, String name, ConfigKey<Double> k) {
    if (!s.has(name)) return k.defaultValue();
    com.fasterxml.jackson.databind.JsonNode v = s.get(name);
    if (v.isTextual() && v.asText().equals("no_prior")) return Double.POSITIVE_INFINITY;
    if (v.isTextual() && v.asText().equals("diffuse")) {
      s.warn(s.p(name), s.p(name) + ": the word diffuse is renamed; write " + name + ": no_prior instead (the old word still works for now)");
      return Double.POSITIVE_INFINITY;
    }
    return s.number(name, k.defaultValue(), 0, true, Double.MAX_VALUE, false, PRIOR_ALLOWED);
  }
}
