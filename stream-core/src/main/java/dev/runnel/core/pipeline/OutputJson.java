package dev.runnel.core.pipeline;

import com.fasterxml.jackson.core.JsonEncoding;
import com.fasterxml.jackson.core.JsonFactory;
import com.fasterxml.jackson.core.JsonFactoryBuilder;
import com.fasterxml.jackson.core.StreamWriteFeature;
import com.fasterxml.jackson.core.io.SerializedString;
import com.fasterxml.jackson.core.JsonGenerator;
import dev.runnel.core.drift.DriftAlarm;
import dev.runnel.core.drift.DriftStatus;
import dev.runnel.core.feature.Featurizer;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.FieldType;
import dev.runnel.core.record.RecordSchema;
import dev.runnel.core.record.RejectReason;
import java.io.IOException;
import java.io.OutputStream;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.Arrays;
import java.util.List;

/**
 * Writes the published records — predictions, coefficient snapshots, rejects — as JSON bytes, in
 * the layouts documented in {@code docs/formats.md} (format version {@link #FORMAT_VERSION}).
 * Numbers that are not defined (NaN) are written as {@code null}. One thread.
 *
 * <p>One Jackson generator is kept and reused for every record (written into a reusable buffer,
 * with no separator between root values), so a record costs its result array and the number
 * texts Jackson makes, not a new generator. After a failure the generator is dropped and the next
 * record starts a new one.
 */
public final class OutputJson {

  /**
   * Version of the prediction, reject and settled layouts. Format 3 no longer writes {@code format}
   * and {@code pipeline} into each value: on Kafka they are the record headers
   * {@link #HEADER_FORMAT} and {@link #HEADER_PIPELINE}, in a {@code replay} folder the side file
   * {@code format.json} ({@link #formatFile}). Snapshots keep their own version
   * ({@link Snapshot#FORMAT_VERSION}) and their fields.
   */
  public static final int FORMAT_VERSION = 3;
  /** Kafka header on every output record: the version of the value's layout, as decimal text. */
  public static final String HEADER_FORMAT = "runnel.format";
  /** Kafka header on every output record: the pipeline's name. */
  public static final String HEADER_PIPELINE = "runnel.pipeline";
  /** Raw bytes of a rejected record are truncated to this many bytes on the rejects output. */
  public static final int MAX_RAW_BYTES = 4096;

  /**
   * Doubles are written by Jackson's Schubfach writer: the shortest decimal that reads back as the
   * same double, about twice as fast as {@code Double.toString} on Java 17 (measured 78 against
   * 154 ns per number), which on Java 17 sometimes writes one digit more than needed.
   */
  // names of the prediction's fields, encoded once (writing a String name encodes it every time)
  private static final SerializedString K_STATUS = new SerializedString("status");
  private static final SerializedString K_SOURCE = new SerializedString("source");
  private static final SerializedString K_PARTITION = new SerializedString("partition");
  private static final SerializedString K_OFFSET = new SerializedString("offset");
  private static final SerializedString K_EVENT_TIME = new SerializedString("event_time");
  private static final SerializedString K_FIELDS = new SerializedString("fields");
  private static final SerializedString K_PREDICTED = new SerializedString("predicted");
  private static final SerializedString K_LOW = new SerializedString("low");
  private static final SerializedString K_HIGH = new SerializedString("high");
  private static final SerializedString K_LEVEL = new SerializedString("level");
  private static final SerializedString K_ACTUAL = new SerializedString("actual");
  private static final SerializedString K_ERROR = new SerializedString("error");
  private static final SerializedString K_COLUMNS_VERSION = new SerializedString("columns_version");
  private static final SerializedString K_ISSUE_TIME = new SerializedString("issue_time");
  private static final SerializedString K_TARGET_TIME = new SerializedString("target_time");
  private static final SerializedString K_HORIZON_MS = new SerializedString("horizon_ms");
  private static final SerializedString K_TARGET_PASSED = new SerializedString("target_passed");
  private static final SerializedString K_FORECAST = new SerializedString("forecast");
  private static final SerializedString[] STATUS_TEXT;

  static {
    Prediction.Status[] all = Prediction.Status.values();
    STATUS_TEXT = new SerializedString[all.length];
    for (Prediction.Status st : all) {
      STATUS_TEXT[st.ordinal()] = new SerializedString(st.id());
    }
  }

  private static final JsonFactory FACTORY = new JsonFactoryBuilder().rootValueSeparator((String) null)
      .enable(StreamWriteFeature.USE_FAST_DOUBLE_WRITER).build();

  private final String pipeline;
  /** The schema {@link #names} were encoded for. */
  private RecordSchema namesFor;
  private SerializedString[] names;
  private final double intervalLevel;
  /** {@link #intervalLevel} as the generator writes it, made once (a double's text costs about 80 ns); null if not finite. */
  private final SerializedString levelText;
  /** Names of the echoed fields ({@code outputs.echo_fields}); null = every text and flag field. */
  private final String[] echo;
  /** Slots of the echoed fields in {@link #namesFor}, in the configured order. */
  private int[] echoSlots;
  /** 0 = exact numbers; else significant digits of predicted, low, high, error. */
  private final int digits;
  private final Buffer buffer = new Buffer();
  private final char[] timeChars = new char[24];
  /** The reused generator; null before the first record and after a failure. */
  private JsonGenerator generator;

  /**
   * Every text and flag field echoed, exact numbers (the layout of format 2 without
   * {@code format} and {@code pipeline}).
   *
   * @param pipeline the pipeline name (written into snapshots)
   * @param intervalLevel the configured interval level, written beside each interval
   */
  public OutputJson(String pipeline, double intervalLevel) {
    this(pipeline, intervalLevel, null, 0);
  }

  /**
   * @param pipeline the pipeline name (written into snapshots)
   * @param intervalLevel the configured interval level, written beside each interval
   * @param echoFields declared text or flag fields to echo under {@code fields}, in this order
   *     (empty: no {@code fields} object); null = every text and flag field. Not modified.
   * @param significantDigits 0 = exact; 1..15 = predicted, low, high and error rounded to this many
   *     significant digits
   */
  public OutputJson(String pipeline, double intervalLevel, java.util.List<String> echoFields, int significantDigits) {
    if (significantDigits < 0 || significantDigits > MAX_DIGITS) {
      throw new IllegalArgumentException("significantDigits: " + significantDigits
          + " is not allowed; use 0 (exact) or a whole number from 1 to " + MAX_DIGITS);
    }
    this.pipeline = pipeline;
    this.intervalLevel = intervalLevel;
    this.levelText = Double.isFinite(intervalLevel)
        ? new SerializedString(com.fasterxml.jackson.core.io.NumberOutput.toString(intervalLevel, true)) : null;
    this.echo = echoFields == null ? null : echoFields.toArray(new String[0]);
    this.digits = significantDigits;
  }

  /** The writer a pipeline configuration asks for ({@code outputs.echo_fields}, {@code outputs.significant_digits}). */
  public static OutputJson of(dev.runnel.core.config.PipelineConfig config) {
    return new OutputJson(config.name(), config.model().intervalLevel(), config.outputs().echoFields(),
        config.outputs().significantDigits());
  }

  /** Largest {@code significantDigits} (a rounded mantissa stays an exact double below 2^53). */
  public static final int MAX_DIGITS = 15;

  /**
   * What format 3 keeps out of each value, for a file output: {@code {"format":3,"pipeline":…,
   * "snapshot_format":…}} and a newline. {@code replay} writes it to {@code format.json} beside
   * the JSON Lines files, which stay one record per line.
   *
   * @return new bytes
   */
  public byte[] formatFile() {
    try {
      JsonGenerator g = begin();
      g.writeNumberField("format", FORMAT_VERSION);
      g.writeStringField("pipeline", pipeline);
      g.writeNumberField("snapshot_format", Snapshot.FORMAT_VERSION);
      byte[] json = end(g);
      byte[] line = Arrays.copyOf(json, json.length + 1);
      line[json.length] = '\n';
      return line;
    } catch (Throwable e) {
      throw failed(e);
    }
  }

  /**
   * One prediction (format 3: no {@code format} or {@code pipeline} field). The echoed text and
   * flag fields ({@code outputs.echo_fields}) are written under {@code fields}, none by default;
   * {@code predicted}, {@code low}, {@code high}, {@code error} are rounded when
   * {@code outputs.significant_digits} asks for it.
   *
   * @param p the prediction. Not modified.
   * @param record the decoded record it was made for. Not modified.
   * @return new bytes
   */
  public byte[] prediction(Prediction p, EventRecord record) {
    try {
      JsonGenerator g = begin();
      predictionBody(g, p, record);
      return end(g);
    } catch (Throwable e) {
      throw failed(e);
    }
  }

  private void predictionBody(JsonGenerator g, Prediction p, EventRecord record) throws IOException {
    g.writeFieldName(K_STATUS);
    g.writeString(STATUS_TEXT[p.status().ordinal()]);
    writeSource(g, p.sourcePartition(), p.sourceOffset());
    writeTime(g, K_EVENT_TIME, p.eventTimeMillis());
    if (p.stamped()) {
      // input.forecast: the issue time (the event time), the target time and the horizon
      writeTime(g, K_ISSUE_TIME, p.issueTimeMillis());
      writeTime(g, K_TARGET_TIME, p.targetTimeMillis());
      g.writeFieldName(K_HORIZON_MS);
      g.writeNumber(p.horizonMillis());
      if (Double.isNaN(p.actual())) {
        g.writeFieldName(K_TARGET_PASSED);
        g.writeBoolean(p.targetPassed());
      }
    }
    RecordSchema schema = record.schema();
    SerializedString[] names = fieldNames(schema);
    int[] slots = echoSlots;
    if (slots.length > 0) {
      g.writeFieldName(K_FIELDS);
      g.writeStartObject();
    }
    for (int i : slots) {
      if (!record.present(i)) {
        continue;
      }
      FieldType t = schema.type(i);
      if (t == FieldType.TEXT) {
        g.writeFieldName(names[i]);
        int n = record.textLength(i);
        if (n < 0) {
          g.writeNull(); // present without a text: only a caller that filled the record oddly
        } else {
          g.writeString(record.textChars(i), 0, n);
        }
      } else if (t == FieldType.FLAG) {
        g.writeFieldName(names[i]);
        g.writeBoolean(record.flag(i));
      }
    }
    if (slots.length > 0) {
      g.writeEndObject();
    }
    rounded(g, K_PREDICTED, p.predicted());
    writeInterval(g, p.low(), p.high(), p.actual(), p.error());
    g.writeFieldName(K_COLUMNS_VERSION);
    g.writeNumber(p.layoutVersion());
  }

  /**
   * One settled forecast (docs/formats.md, "Settled forecasts"): the entity, the issue and target
   * times, the horizon, the forecast and its interval as issued, the actual, the error, whether the
   * interval held it, and where the request and the actual came from.
   *
   * @param s the settled forecast. Not modified.
   * @param record the actual's record, whose entity fields are the forecast's. Not modified.
   * @return new bytes
   */
  public byte[] settled(SettledForecast s, EventRecord record) {
    try {
      JsonGenerator g = begin();
      settledBody(g, s, record);
      return end(g);
    } catch (Throwable e) {
      throw failed(e);
    }
  }

  private void settledBody(JsonGenerator g, SettledForecast s, EventRecord record) throws IOException {
    RecordSchema schema = record.schema();
    SerializedString[] names = fieldNames(schema);
    g.writeObjectFieldStart("entity");
    for (int slot : s.entitySlots) {
      g.writeFieldName(names[slot]);
      g.writeString(record.textChars(slot), 0, record.textLength(slot));
    }
    g.writeEndObject();
    writeTime(g, K_ISSUE_TIME, s.issueTimeMillis());
    writeTime(g, K_TARGET_TIME, s.targetTimeMillis());
    g.writeFieldName(K_HORIZON_MS);
    g.writeNumber(s.horizonMillis());
    rounded(g, K_FORECAST, s.forecast());
    writeInterval(g, s.low(), s.high(), s.actual(), s.error());
    g.writeBooleanField("covered", s.covered());
    if (s.correction()) {
      g.writeBooleanField("correction", true);
      number(g, "replaced_actual", s.replacedActual());
    }
    g.writeFieldName("request");
    writeSourceObject(g, s.requestPartition(), s.requestOffset());
    g.writeFieldName("actual_source");
    writeSourceObject(g, s.actualPartition(), s.actualOffset());
  }

  /** A fresh output: the buffer emptied, the object opened. */
  private JsonGenerator begin() throws IOException {
    JsonGenerator g = start();
    g.writeStartObject();
    return g;
  }

  /** The object closed; its bytes. */
  private byte[] end(JsonGenerator g) throws IOException {
    g.writeEndObject();
    return finish(g);
  }

  /**
   * After a failure while writing: the generator, in some unknown state, is dropped (the next
   * output makes a fresh one).
   *
   * @return what to throw: an I/O failure as unchecked, any other exception as it is (an error is thrown here)
   */
  private RuntimeException failed(Throwable e) {
    generator = null;
    if (e instanceof IOException io) {
      return new UncheckedIOException(io);
    }
    if (e instanceof RuntimeException re) {
      return re;
    }
    throw (Error) e;
  }

  /** The interval, its level, the actual and the error: a prediction's and a settled forecast's. */
  private void writeInterval(JsonGenerator g, double low, double high, double actual, double error) throws IOException {
    rounded(g, K_LOW, low);
    rounded(g, K_HIGH, high);
    writeLevel(g);
    number(g, K_ACTUAL, actual);
    rounded(g, K_ERROR, error);
  }

  private void writeTime(JsonGenerator g, SerializedString name, long millis) throws IOException {
    g.writeFieldName(name);
    int tn = instantChars(millis, timeChars);
    if (tn > 0) {
      g.writeString(timeChars, 0, tn);
    } else {
      g.writeString(Instant.ofEpochMilli(millis).toString());
    }
  }

  /** {@code "level":…}: the text made once, the bytes the generator's own double writer gives. */
  private void writeLevel(JsonGenerator g) throws IOException {
    g.writeFieldName(K_LEVEL);
    if (levelText != null) {
      g.writeRawValue(levelText);
    } else {
      g.writeNumber(intervalLevel);
    }
  }

  /** A source as an object (empty when neither is known). */
  private static void writeSourceObject(JsonGenerator g, long partition, long offset) throws IOException {
    g.writeStartObject();
    if (partition >= 0) {
      g.writeFieldName(K_PARTITION);
      g.writeNumber(partition);
    }
    if (offset >= 0) {
      g.writeFieldName(K_OFFSET);
      g.writeNumber(offset);
    }
    g.writeEndObject();
  }

  /**
   * One rejected record.
   *
   * @param raw the record's bytes. Not modified.
   * @return new bytes
   */
  public byte[] reject(RejectReason reason, String detail, long partition, long offset, byte[] raw, int off, int len) {
    try {
      JsonGenerator g = begin();
      g.writeStringField("reason", reason.id());
      g.writeStringField("detail", detail == null ? "" : detail);
      writeSource(g, partition, offset);
      int keep = Math.min(len, MAX_RAW_BYTES);
      g.writeNumberField("raw_length", len);
      g.writeBooleanField("raw_truncated", keep < len);
      // the raw bytes as text (invalid UTF-8 is replaced); truncation never splits the JSON output
      g.writeStringField("raw", new String(raw, off, keep, StandardCharsets.UTF_8));
      return end(g);
    } catch (Throwable e) {
      throw failed(e);
    }
  }

  /**
   * One coefficient snapshot.
   *
   * @param partition the source partition the model belongs to (-1 if none)
   * @return new bytes
   */
  public byte[] snapshot(Snapshot s, long partition) {
    try {
      JsonGenerator g = begin();
      snapshotBody(g, s, partition);
      return end(g);
    } catch (Throwable e) {
      throw failed(e);
    }
  }

  /** {@code model.scope: global}: the one model as this partition sees it (docs/formats.md). */
  private void writeSharing(JsonGenerator g, Snapshot.Sharing sh) throws IOException {
    g.writeObjectFieldStart("global_model");
    g.writeStringField("scope", "global");
    g.writeNumberField("shares_made", sh.sharesMade());
    g.writeNumberField("shares_folded", sh.sharesFolded());
    g.writeObjectFieldStart("last_folded");
    for (java.util.Map.Entry<Integer, Long> e : sh.foldedBySource().entrySet()) {
      g.writeNumberField(Integer.toString(e.getKey()), e.getValue());
    }
    g.writeEndObject();
    g.writeNumberField("view_columns", sh.viewColumns());
    g.writeArrayFieldStart("other_partitions_columns");
    for (Snapshot.Column c : sh.othersColumns()) {
      g.writeStartObject();
      g.writeStringField("name", c.name());
      number(g, "weight", c.weight());
      number(g, "std_error", c.standardError());
      number(g, "raw_weight", c.rawWeight());
      number(g, "raw_std_error", c.rawStandardError());
      g.writeEndObject();
    }
    g.writeEndArray();
    g.writeEndObject();
  }

  private void snapshotBody(JsonGenerator g, Snapshot s, long partition) throws IOException {
    g.writeNumberField("format", Snapshot.FORMAT_VERSION);
    g.writeStringField("pipeline", pipeline);
    g.writeNumberField("partition", partition);
    g.writeNumberField("index", s.index());
    g.writeStringField("event_time", s.eventTimeMillis() == Long.MIN_VALUE ? null
        : Instant.ofEpochMilli(s.eventTimeMillis()).toString());
    g.writeNumberField("records", s.records());
    g.writeNumberField("trained", s.trained());
    g.writeNumberField("no_target_records", s.forecasts());
    g.writeNumberField("rejected", s.rejected());
    g.writeNumberField("columns_version", s.layoutVersion());
    g.writeBooleanField("ready", s.ready());
    number(g, "noise_sd", s.noiseSd());
    number(g, "residual_sd", s.residualSd());
    number(g, "effective_sample_size", s.effectiveSampleSize());
    Snapshot.Metrics m = s.metrics();
    g.writeObjectFieldStart("metrics");
    g.writeNumberField("count", m.count());
    writeErrors(g, m);
    g.writeEndObject();
    if (s.forecasting() != null) {
      writeForecasting(g, s.forecasting());
    }
    g.writeArrayFieldStart("columns");
    for (Snapshot.Column c : s.columns()) {
      g.writeStartObject();
      g.writeStringField("name", c.name());
      number(g, "weight", c.weight());
      number(g, "std_error", c.standardError());
      number(g, "raw_weight", c.rawWeight());
      number(g, "raw_std_error", c.rawStandardError());
      number(g, "centre", c.centre());
      number(g, "scale", c.scale());
      number(g, "drift_score", c.movedSe());
      g.writeEndObject();
    }
    g.writeEndArray();
    writeAlarms(g, s);
    g.writeArrayFieldStart("vocabularies");
    for (Featurizer.VocabularySnapshot v : s.vocabularies()) {
      g.writeStartObject();
      g.writeStringField("feature", v.feature());
      g.writeStringField("field", v.field());
      g.writeNumberField("other_count", v.otherCount());
      g.writeNumberField("below_min_count", v.candidates());
      g.writeArrayFieldStart("levels");
      for (Featurizer.LevelSnapshot l : v.levels()) {
        g.writeStartObject();
        g.writeStringField("level", l.level());
        g.writeNumberField("column", l.column());
        g.writeNumberField("count", l.count());
        time(g, "first_seen", l.firstSeenMillis());
        time(g, "last_seen", l.lastSeenMillis());
        g.writeEndObject();
      }
      g.writeEndArray();
      g.writeEndObject();
    }
    g.writeEndArray();
    if (s.sharing() != null) {
      // only with model.scope: global: without it the snapshot's bytes are as before
      writeSharing(g, s.sharing());
    }
    if (!s.contrasts().isEmpty()) {
      // only with drift.contrast_levels > 0: without it the snapshot's bytes are as before
      g.writeArrayFieldStart("contrasts");
      for (Snapshot.Contrasts c : s.contrasts()) {
        g.writeStartObject();
        g.writeStringField("feature", c.feature());
        g.writeStringField("reference", "mean_of_levels");
        g.writeNumberField("levels_total", c.levelsTotal());
        g.writeArrayFieldStart("levels");
        for (Snapshot.LevelContrast l : c.levels()) {
          g.writeStartObject();
          g.writeStringField("level", l.level());
          g.writeStringField("column", l.column());
          g.writeNumberField("count", l.count());
          number(g, "effect", l.effect());
          number(g, "std_error", l.standardError());
          g.writeEndObject();
        }
        g.writeEndArray();
        g.writeArrayFieldStart("covariance");
        int k = c.levels().size();
        for (int a = 0; a < k; a++) {
          g.writeStartArray();
          for (int b = 0; b < k; b++) {
            double x = c.covariance()[a * k + b];
            if (Double.isFinite(x)) {
              g.writeNumber(x);
            } else {
              g.writeNull();
            }
          }
          g.writeEndArray();
        }
        g.writeEndArray();
        g.writeEndObject();
      }
      g.writeEndArray();
    }
    g.writeArrayFieldStart("standardization");
    for (Featurizer.ScalerSnapshot sc : s.scalers()) {
      g.writeStartObject();
      g.writeStringField("column", sc.column());
      g.writeStringField("scaling", sc.scaling());
      g.writeStringField("transform", sc.transform());
      g.writeNumberField("count", sc.count());
      number(g, "mean", sc.mean());
      number(g, "sd", sc.sd());
      number(g, "centre", sc.centre());
      number(g, "scale", sc.scale());
      g.writeEndObject();
    }
    g.writeEndArray();
  }

  /** {@code "overall"} and {@code "recent"}: the errors' summaries of a snapshot and of a horizon bucket. */
  private static void writeErrors(JsonGenerator g, Snapshot.Metrics m) throws IOException {
    g.writeObjectFieldStart("overall");
    number(g, "mae", m.mae());
    number(g, "rmse", m.rmse());
    number(g, "bias", m.bias());
    number(g, "coverage", m.coverage());
    g.writeEndObject();
    g.writeObjectFieldStart("recent");
    number(g, "mae", m.recentMae());
    number(g, "rmse", m.recentRmse());
    number(g, "bias", m.recentBias());
    number(g, "coverage", m.recentCoverage());
    g.writeEndObject();
  }

  /**
   * The forecast counts and the settled forecasts' errors by horizon (docs/formats.md,
   * "Coefficient snapshots"); written only with {@code input.forecast}.
   */
  private static void writeForecasting(JsonGenerator g, Snapshot.Forecasting f) throws IOException {
    g.writeObjectFieldStart("forecast_counts");
    g.writeNumberField("pending", f.pending());
    g.writeNumberField("remembered", f.remembered());
    g.writeNumberField("settled", f.settled());
    g.writeNumberField("dropped_full", f.droppedFull());
    g.writeNumberField("dropped_expired", f.droppedExpired());
    Snapshot.ActualCounts a = f.actuals();
    g.writeNumberField("learned_actuals", a.learned());
    g.writeNumberField("learned_forgotten_early", a.forgottenEarly());
    g.writeNumberField("replaced_actuals", a.replaced());
    g.writeNumberField("resettled", a.resettled());
    g.writeNumberField("rejected_too_late", a.tooLate());
    g.writeNumberField("rejected_repeated", a.repeated());
    g.writeNumberField("rejected_corrected", a.corrected());
    g.writeEndObject();
    g.writeObjectFieldStart("horizon_metrics");
    g.writeArrayFieldStart("buckets");
    writeHorizonBuckets(g, f.bucketBoundsMillis(), f.overall());
    g.writeEndArray();
    g.writeNumberField("max_entities", f.maxEntities());
    g.writeNumberField("settled_not_kept", f.settledNotKept());
    g.writeArrayFieldStart("entities");
    for (Snapshot.EntityHorizons e : f.entities()) {
      g.writeStartObject();
      g.writeObjectFieldStart("entity");
      for (int i = 0; i < f.entityFields().size() && i < e.entity().size(); i++) {
        g.writeStringField(f.entityFields().get(i), e.entity().get(i));
      }
      g.writeEndObject();
      g.writeArrayFieldStart("buckets");
      writeHorizonBuckets(g, f.bucketBoundsMillis(), e.buckets());
      g.writeEndArray();
      g.writeEndObject();
    }
    g.writeEndArray();
    g.writeEndObject();
  }

  private static void writeHorizonBuckets(JsonGenerator g, List<Long> bounds, List<Snapshot.Metrics> ms) throws IOException {
    for (int b = 0; b < ms.size(); b++) {
      Snapshot.Metrics m = ms.get(b);
      g.writeStartObject();
      long up = bounds.get(b);
      if (up == Long.MAX_VALUE) {
        g.writeNullField("up_to");
        g.writeStringField("over", b > 0 ? isoDuration(bounds.get(b - 1)) : null);
      } else {
        g.writeStringField("up_to", isoDuration(up));
      }
      g.writeNumberField("count", m.count());
      writeErrors(g, m);
      g.writeEndObject();
    }
  }

  /**
   * A positive span as an ISO 8601 duration with days as the largest unit: {@code P1D},
   * {@code PT6H}, {@code P1DT12H}, {@code PT0.5S}.
   */
  static String isoDuration(long millis) {
    long days = millis / 86_400_000L;
    long rest = millis % 86_400_000L;
    StringBuilder sb = new StringBuilder("P");
    if (days > 0) {
      sb.append(days).append('D');
    }
    if (rest > 0 || days == 0) {
      sb.append(java.time.Duration.ofMillis(rest).toString().substring(1));
    }
    return sb.toString();
  }

  private static void writeAlarms(JsonGenerator g, Snapshot s) throws IOException {
    g.writeArrayFieldStart("alarms");
    for (DriftAlarm a : s.alarms()) {
      g.writeStartObject();
      g.writeStringField("kind", a.kind());
      if (a.column() != null) {
        g.writeStringField("column", a.column());
      }
      g.writeStringField("direction", a.direction());
      time(g, "fired_at", a.firedAtMillis());
      g.writeNumberField("fired_at_snapshot", a.firedAtSnapshot());
      g.writeNumberField("fired_at_record", a.firedAtRecord());
      number(g, "score", a.score());
      number(g, "threshold", a.threshold());
      number(g, "baseline_value", a.baselineValue());
      number(g, "current_value", a.currentValue());
      g.writeEndObject();
    }
    g.writeEndArray();
    DriftStatus d = s.drift();
    if (d != null) {
      g.writeObjectFieldStart("drift");
      g.writeStringField("baseline", d.baseline());
      number(g, "weight_alarm_se", d.weightAlarmSe());
      g.writeNumberField("weight_alarms_fired", d.weightAlarmsFired());
      g.writeStringField("error_test", d.errorTest());
      number(g, "error_up", d.upStatistic());
      number(g, "error_down", d.downStatistic());
      number(g, "error_threshold", d.threshold());
      number(g, "error_mean_abs_z", d.meanAbsError());
      g.writeNumberField("error_count", d.errorCount());
      g.writeNumberField("error_alarms_fired", d.errorAlarmsFired());
      g.writeEndObject();
    }
  }

  private JsonGenerator start() throws IOException {
    buffer.size = 0;
    JsonGenerator g = generator;
    if (g == null) {
      g = FACTORY.createGenerator(buffer, JsonEncoding.UTF8);
      generator = g;
    }
    return g;
  }

  private byte[] finish(JsonGenerator g) throws IOException {
    g.flush();
    return Arrays.copyOf(buffer.bytes, buffer.size);
  }

  /** The reusable output of the generator. */
  private static final class Buffer extends OutputStream {
    byte[] bytes = new byte[1024];
    int size;

    @Override public void write(int b) {
      if (size == bytes.length) {
        bytes = Arrays.copyOf(bytes, 2 * bytes.length);
      }
      bytes[size++] = (byte) b;
    }

    @Override public void write(byte[] b, int off, int len) {
      if (bytes.length - size < len) {
        bytes = Arrays.copyOf(bytes, Math.max(2 * bytes.length, size + len));
      }
      System.arraycopy(b, off, bytes, size, len);
      size += len;
    }
  }

  private static final long FIRST_MILLIS = -62_167_219_200_000L; // 0000-01-01T00:00:00Z
  private static final long END_MILLIS = 253_402_300_800_000L;   // 10000-01-01T00:00:00Z

  /**
   * Writes {@code Instant.ofEpochMilli(millis).toString()} into {@code out} without allocating,
   * for the years 0000 to 9999: {@code yyyy-MM-ddTHH:mm:ss[.SSS]Z}, the fraction only when the
   * milliseconds are not 0 (the JDK's ISO_INSTANT form). Package-private for tests.
   *
   * @param out room for 24 chars. Modified.
   * @return the number of chars, or 0 for a year outside 0000..9999 (then use {@code Instant})
   */
  static int instantChars(long millis, char[] out) {
    if (millis < FIRST_MILLIS || millis >= END_MILLIS) {
      return 0;
    }
    long day = Math.floorDiv(millis, 86_400_000L);
    int msOfDay = (int) Math.floorMod(millis, 86_400_000L);
    // civil from days (proleptic Gregorian; common practice), as in EventTimes
    long z = day + 719_468;
    long era = (z >= 0 ? z : z - 146_096) / 146_097;
    long doe = z - era * 146_097;
    long yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    long doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    long mp = (5 * doy + 2) / 153;
    int d = (int) (doy - (153 * mp + 2) / 5 + 1);
    int m = (int) (mp < 10 ? mp + 3 : mp - 9);
    int y = (int) (yoe + era * 400 + (m <= 2 ? 1 : 0));
    int secOfDay = msOfDay / 1000;
    int ms = msOfDay % 1000;
    digits(out, 0, y, 4);
    out[4] = '-';
    digits(out, 5, m, 2);
    out[7] = '-';
    digits(out, 8, d, 2);
    out[10] = 'T';
    digits(out, 11, secOfDay / 3600, 2);
    out[13] = ':';
    digits(out, 14, secOfDay / 60 % 60, 2);
    out[16] = ':';
    digits(out, 17, secOfDay % 60, 2);
    int n = 19;
    if (ms != 0) {
      out[n++] = '.';
      digits(out, n, ms, 3);
      n += 3;
    }
    out[n++] = 'Z';
    return n;
  }

  private static void digits(char[] out, int at, int v, int width) {
    for (int k = at + width - 1; k >= at; k--) {
      out[k] = (char) ('0' + v % 10);
      v /= 10;
    }
  }

  private static void writeSource(JsonGenerator g, long partition, long offset) throws IOException {
    if (partition < 0 && offset < 0) {
      return;
    }
    g.writeFieldName(K_SOURCE);
    g.writeStartObject();
    if (partition >= 0) {
      g.writeFieldName(K_PARTITION);
      g.writeNumber(partition);
    }
    if (offset >= 0) {
      g.writeFieldName(K_OFFSET);
      g.writeNumber(offset);
    }
    g.writeEndObject();
  }

  private static void number(JsonGenerator g, SerializedString name, double v) throws IOException {
    g.writeFieldName(name);
    if (Double.isNaN(v) || Double.isInfinite(v)) {
      g.writeNull();
    } else {
      g.writeNumber(v);
    }
  }

  /** The schema's field names, encoded once per schema (the per-record path writes the bytes). */
  private SerializedString[] fieldNames(RecordSchema schema) {
    if (schema != namesFor) {
      SerializedString[] n = new SerializedString[schema.size()];
      for (int i = 0; i < n.length; i++) {
        n[i] = new SerializedString(schema.name(i));
      }
      names = n;
      namesFor = schema;
      echoSlots = echoSlots(schema);
    }
    return names;
  }

  /** The slots echoed under {@code fields}: the configured names in order, or every text and flag field. */
  private int[] echoSlots(RecordSchema schema) {
    return echoSlots(schema, echo);
  }

  /**
   * The slots of {@code schema} echoed for {@code outputs.echo_fields}: the named text and flag
   * fields in the order named (names of other types or absent from the schema are skipped), or
   * every text and flag field when {@code echo} is null. Shared by every output encoding.
   *
   * @param echo the configured names, or null for the default. Not modified.
   */
  public static int[] echoSlots(RecordSchema schema, String[] echo) {
    int[] out = new int[schema.size()];
    int k = 0;
    if (echo == null) {
      for (int i = 0; i < schema.size(); i++) {
        if (schema.type(i) == FieldType.TEXT || schema.type(i) == FieldType.FLAG) {
          out[k++] = i;
        }
      }
    } else {
      for (String name : echo) {
        for (int i = 0; i < schema.size(); i++) {
          if (schema.name(i).equals(name) && (schema.type(i) == FieldType.TEXT || schema.type(i) == FieldType.FLAG)) {
            out[k++] = i;
            break;
          }
        }
      }
    }
    return Arrays.copyOf(out, k);
  }

  /** A prediction number: exact, or rounded to {@link #digits} significant digits. */
  private void rounded(JsonGenerator g, SerializedString name, double v) throws IOException {
    number(g, name, digits == 0 ? v : roundSignificant(v, digits));
  }

  private static final double[] POW10 = {1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14,
      1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};

  /**
   * {@code v} rounded to {@code n} significant digits: the double nearest to {@code m · 10^-k} with
   * {@code m} a whole number of at most {@code n} digits (ties of the scaled value towards positive
   * infinity, as {@code Math.round}, after one rounding of the scaling), so its shortest round-trip text has at most {@code n}
   * significant digits. Powers of ten up to 10^22 are exact doubles (common practice), so the
   * last step is one correctly rounded multiply or divide. Magnitudes whose scaling would need a
   * larger power (below about 10^-8 or at or above 10^22 for 15 digits) and non-finite values are
   * returned unchanged (written exactly). Deterministic: exact comparisons and one rounding. Public
   * so that the Avro outputs (connectors) round exactly as JSON does.
   */
  public static double roundSignificant(double v, int n) {
    if (v == 0 || Double.isNaN(v) || Double.isInfinite(v)) {
      return v;
    }
    double a = Math.abs(v);
    // floor(log2 a) · log10(2) is floor(log10 a) or one less (common practice); settle e with comparisons
    // (StrictMath.log10 here cost 6 % of step + encoding in OutputBuildsAB; this is integer work)
    int e = (int) Math.floor(Math.getExponent(a) * 0.30102999566398114);
    if (e > 22 || e < -22) {
      return v;
    }
    if (e >= 0) {
      if (a < POW10[e]) {
        e--;
      } else if (e == 22 ? a >= 1e23 : a >= POW10[e + 1]) {
        if (e == 22) {
          return v; // 10^23 and up: no exact power of ten left to scale by
        }
        e++;
      }
    } else {
      if (a * POW10[-e] < 1) e--; // a · 10^-e is one rounding, enough to place the boundary for this use
      else if (a * POW10[-e] >= 10) e++;
    }
    int k = n - 1 - e; // scale: m = v · 10^k
    if (k >= 0 && k <= 22) {
      double m = Math.round(v * POW10[k]);
      return m / POW10[k];
    } else if (k < 0 && k >= -22) {
      double m = Math.round(v / POW10[-k]);
      return m * POW10[-k];
    }
    return v;
  }

  private static void number(JsonGenerator g, String name, double v) throws IOException {
    if (Double.isNaN(v) || Double.isInfinite(v)) {
      g.writeNullField(name);
    } else {
      g.writeNumberField(name, v);
    }
  }

  private static void time(JsonGenerator g, String name, long millis) throws IOException {
    if (millis == Long.MIN_VALUE || millis == Long.MAX_VALUE) {
      g.writeNullField(name);
    } else {
      g.writeStringField(name, Instant.ofEpochMilli(millis).toString());
    }
  }
}
