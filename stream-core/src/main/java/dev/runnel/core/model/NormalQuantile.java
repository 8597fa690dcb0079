package dev.runnel.core.model;

/**
 * The standard normal quantile function (inverse CDF), to about 1e-15 relative.
 *
 * <p>Implementation notes: P. J. Acklam's rational approximation (relative error about 1.15e-9,
 * coefficients as published with the algorithm), refined by one Halley step on
 * {@code Phi(x) - p}. {@code Phi} is computed here without {@code erf}: for {@code |x| <= 2.5}
 * from the everywhere-positive series {@code Phi(x) = 1/2 + phi(x) * sum x^(2n+1) / (2n+1)!!},
 * beyond that from the continued fraction of Mills' ratio
 * {@code Phi(-t) = phi(t) / (t + 1/(t + 2/(t + 3/(t + ...))))}, evaluated backwards (both common
 * practice).
 */
public final class NormalQuantile {

  private static final double[] A = {-3.969683028665376e+01, 2.209460984245205e+02,
      -2.759285104469687e+02, 1.383577518672690e+02, -3.066479806614716e+01, 2.506628277459239e+00};
  private static final double[] B = {-5.447609879822406e+01, 1.615858368580409e+02,
      -1.556989798598866e+02, 6.680131188771972e+01, -1.328068155288572e+01};
  private static final double[] C = {-7.784894002430293e-03, -3.223964580411365e-01,
      -2.400758277161838e+00, -2.549732539343734e+00, 4.374664141464968e+00, 2.938163982698783e+00};
  private static final double[] D = {7.784695709041462e-03, 3.224671290700398e-01,
      2.445134137142996e+00, 3.754408661907416e+00};
  private static final double P_LOW = 0.02425;
  private static final double SQRT_2PI = 2.5066282746310002;

  private NormalQuantile() { }

  /**
   * @param p probability in (0, 1)
   * @return x with {@code Phi(x) = p}
   * @throws IllegalArgumentException if {@code p} is not in (0, 1)
   */
  public static double inverseCdf(double p) {
    if (!(p > 0 && p < 1)) {
      throw new IllegalArgumentException("p must be in (0, 1), got " + p);
    }
    if (p > 0.5) {
      return -lowerHalf(1.0 - p);
    }
    return lowerHalf(p);
  }

  /** Quantile for p in (0, 0.5]: x <= 0, where Phi(x) has no cancellation. */
  private static double lowerHalf(double p) {
    double x;
    if (p < P_LOW) {
      double q = Math.sqrt(-2 * StrictMath.log(p));
      x = (((((C[0] * q + C[1]) * q + C[2]) * q + C[3]) * q + C[4]) * q + C[5])
          / ((((D[0] * q + D[1]) * q + D[2]) * q + D[3]) * q + 1);
    } else {
      double q = p - 0.5;
      double r = q * q;
      x = (((((A[0] * r + A[1]) * r + A[2]) * r + A[3]) * r + A[4]) * r + A[5]) * q
          / (((((B[0] * r + B[1]) * r + B[2]) * r + B[3]) * r + B[4]) * r + 1);
    }
    // One Halley step on f(x) = Phi(x) - p, f' = phi, f'' = -x phi.
    double e = cdf(x) - p;
    double u = e * SQRT_2PI * StrictMath.exp(0.5 * x * x);
    return x - u / (1 + 0.5 * x * u);
  }

  /**
   * The standard normal CDF, accurate to a few ulps relative for x up to 0 and to a few ulps
   * absolute above.
   *
   * @param x argument
   * @return Phi(x)
   */
  public static double cdf(double x) {
    double t = Math.abs(x);
    double phi = StrictMath.exp(-0.5 * t * t) / SQRT_2PI;
    double tail; // Phi(-t)
    if (t <= 2.5) {
      double term = t;
      double sum = t;
      double t2 = t * t;
      for (int n = 1; n < 200; n++) {
        term *= t2 / (2 * n + 1);
        sum += term;
        if (term < 1e-17 * sum) {
          break;
        }
      }
      double half = phi * sum; // Phi(t) - 1/2
      tail = 0.5 - half;
      return x >= 0 ? 0.5 + half : tail;
    }
    double f = t;
    for (int k = 160; k >= 1; k--) {
      f = t + k / f;
    }
    tail = phi / f;
    return x >= 0 ? 1.0 - tail : tail;
  }
}
