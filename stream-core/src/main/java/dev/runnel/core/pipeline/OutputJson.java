package dev.runnel.core.pipeline;

import com.fasterxml.jackson.core.JsonEncoding;
import com.fasterxml.jackson.core.JsonFactory;
import com.fasterxml.jackson.core.JsonGenerator;
import com.fasterxml.jackson.core.util.ByteArrayBuilder;
import dev.runnel.core.drift.DriftAlarm;
import dev.runnel.core.drift.DriftStatus;
import dev.runnel.core.feature.Featurizer;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.FieldType;
import dev.runnel.core.record.RecordSchema;
import dev.runnel.core.record.RejectReason;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.time.Instant;

/**
 * Writes the published records — predictions, coefficient snapshots, rejects — as JSON bytes, in
 * the layouts documented in {@code docs/formats.md} (format version {@link #FORMAT_VERSION}).
 * Numbers that are not defined (NaN) are written as {@code null}. One thread; reuses its buffer.
 */
public final class OutputJson {

  /** Version of the published record layouts. */
  public static final int FORMAT_VERSION = 1;
  /** Raw bytes of a rejected record are truncated to this many bytes on the rejects output. */
  public static final int MAX_RAW_BYTES = 4096;

  private static final JsonFactory FACTORY = new JsonFactory();

  private final String pipeline;
  private final double intervalLevel;
  private final ByteArrayBuilder buffer = new ByteArrayBuilder(512);

  /**
   * @param pipeline the pipeline name written into every record
   * @param intervalLevel the configured interval level, written beside each interval
   */
  public OutputJson(String pipeline, double intervalLevel) {
    this.pipeline = pipeline;
    this.intervalLevel = intervalLevel;
  }

  /**
   * One prediction. The record's text and flag fields are echoed under {@code fields}, so a
   * consumer can tell which entity and time a forecast is for.
   *
   * @param p the prediction. Not modified.
   * @param record the decoded record it was made for. Not modified.
   * @return new bytes
   */
  public byte[] prediction(Prediction p, EventRecord record) {
    try (JsonGenerator g = start()) {
      g.writeStartObject();
      g.writeNumberField("format", FORMAT_VERSION);
      g.writeStringField("pipeline", pipeline);
      g.writeStringField("status", p.status().id());
      writeSource(g, p.sourcePartition(), p.sourceOffset());
      g.writeStringField("event_time", Instant.ofEpochMilli(p.eventTimeMillis()).toString());
      RecordSchema schema = record.schema();
      g.writeObjectFieldStart("fields");
      for (int i = 0; i < schema.size(); i++) {
        if (!record.present(i)) {
          continue;
        }
        FieldType t = schema.type(i);
        if (t == FieldType.TEXT) {
          g.writeStringField(schema.name(i), record.text(i));
        } else if (t == FieldType.FLAG) {
          g.writeBooleanField(schema.name(i), record.flag(i));
        }
      }
      g.writeEndObject();
      number(g, "predicted", p.predicted());
      number(g, "low", p.low());
      number(g, "high", p.high());
      g.writeNumberField("level", intervalLevel);
      number(g, "actual", p.actual());
      number(g, "error", p.error());
      g.writeNumberField("layout_version", p.layoutVersion());
      g.writeEndObject();
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
    return finish();
  }

  /**
   * One rejected record.
   *
   * @param raw the record's bytes. Not modified.
   * @return new bytes
   */
  public byte[] reject(RejectReason reason, String detail, long partition, long offset, byte[] raw, int off, int len) {
    try (JsonGenerator g = start()) {
      g.writeStartObject();
      g.writeNumberField("format", FORMAT_VERSION);
      g.writeStringField("pipeline", pipeline);
      g.writeStringField("reason", reason.id());
      g.writeStringField("detail", detail == null ? "" : detail);
      writeSource(g, partition, offset);
      int keep = Math.min(len, MAX_RAW_BYTES);
      g.writeNumberField("raw_length", len);
      g.writeBooleanField("raw_truncated", keep < len);
      // the raw bytes as text (invalid UTF-8 is replaced); truncation never splits the JSON output
      g.writeStringField("raw", new String(raw, off, keep, StandardCharsets.UTF_8));
      g.writeEndObject();
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
    return finish();
  }

  /**
   * One coefficient snapshot.
   *
   * @param partition the source partition the model belongs to (-1 if none)
   * @return new bytes
   */
  public byte[] snapshot(Snapshot s, long partition) {
    try (JsonGenerator g = start()) {
      g.writeStartObject();
      g.writeNumberField("format", Snapshot.FORMAT_VERSION);
      g.writeStringField("pipeline", pipeline);
      g.writeNumberField("partition", partition);
      g.writeNumberField("index", s.index());
      g.writeStringField("event_time", s.eventTimeMillis() == Long.MIN_VALUE ? null
          : Instant.ofEpochMilli(s.eventTimeMillis()).toString());
      g.writeNumberField("records", s.records());
      g.writeNumberField("trained", s.trained());
      g.writeNumberField("forecasts", s.forecasts());
      g.writeNumberField("rejected", s.rejected());
      g.writeNumberField("layout_version", s.layoutVersion());
      g.writeBooleanField("ready", s.ready());
      number(g, "noise_sd", s.noiseSd());
      number(g, "residual_sd", s.residualSd());
      number(g, "effective_sample_size", s.effectiveSampleSize());
      Snapshot.Metrics m = s.metrics();
      g.writeObjectFieldStart("metrics");
      g.writeNumberField("count", m.count());
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
      g.writeEndObject();
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
        number(g, "moved_se", c.movedSe());
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
        g.writeNumberField("candidates", v.candidates());
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
      g.writeArrayFieldStart("scalers");
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
      g.writeEndObject();
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
    return finish();
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
    buffer.reset();
    return FACTORY.createGenerator(buffer, JsonEncoding.UTF8);
  }

  private byte[] finish() {
    return buffer.toByteArray();
  }

  private static void writeSource(JsonGenerator g, long partition, long offset) throws IOException {
    if (partition < 0 && offset < 0) {
      return;
    }
    g.writeObjectFieldStart("source");
    if (partition >= 0) {
      g.writeNumberField("partition", partition);
    }
    if (offset >= 0) {
      g.writeNumberField("offset", offset);
    }
    g.writeEndObject();
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
