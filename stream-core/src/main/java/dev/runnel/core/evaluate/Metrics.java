package dev.runnel.core.evaluate;

/**
 * Prequential error metrics of a set of scored records.
 *
 * @param count scored records
 * @param mae mean absolute error (NaN when count is 0)
 * @param rmse root mean squared error
 * @param bias mean of actual − predicted (positive: the model under-predicts)
 * @param coverage share of records whose prediction interval held the actual value
 */
public record Metrics(long count, double mae, double rmse, double bias, double coverage) {

  /** Metrics of no records. */
  public static final Metrics EMPTY = new Metrics(0, Double.NaN, Double.NaN, Double.NaN, Double.NaN);

  /** A mutable sum of errors, one writer thread. */
  public static final class Accumulator {
    private long count;
    private double sumAbs;
    private double sumSq;
    private double sumErr;
    private long covered;

    /** Adds one scored record; {@code error} must be finite. */
    public void add(double error, boolean wasCovered) {
      count++;
      sumAbs += Math.abs(error);
      sumSq += error * error;
      sumErr += error;
      if (wasCovered) {
        covered++;
      }
    }

    /** The metrics so far. */
    public Metrics metrics() {
      if (count == 0) {
        return EMPTY;
      }
      return new Metrics(count, sumAbs / count, Math.sqrt(sumSq / count), sumErr / count, (double) covered / count);
    }
  }
}
