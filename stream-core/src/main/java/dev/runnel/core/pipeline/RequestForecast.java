package dev.runnel.core.pipeline;

import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.feature.Featurizer;
import dev.runnel.core.model.RlsModel;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.JsonRecordDecoder;
import dev.runnel.core.record.RejectReason;
import java.util.Arrays;

/**
 * Forecasts for records asked for outside the stream (the web server's {@code /forecast}): the same
 * decoding, checks, encoding, prediction and interval as a record without its target on the stream
 * ({@link PipelineStep}), but read only. Nothing of the step changes: not its counts, not its clock,
 * not its pending forecasts (a request here is never remembered or settled). A record that carries
 * its target is forecast all the same; the target is not learned from.
 *
 * <p>Owns its decoder, record and scratch arrays. Thread contract: one call at a time, and never while
 * the step processes a record (the caller serializes the two, e.g. with one lock): the model's
 * forecast uses its own scratch arrays and caches (the reciprocal pivots), which are recomputed from
 * the state alone. Between whole records the model holds no pending re-basing (a training record's
 * update applies it), so reading it changes no bits (checked by the connectors' request test).
 */
public final class RequestForecast {

  private final PipelineStep step;
  private final PipelineConfig config;
  private final JsonRecordDecoder decoder;
  private final EventRecord record;
  private final Prediction prediction = new Prediction();
  private final int[] entitySlots;
  private final int targetTimeSlot;
  private final double[] aPriori = new double[2];
  private double[] row = new double[8];
  private String detail = "";

  /**
   * @param step the step whose current model answers. Not modified by this class.
   */
  public RequestForecast(PipelineStep step) {
    this.step = step;
    this.config = step.config();
    PipelineConfig.Input in = config.input();
    this.decoder = in.eventTime().isPresent()
        ? new JsonRecordDecoder(in.schema(), in.limits(), in.eventTime().get().field(), in.eventTime().get().format())
        : new JsonRecordDecoder(in.schema(), in.limits());
    this.record = new EventRecord(in.schema());
    PipelineConfig.Forecast fc = in.forecast();
    if (fc.enabled()) {
      entitySlots = new int[fc.entityFields().size()];
      for (int i = 0; i < entitySlots.length; i++) {
        entitySlots[i] = in.schema().slot(fc.entityFields().get(i));
      }
      targetTimeSlot = in.schema().slot(fc.targetTimeField());
    } else {
      entitySlots = new int[0];
      targetTimeSlot = -1;
    }
  }

  /**
   * Forecasts one record given as JSON bytes.
   *
   * @param buf the bytes. Not modified.
   * @param fallbackTimeMillis the event time when the configuration names no time field (the request's arrival)
   * @param partition the partition whose model answers, written into the prediction's source
   * @return null when forecast ({@link #prediction()}, {@link #record()}), else the reject reason the stream
   *     would give ({@link #lastDetail()} says more)
   */
  public RejectReason forecast(byte[] buf, int off, int len, long fallbackTimeMillis, long partition) {
    detail = "";
    RejectReason reason = decoder.decode(buf, off, len, record);
    if (reason != null) {
      detail = decoder.lastDetail();
      return reason;
    }
    long t;
    if (config.input().eventTime().isPresent()) {
      if (!record.hasEventTime()) {
        detail = "field " + config.input().eventTime().get().field() + " (the event time): missing";
        return RejectReason.MISSING_FIELD;
      }
      t = record.eventTimeMillis();
    } else {
      t = fallbackTimeMillis;
    }
    Featurizer featurizer = step.featurizer();
    reason = featurizer.check(record);
    if (reason != null) {
      detail = featurizer.lastDetail();
      return reason;
    }
    long target = t;
    boolean stamped = step.remembersForecasts();
    if (stamped) {
      for (int slot : entitySlots) {
        if (!record.present(slot) || record.textLength(slot) < 0) {
          detail = "field " + config.input().schema().name(slot) + " (an entity field, input.forecast.entity_fields): missing";
          return RejectReason.MISSING_FIELD;
        }
      }
      if (record.present(targetTimeSlot)) {
        target = record.timeMillis(targetTimeSlot);
      }
    }
    int need = featurizer.maxDimension();
    if (row.length < need) {
      row = Arrays.copyOf(row, need);
    }
    featurizer.encode(record, target, row);
    RlsModel model = step.model();
    long now = step.clock().nowMillis();
    Prediction p = prediction;
    p.eventTimeMillis = t;
    p.sourcePartition = partition;
    p.sourceOffset = -1;
    p.actual = Double.NaN;
    p.stamped = stamped;
    p.targetTimeMillis = target;
    p.targetPassed = stamped && now != Long.MIN_VALUE && target <= now;
    p.layoutVersion = featurizer.layoutVersion();
    double noise = model.noiseSd();
    boolean warm = model.ready() && !Double.isNaN(noise);
    p.status = warm ? Prediction.Status.FORECAST : Prediction.Status.WARMING_UP;
    if (warm) {
      step.forecastRow(row, aPriori);
      double half = model.settings().intervalZ() * noise * Math.sqrt(1.0 + aPriori[0]);
      p.predicted = aPriori[1];
      p.low = p.predicted - half;
      p.high = p.predicted + half;
    } else {
      p.predicted = Double.NaN;
      p.low = Double.NaN;
      p.high = Double.NaN;
    }
    return null;
  }

  /** The last forecast (reused: read it before the next call). */
  public Prediction prediction() { return prediction; }

  /** The last record decoded (reused). */
  public EventRecord record() { return record; }

  /** What was wrong with the last rejected record. */
  public String lastDetail() { return detail; }
}
