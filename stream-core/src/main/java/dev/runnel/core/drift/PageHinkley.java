package dev.runnel.core.drift;

import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;

/**
 * Two-sided Page–Hinkley test for a change in the mean of a stream of values. One writer thread;
 * {@link #add} allocates nothing.
 *
 * <p>For the values {@code x_1..x_T} since the last reset, with running mean {@code x̄_T}:
 * <pre>
 *   U_T = Σ (x_t − x̄_t − δ),  alarm "up"   when U_T − min_{t≤T} U_t > λ
 *   D_T = Σ (x_t − x̄_t + δ),  alarm "down" when max_{t≤T} D_t − D_T > λ
 * </pre>
 * After an alarm (or before the first {@code warmup} values) the test only learns the mean;
 * an alarm resets the sums and the mean, so the test then watches the new level.
 *
 * <p>Implementation notes: E. S. Page, "Continuous inspection schemes", Biometrika 41 (1954)
 * 100–115, and D. V. Hinkley, "Inference about the change-point from cumulative sum tests",
 * Biometrika 58 (1971) 509–523 (references named from memory). The allowance δ sets the
 * smallest shift worth finding (a shift of Δ in the mean makes the statistic grow by about
 * Δ − δ per value); λ trades delay against false alarms: for independent values of sd σ the
 * chance that a stationary stream ever climbs λ in one excursion is about exp(−2δλ/σ²)
 * (Wald's approximation for a random walk with drift −δ, common practice).
 */
public final class PageHinkley {

  /** Which way the level moved when the test fired. */
  public enum Direction {
    /** No alarm. */
    NONE,
    /** The mean went up. */
    UP,
    /** The mean went down. */
    DOWN
  }

  private final double allowance;
  private final double threshold;
  private final long warmup;

  private long count;
  private double mean;
  private double up;
  private double upMin;
  private double down;
  private double downMax;
  private double lastFireStatistic = Double.NaN;
  private double lastFireMean = Double.NaN;

  /**
   * @param allowance δ, at least 0
   * @param threshold λ, greater than 0
   * @param warmup values after a reset before the test may fire, at least 1
   * @throws IllegalArgumentException if a parameter is outside its range
   */
  public PageHinkley(double allowance, double threshold, long warmup) {
    if (!(allowance >= 0) || Double.isInfinite(allowance)) {
      throw new IllegalArgumentException("drift.error_allowance must be a finite number of at least 0, got " + allowance);
    }
    if (!(threshold > 0) || Double.isInfinite(threshold)) {
      throw new IllegalArgumentException("drift.error_threshold must be a finite number greater than 0, got " + threshold);
    }
    if (warmup < 1) {
      throw new IllegalArgumentException("drift.error_warmup_records must be at least 1, got " + warmup);
    }
    this.allowance = allowance;
    this.threshold = threshold;
    this.warmup = warmup;
  }

  /**
   * Adds one value.
   *
   * @param x the value; must be finite (the caller filters)
   * @return the direction of the change if the test fired on this value (and was reset), else
   *     {@link Direction#NONE}
   */
  public Direction add(double x) {
    count++;
    mean += (x - mean) / count;
    if (count <= warmup) {
      return Direction.NONE;
    }
    up += x - mean - allowance;
    if (up < upMin) {
      upMin = up;
    }
    down += x - mean + allowance;
    if (down > downMax) {
      downMax = down;
    }
    Direction d = Direction.NONE;
    if (up - upMin > threshold) {
      d = Direction.UP;
    } else if (downMax - down > threshold) {
      d = Direction.DOWN;
    }
    if (d != Direction.NONE) {
      lastFireStatistic = d == Direction.UP ? up - upMin : downMax - down;
      lastFireMean = mean;
      reset();
    }
    return d;
  }

  /** Forgets everything (also done after each alarm). */
  public void reset() {
    count = 0;
    mean = 0;
    up = 0;
    upMin = 0;
    down = 0;
    downMax = 0;
  }

  /** The "up" statistic {@code U_T − min U_t} (0 during warm-up). */
  public double upStatistic() { return up - upMin; }

  /** The "down" statistic {@code max D_t − D_T} (0 during warm-up). */
  public double downStatistic() { return downMax - down; }

  /** The running mean since the last reset (0 before the first value). */
  public double mean() { return mean; }

  /** The statistic when the test last fired (NaN before the first alarm). */
  public double lastFireStatistic() { return lastFireStatistic; }

  /** The running mean just before the test last fired (NaN before the first alarm). */
  public double lastFireMean() { return lastFireMean; }

  /** Values since the last reset. */
  public long count() { return count; }

  public double allowance() { return allowance; }

  public double threshold() { return threshold; }

  /** Writes the whole state (not the parameters, which come from the configuration). */
  public void writeTo(DataOutput out) throws IOException {
    out.writeLong(count);
    out.writeDouble(mean);
    out.writeDouble(up);
    out.writeDouble(upMin);
    out.writeDouble(down);
    out.writeDouble(downMax);
    out.writeDouble(lastFireStatistic);
    out.writeDouble(lastFireMean);
  }

  /** Reads a state written by {@link #writeTo}. */
  public void readFrom(DataInput in) throws IOException {
    count = DriftMonitor.count(in.readLong(), "error test values");
    mean = in.readDouble();
    up = in.readDouble();
    upMin = in.readDouble();
    down = in.readDouble();
    downMax = in.readDouble();
    lastFireStatistic = in.readDouble();
    lastFireMean = in.readDouble();
  }
}
