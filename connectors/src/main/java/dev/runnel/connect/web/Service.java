package dev.runnel.connect.web;

import dev.runnel.connect.kafka.ExactlyOnceRunner;
import java.util.Map;

/**
 * What the web server asks of the pipeline running in this process, for {@code /metrics}, {@code /ready}
 * and {@code /forecast} (docs/operations.md). Implemented where the runner and its processors are wired
 * ({@code launch}); every method may be called from any thread.
 */
public interface Service {

  /** The runner (counters, readiness, lag). */
  ExactlyOnceRunner runner();

  /** Rejects sent so far, by reason id. */
  Map<String, Long> rejectsByReason();

  /**
   * Per input partition held and restored: its model's noise sd, recent MAE and active alarms, each read
   * after a whole record.
   */
  Map<Integer, PartitionStats> partitionStats();

  /**
   * One partition's model as the metrics show it.
   *
   * @param noiseSd the noise standard deviation, in the target's unit (NaN before the first estimate)
   * @param recentMae the recent mean absolute a-priori error, in the target's unit (NaN before the first)
   * @param activeAlarms drift alarms raised now
   */
  record PartitionStats(double noiseSd, double recentMae, int activeAlarms) { }

  /**
   * Forecasts one record read-only with the model of the partition that owns its key.
   *
   * @param record one record's JSON bytes, without its target. Not modified.
   * @param arrivalMillis the request's arrival (the event time when none is configured)
   */
  Answer forecast(byte[] record, long arrivalMillis);

  /** What a forecast request got. */
  enum Outcome {
    /** Forecast: {@link Answer#prediction()} holds the prediction record. */
    FORECAST(200),
    /** The record is bad: {@link Answer#reason()} is the stream's reject reason id. */
    REJECTED(400),
    /** The partition that owns the key is held by another instance. */
    NOT_HELD(421),
    /** The partition is held but not restored yet, or the runner does not serve. */
    NOT_READY(503);

    private final int httpStatus;

    Outcome(int httpStatus) { this.httpStatus = httpStatus; }

    /** The HTTP status of a request holding only this answer. */
    public int httpStatus() { return httpStatus; }
  }

  /**
   * @param outcome what happened
   * @param partition the input partition that owns the record's key, -1 when it could not be told
   * @param reason the reject reason id (REJECTED), else null
   * @param detail what was wrong or why not, in words; "" when forecast
   * @param prediction the prediction record's JSON bytes (FORECAST), else null
   */
  record Answer(Outcome outcome, int partition, String reason, String detail, byte[] prediction) { }
}
