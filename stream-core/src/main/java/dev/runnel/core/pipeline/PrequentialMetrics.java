package dev.runnel.core.pipeline;

import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;

/**
 * Prequential (test-then-train) error metrics of a priori predictions: mean absolute error, root
 * mean squared error, bias (mean of actual − predicted) and interval coverage, both over the whole
 * stream and over a fading window. One writer thread.
 *
 * <p>Implementation notes: the fading window weights the i-th most recent error by
 * {@code 2^(-i/h)} for a half-life of {@code h} records; each metric keeps a decayed sum and a
 * decayed weight so the early values are not biased towards zero (an exponentially weighted mean
 * normalized by its total weight, common practice).
 */
public final class PrequentialMetrics {

  private final double decay;

  private long count;
  private double sumAbs;
  private double sumSq;
  private double sumErr;
  private long covered;

  private double wTotal;
  private double wAbs;
  private double wSq;
  private double wErr;
  private double wCovered;

  /**
   * @param halfLifeRecords half-life of the fading window in records; must be positive
   * @throws IllegalArgumentException if {@code halfLifeRecords} is not positive and finite
   */
  public PrequentialMetrics(double halfLifeRecords) {
    if (!(halfLifeRecords > 0) || Double.isInfinite(halfLifeRecords)) {
      throw new IllegalArgumentException(
          "outputs.metrics_half_life_records must be a positive number, got " + halfLifeRecords);
    }
    this.decay = StrictMath.pow(2.0, -1.0 / halfLifeRecords);
  }

  /**
   * Adds one scored record.
   *
   * @param error actual − predicted; must be finite
   * @param covered whether the prediction interval held the actual value
   */
  public void add(double error, boolean covered) {
    double a = Math.abs(error);
    double s = error * error;
    count++;
    sumAbs += a;
    sumSq += s;
    sumErr += error;
    if (covered) {
      this.covered++;
    }
    wTotal = decay * wTotal + 1.0;
    wAbs = decay * wAbs + a;
    wSq = decay * wSq + s;
    wErr = decay * wErr + error;
    wCovered = decay * wCovered + (covered ? 1.0 : 0.0);
  }

  /** Number of scored records with an actual value. */
  public long count() { return count; }

  public double mae() { return count == 0 ? Double.NaN : sumAbs / count; }

  public double rmse() { return count == 0 ? Double.NaN : Math.sqrt(sumSq / count); }

  public double bias() { return count == 0 ? Double.NaN : sumErr / count; }

  public double coverage() { return count == 0 ? Double.NaN : (double) covered / count; }

  public double recentMae() { return wTotal == 0 ? Double.NaN : wAbs / wTotal; }

  public double recentRmse() { return wTotal == 0 ? Double.NaN : Math.sqrt(wSq / wTotal); }

  public double recentBias() { return wTotal == 0 ? Double.NaN : wErr / wTotal; }

  public double recentCoverage() { return wTotal == 0 ? Double.NaN : wCovered / wTotal; }

  /** Writes the whole state. */
  public void writeTo(DataOutput out) throws IOException {
    out.writeLong(count);
    out.writeDouble(sumAbs);
    out.writeDouble(sumSq);
    out.writeDouble(sumErr);
    out.writeLong(covered);
    out.writeDouble(wTotal);
    out.writeDouble(wAbs);
    out.writeDouble(wSq);
    out.writeDouble(wErr);
    out.writeDouble(wCovered);
  }

  /** Reads a state written by {@link #writeTo}; the half-life comes from the configuration. */
  public void readFrom(DataInput in) throws IOException {
    count = in.readLong();
    sumAbs = in.readDouble();
    sumSq = in.readDouble();
    sumErr = in.readDouble();
    covered = in.readLong();
    wTotal = in.readDouble();
    wAbs = in.readDouble();
    wSq = in.readDouble();
    wErr = in.readDouble();
    wCovered = in.readDouble();
  }
}
