package dev.runnel.core.pipeline;

/**
 * A forecast issued ahead and settled by its actual (docs/forecasting.md): the forecast and its
 * interval as issued, the actual that arrived for the same entity and target time, the error and
 * the horizon. The entity is the actual record's entity fields (they equal the request's exactly).
 * Mutable and reused by {@link PipelineStep}: read it inside the callback, copy what you keep.
 */
public final class SettledForecast {

  long issueTimeMillis;
  long targetTimeMillis;
  double forecast;
  double low;
  double high;
  double actual;
  long requestPartition;
  long requestOffset;
  long actualPartition;
  long actualOffset;
  boolean correction;
  double replacedActual = Double.NaN;
  /** The slots of the entity fields in the record's schema (set once by the step). Not modified. */
  int[] entitySlots = new int[0];

  /** How many entity fields the forecast has (their slots: {@link #entitySlot}). */
  public int entityFieldCount() { return entitySlots.length; }

  /** The record slot of entity field {@code i} (0 ≤ i < {@link #entityFieldCount()}). */
  public int entitySlot(int i) { return entitySlots[i]; }

  /** When the forecast was issued: the request's event time. */
  public long issueTimeMillis() { return issueTimeMillis; }

  /** The time whose value was forecast. */
  public long targetTimeMillis() { return targetTimeMillis; }

  /** Target time minus issue time, in milliseconds (0 or less for a request whose target had come). */
  public long horizonMillis() { return targetTimeMillis - issueTimeMillis; }

  /** The point forecast as issued. */
  public double forecast() { return forecast; }

  /** Lower end of the interval as issued. */
  public double low() { return low; }

  /** Upper end of the interval as issued. */
  public double high() { return high; }

  /** The actual value that settled it. */
  public double actual() { return actual; }

  /** actual − forecast. */
  public double error() { return actual - forecast; }

  /** Whether the interval held the actual. */
  public boolean covered() { return actual >= low && actual <= high; }

  /** The request's source partition, or -1. */
  public long requestPartition() { return requestPartition; }

  /** The request's source offset (or line number), or -1. */
  public long requestOffset() { return requestOffset; }

  /** The actual's source partition, or -1. */
  public long actualPartition() { return actualPartition; }

  /** The actual's source offset (or line number), or -1. */
  public long actualOffset() { return actualOffset; }

  /**
   * Whether this forecast was settled before and is settled again against a corrected actual
   * ({@code input.forecast.corrections: replace}).
   */
  public boolean correction() { return correction; }

  /** For a correction, the actual it replaced; NaN otherwise. */
  public double replacedActual() { return replacedActual; }
}
