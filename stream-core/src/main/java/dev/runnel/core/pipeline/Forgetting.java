package dev.runnel.core.pipeline;

/**
 * Turns the configured forgetting into the per-record factor λ handed to the model: either a
 * fixed factor per record, or {@code λ = 2^(-Δt/h)} for an event-time half-life {@code h}, so
 * that busy hours do not forget faster than quiet ones. Out-of-order events (Δt &lt; 0) do not
 * forget; the clock only moves forward. One writer thread.
 */
final class Forgetting {

  private final double factor;
  private final double halfLifeMillis;
  private long clockMillis = Long.MIN_VALUE;

  /**
   * @param factor per-record factor in (0, 1], used when {@code halfLifeMillis} is not positive
   * @param halfLifeMillis event-time half-life in milliseconds, or 0 for a per-record factor
   */
  Forgetting(double factor, double halfLifeMillis) {
    this.factor = factor;
    this.halfLifeMillis = halfLifeMillis;
  }

  /** The factor for a training record with this event time; advances the clock. */
  double lambdaFor(long eventTimeMillis) {
    if (halfLifeMillis <= 0) {
      return factor;
    }
    if (clockMillis == Long.MIN_VALUE || eventTimeMillis <= clockMillis) {
      if (clockMillis == Long.MIN_VALUE) {
        clockMillis = eventTimeMillis;
      }
      return 1.0;
    }
    double dt = (double) (eventTimeMillis - clockMillis);
    clockMillis = eventTimeMillis;
    return Math.pow(2.0, -dt / halfLifeMillis);
  }

  long clockMillis() { return clockMillis; }

  void setClockMillis(long clockMillis) { this.clockMillis = clockMillis; }
}
