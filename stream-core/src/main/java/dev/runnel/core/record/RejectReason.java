package dev.runnel.core.record;

/**
 * Why a record was not used. Each reason has a stable id that appears on the rejects output;
 * ids never change meaning once published. New reasons are added at the end: checkpoints keep the
 * per-reason counters in this order.
 */
public enum RejectReason {
  /** The bytes are not one JSON object. */
  MALFORMED_JSON("malformed_json"),
  /** A declared field (or the target) that the features need is absent or null. */
  MISSING_FIELD("missing_field"),
  /** A field has the wrong JSON type, e.g. a string where a number is declared. */
  WRONG_TYPE("wrong_type"),
  /** A number is NaN or infinite, or written as such. */
  NOT_FINITE("not_finite"),
  /** A number's magnitude exceeds the configured bound. */
  OUT_OF_RANGE("out_of_range"),
  /** The event time cannot be parsed. */
  BAD_TIME("bad_time"),
  /** The event time is outside the allowed range of years. */
  ABSURD_TIME("absurd_time"),
  /** A string field is longer than the configured bound. */
  TOO_LONG("too_long"),
  /** The whole record is larger than the configured bound. */
  RECORD_TOO_LARGE("record_too_large"),
  /** The model refused the update because a state would have become non-finite. */
  MODEL_REFUSED("model_refused"),
  /**
   * The event time is more than {@code input.clock.max_ahead} from the stream clock and no run of
   * {@code input.clock.confirm_records} agreeing records has confirmed it yet (docs/model.md).
   */
  TIME_JUMP("time_jump"),
  /** A declared field occurs more than once in the record (which value is meant is unknown). */
  DUPLICATE_FIELD("duplicate_field"),
  /** A declared text holds an unpaired UTF-16 surrogate (escaped or encoded): it is not Unicode text. */
  NOT_UNICODE("not_unicode"),
  /**
   * An epoch event time looks written in the other unit: epoch_millis that lands before 1973
   * (seconds, most likely), or epoch_seconds that lands after {@code max_year} while its value read
   * as milliseconds would be accepted. The fix is the key {@code input.event_time.format}.
   */
  WRONG_TIME_UNIT("wrong_time_unit"),
  /**
   * An actual whose target time is more than {@code input.forecast.max_actual_lag} behind the
   * stream clock (docs/forecasting.md): too late to learn from or to settle anything.
   */
  ACTUAL_TOO_LATE("actual_too_late"),
  /**
   * An actual for an (entity, target time) already learned, with the same value: a repeat (a
   * replayed or duplicated feed), not learned twice (docs/forecasting.md).
   */
  REPEATED_ACTUAL("repeated_actual"),
  /**
   * An actual for an (entity, target time) already learned, with another value, under
   * {@code input.forecast.corrections: reject}: the value learned first stays (docs/forecasting.md).
   */
  CORRECTED_ACTUAL("corrected_actual"),
  /**
   * The target is outside the domain of {@code model.target_transform} (≤ -1 for {@code log1p},
   * below 0 for {@code sqrt}) or below 0 with {@code model.target_non_negative: true}.
   */
  TARGET_OUT_OF_DOMAIN("target_out_of_domain"),
  /**
   * Processing the record threw (a defect, not a data rule): the runner or replay set the record
   * aside and went on with the state it had before the record. Written by connectors, never by the step.
   */
  PROCESSING_FAILED("processing_failed");

  private final String id;

  RejectReason(String id) { this.id = id; }

  /** The stable identifier written to the rejects output. */
  public String id() { return id; }
}
