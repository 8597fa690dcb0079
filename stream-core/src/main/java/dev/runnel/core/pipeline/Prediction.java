package dev.runnel.core.pipeline;

/**
 * The outcome of one input record that was not rejected: the a priori prediction (made before the
 * model learned from this record), its interval and, when the record carried its target, the
 * actual value and the error. Mutable and reused by {@link PipelineStep}: read it inside the
 * callback, copy what you keep.
 */
public final class Prediction {

  /** What kind of prediction this is. Ids are stable: they appear on the predictions output. */
  public enum Status {
    /** The record carried its target: scored a priori, then learned from. */
    SCORED("scored"),
    /** The record had no target (a request for a prediction): predicted only, the model is unchanged. Id {@code no_target} (format 2; {@code forecast} in format 1). */
    FORECAST("no_target"),
    /**
     * No honest prediction yet: the model has no weights (diffuse start) or no noise estimate to
     * give an interval with (the first training record, also after a restart from the prior); no
     * point value, not counted in the metrics. A record with its target is still learned from.
     */
    WARMING_UP("warming_up");

    private final String id;

    Status(String id) { this.id = id; }

    public String id() { return id; }
  }

  Status status;
  long eventTimeMillis;
  double predicted = Double.NaN;
  double low = Double.NaN;
  double high = Double.NaN;
  double actual = Double.NaN;
  long layoutVersion;
  long sourcePartition = -1;
  long sourceOffset = -1;
  /** Whether {@code input.forecast} is configured, so the times below are published. */
  boolean stamped;
  long targetTimeMillis;
  boolean targetPassed;

  public Status status() { return status; }

  public long eventTimeMillis() { return eventTimeMillis; }

  /**
   * Whether the pipeline has {@code input.forecast}: then the prediction carries an issue time
   * (its event time), a target time and a horizon on the output.
   */
  public boolean stamped() { return stamped; }

  /** When the prediction was issued: the event time. */
  public long issueTimeMillis() { return eventTimeMillis; }

  /** The time whose value is predicted: the target-time field, else the event time. */
  public long targetTimeMillis() { return targetTimeMillis; }

  /** Target time minus issue time, in milliseconds. */
  public long horizonMillis() { return targetTimeMillis - eventTimeMillis; }

  /**
   * For a record without its target: whether its target time was at or behind the stream clock
   * when it was issued (the actual may already have come, or come late). False for a record with its target.
   */
  public boolean targetPassed() { return targetPassed; }

  /** The point prediction; NaN while warming up. */
  public double predicted() { return predicted; }

  /** Lower end of the prediction interval; NaN while warming up. */
  public double low() { return low; }

  /** Upper end of the prediction interval; NaN while warming up. */
  public double high() { return high; }

  /** The actual target value; NaN for a forecast request. */
  public double actual() { return actual; }

  /** actual − predicted; NaN when either is missing. */
  public double error() { return actual - predicted; }

  /** Whether the interval held the actual value (false when either is missing). */
  public boolean covered() { return actual >= low && actual <= high; }

  /** The layout version the prediction was computed with. */
  public long layoutVersion() { return layoutVersion; }

  /** The source partition the caller gave, or -1. */
  public long sourcePartition() { return sourcePartition; }

  /** The source offset (or line number) the caller gave, or -1. */
  public long sourceOffset() { return sourceOffset; }
}
