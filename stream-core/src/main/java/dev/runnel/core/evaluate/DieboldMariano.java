package dev.runnel.core.evaluate;

/**
 * The Diebold–Mariano test of equal predictive accuracy of two forecasts of the same series, with
 * a heteroskedasticity-and-autocorrelation-consistent (HAC) variance of the mean loss
 * differential, and the Harvey–Leybourne–Newbold small-sample correction.
 *
 * <p>With errors {@code a_t}, {@code b_t} (t = 1..n) and loss L, the loss differential is
 * {@code d_t = L(a_t) − L(b_t)}; {@code d̄} its mean. The long-run variance of d is estimated by
 * the Newey–West Bartlett-kernel estimator with lag ℓ:
 * <pre>
 *   γ_k = (1/n) Σ_{t=k+1..n} (d_t − d̄)(d_{t−k} − d̄)
 *   S   = γ_0 + 2 Σ_{k=1..ℓ} (1 − k/(ℓ+1)) γ_k
 *   DM  = d̄ / √(S/n)          two-sided p-value from N(0, 1)
 * </pre>
 * The corrected statistic is {@code DM* = DM · √((n + 1 − 2h + h(h−1)/n)/n)} for h-step forecasts,
 * with its p-value from Student's t with n − 1 degrees of freedom. A negative statistic means the
 * first forecast has the lower loss.
 *
 * <p>Sources: F. X. Diebold and R. S. Mariano (1995), "Comparing Predictive Accuracy", Journal of
 * Business &amp; Economic Statistics 13(3), 253–263; W. K. Newey and K. D. West (1987), "A Simple,
 * Positive Semi-Definite, Heteroskedasticity and Autocorrelation Consistent Covariance Matrix",
 * Econometrica 55(3), 703–708 (the Bartlett kernel, which keeps S ≥ 0); D. Harvey, S. Leybourne and
 * P. Newbold (1997), "Testing the equality of prediction mean squared errors", International
 * Journal of Forecasting 13(2), 281–291. Default lag rule: ℓ = floor(4 (n/100)^(2/9)) (the
 * Newey–West rule of thumb, common practice), or at least h − 1 for h-step forecasts.
 */
public final class DieboldMariano {

  /**
   * The outcome of one test.
   *
   * @param loss the loss compared
   * @param n pairs of errors used
   * @param lag the HAC lag ℓ
   * @param horizon the forecast horizon h used in the correction
   * @param meanLossA mean loss of the first forecast
   * @param meanLossB mean loss of the second forecast
   * @param meanDifference d̄ = mean of L(a) − L(b)
   * @param longRunVariance S, the HAC long-run variance of d
   * @param statistic DM; 0 when every d_t is 0; ±Infinity when d is a non-zero constant
   * @param pValue two-sided p-value of DM from N(0, 1)
   * @param correctedStatistic DM*, with the Harvey–Leybourne–Newbold correction
   * @param correctedPValue two-sided p-value of DM* from Student's t with n − 1 degrees of freedom
   */
  public record Result(Loss loss, int n, int lag, int horizon, double meanLossA, double meanLossB,
                       double meanDifference, double longRunVariance, double statistic, double pValue,
                       double correctedStatistic, double correctedPValue) {

    /** Whether the difference is significant at level {@code alpha} (by the corrected p-value). */
    public boolean significant(double alpha) {
      return correctedPValue < alpha;
    }

    /**
     * A plain-language verdict, e.g. "b has lower squared error than a (p = 0.0012); the
     * difference is significant at the 5% level".
     */
    public String verdict(String nameA, String nameB, double alpha) {
      if (n < 2) {
        return "too few common scored records to compare " + nameA + " and " + nameB;
      }
      if (meanDifference == 0 && longRunVariance == 0) {
        return nameA + " and " + nameB + " made identical errors";
      }
      String better = meanDifference < 0 ? nameA : nameB;
      String worse = meanDifference < 0 ? nameB : nameA;
      String p = formatP(correctedPValue);
      String level = String.format(java.util.Locale.ROOT, "%.0f%%", 100 * alpha);
      if (significant(alpha)) {
        return better + " has lower " + loss.id() + " error than " + worse + " (p " + p
            + "); the difference is significant at the " + level + " level";
      }
      return better + " has slightly lower " + loss.id() + " error than " + worse + " (p " + p
          + "), but the difference is not significant at the " + level + " level: no evidence that either is more accurate";
    }

    private static String formatP(double p) {
      if (p < 1e-12) {
        return "< 1e-12";
      }
      if (p < 0.001) {
        return String.format(java.util.Locale.ROOT, "= %.1e", p);
      }
      return String.format(java.util.Locale.ROOT, "= %.3f", p);
    }
  }

  private DieboldMariano() { }

  /**
   * The default HAC lag for {@code n} observations: floor(4 (n/100)^(2/9)), at least h − 1.
   *
   * @param n number of loss differentials; must be non-negative
   * @param horizon forecast horizon h ≥ 1
   */
  public static int defaultLag(int n, int horizon) {
    if (n < 0) {
      throw new IllegalArgumentException("n must not be negative, got " + n);
    }
    if (horizon < 1) {
      throw new IllegalArgumentException("horizon must be at least 1, got " + horizon);
    }
    int rule = (int) Math.floor(4.0 * Math.pow(n / 100.0, 2.0 / 9.0));
    return Math.max(rule, horizon - 1);
  }

  /**
   * Tests equal accuracy of two aligned error series.
   *
   * @param a errors of the first forecast (actual − predicted); finite. Not modified.
   * @param b errors of the second forecast, same records in the same order; finite. Not modified.
   * @param n number of pairs to use (the first n of each array)
   * @param loss the loss function
   * @param lag the HAC lag ℓ ≥ 0; use {@link #defaultLag} when in doubt
   * @param horizon forecast horizon h ≥ 1 (1 for one-step prequential errors)
   * @return the result; for n &lt; 2 the statistic and p-values are NaN
   * @throws IllegalArgumentException if n, lag or horizon is out of range
   */
  public static Result test(double[] a, double[] b, int n, Loss loss, int lag, int horizon) {
    if (n < 0 || n > a.length || n > b.length) {
      throw new IllegalArgumentException("n must be in 0.." + Math.min(a.length, b.length) + ", got " + n);
    }
    if (lag < 0) {
      throw new IllegalArgumentException("lag must not be negative, got " + lag);
    }
    if (horizon < 1) {
      throw new IllegalArgumentException("horizon must be at least 1, got " + horizon);
    }
    double sumA = 0;
    double sumB = 0;
    double[] d = new double[n];
    for (int t = 0; t < n; t++) {
      double la = loss.of(a[t]);
      double lb = loss.of(b[t]);
      sumA += la;
      sumB += lb;
      d[t] = la - lb;
    }
    if (n < 2) {
      return new Result(loss, n, lag, horizon, n == 0 ? Double.NaN : sumA, n == 0 ? Double.NaN : sumB,
          n == 0 ? Double.NaN : d[0], Double.NaN, Double.NaN, Double.NaN, Double.NaN, Double.NaN);
    }
    double mean = 0;
    for (int t = 0; t < n; t++) {
      mean += d[t];
    }
    mean /= n;
    int l = Math.min(lag, n - 1);
    double s = autocovariance(d, n, mean, 0);
    for (int k = 1; k <= l; k++) {
      s += 2.0 * (1.0 - k / (l + 1.0)) * autocovariance(d, n, mean, k);
    }
    double stat;
    if (s > 0) {
      stat = mean / Math.sqrt(s / n);
    } else if (mean == 0) {
      stat = 0.0;
    } else {
      stat = mean > 0 ? Double.POSITIVE_INFINITY : Double.NEGATIVE_INFINITY;
    }
    double p = stat == 0.0 ? 1.0 : Distributions.normalTwoSided(stat);
    double h = horizon;
    double factor = Math.sqrt(Math.max(0.0, (n + 1 - 2 * h + h * (h - 1) / n) / n));
    double corrected = stat * factor;
    double pc = corrected == 0.0 ? 1.0 : Distributions.studentTTwoSided(corrected, n - 1);
    return new Result(loss, n, l, horizon, sumA / n, sumB / n, mean, s, stat, p, corrected, pc);
  }

  private static double autocovariance(double[] d, int n, double mean, int k) {
    double s = 0;
    for (int t = k; t < n; t++) {
      s += (d[t] - mean) * (d[t - k] - mean);
    }
    return s / n;
  }
}
