package dev.runnel.core.evaluate;

/**
 * Tail probabilities of the standard normal and Student t distributions, for p-values. Pure
 * functions, no allocation.
 *
 * <p>Implementation notes: the normal tail is {@code erfc(x/√2)/2} with
 * {@code erfc(x) = Q(1/2, x²)}, the regularized upper incomplete gamma function, evaluated by its
 * series for small arguments and by a Lentz continued fraction otherwise; the t tail is
 * {@code I_{ν/(ν+t²)}(ν/2, 1/2)/2}, the regularized incomplete beta function by its continued
 * fraction (both forms common practice, e.g. Press et al., Numerical Recipes, ch. 6). The log
 * gamma function is Lanczos' approximation with g = 7 (common practice). The tests check both
 * tails against Apache Commons Math.
 */
public final class Distributions {

  private static final double EPS = 1e-16;
  private static final double TINY = 1e-300;
  private static final int MAX_ITERATIONS = 200_000;
  private static final double LN_SQRT_PI = 0.5723649429247001; // ln(√π) = lnΓ(1/2)

  private Distributions() { }

  /** P(Z ≤ x) for a standard normal Z. */
  public static double normalCdf(double x) {
    if (Double.isNaN(x)) {
      return Double.NaN;
    }
    return x >= 0 ? 1.0 - normalUpperTail(x) : normalUpperTail(-x);
  }

  /** P(Z > x) for a standard normal Z, accurate in the far tail. */
  public static double normalUpperTail(double x) {
    if (Double.isNaN(x)) {
      return Double.NaN;
    }
    if (x < 0) {
      return 1.0 - normalUpperTail(-x);
    }
    return 0.5 * erfc(x / Math.sqrt(2.0));
  }

  /** Two-sided p-value P(|Z| ≥ |z|) of a standard normal statistic. */
  public static double normalTwoSided(double z) {
    if (Double.isNaN(z)) {
      return Double.NaN;
    }
    return Math.min(1.0, 2.0 * normalUpperTail(Math.abs(z)));
  }

  /** erfc(x) for x ≥ 0. */
  static double erfc(double x) {
    if (x == 0) {
      return 1.0;
    }
    if (Double.isInfinite(x)) {
      return 0.0;
    }
    return gammaQ(0.5, x * x, LN_SQRT_PI);
  }

  /**
   * P(T ≤ t) for Student's t with {@code df} degrees of freedom.
   *
   * @throws IllegalArgumentException if {@code df} is not positive
   */
  public static double studentTCdf(double t, double df) {
    if (!(df > 0)) {
      throw new IllegalArgumentException("degrees of freedom must be positive, got " + df);
    }
    if (Double.isNaN(t)) {
      return Double.NaN;
    }
    double tail = studentTUpperTail(Math.abs(t), df);
    return t >= 0 ? 1.0 - tail : tail;
  }

  /** Two-sided p-value P(|T| ≥ |t|) for Student's t with {@code df} degrees of freedom. */
  public static double studentTTwoSided(double t, double df) {
    if (!(df > 0)) {
      throw new IllegalArgumentException("degrees of freedom must be positive, got " + df);
    }
    if (Double.isNaN(t)) {
      return Double.NaN;
    }
    return Math.min(1.0, 2.0 * studentTUpperTail(Math.abs(t), df));
  }

  /** P(T > t) for t ≥ 0. */
  private static double studentTUpperTail(double t, double df) {
    if (t == 0) {
      return 0.5;
    }
    if (Double.isInfinite(t)) {
      return 0.0;
    }
    // x = df/(df + t²) and 1 − x = t²/(df + t²), each computed without cancellation
    double t2 = t * t;
    double x = df / (df + t2);
    double y = t2 / (df + t2);
    double lnX = -Math.log1p(t2 / df);
    double lnY = Math.log(t2) - Math.log(df + t2);
    return 0.5 * regularizedBeta(x, y, lnX, lnY, 0.5 * df, 0.5);
  }

  /** Lanczos' approximation of ln Γ(x) for x > 0 (g = 7, nine coefficients; common practice). */
  static double lnGamma(double x) {
    if (x < 0.5) {
      // reflection: Γ(x)Γ(1−x) = π / sin(πx)
      return Math.log(Math.PI / Math.abs(Math.sin(Math.PI * x))) - lnGamma(1.0 - x);
    }
    double z = x - 1.0;
    double a = 0.99999999999980993;
    a += 676.5203681218851 / (z + 1);
    a += -1259.1392167224028 / (z + 2);
    a += 771.32342877765313 / (z + 3);
    a += -176.61502916214059 / (z + 4);
    a += 12.507343278686905 / (z + 5);
    a += -0.13857109526572012 / (z + 6);
    a += 9.9843695780195716e-6 / (z + 7);
    a += 1.5056327351493116e-7 / (z + 8);
    double t = z + 7.5;
    return 0.5 * Math.log(2 * Math.PI) + (z + 0.5) * Math.log(t) - t + Math.log(a);
  }

  /**
   * ln B(a, b). When the larger argument is 20 or more, ln Γ(big) − ln Γ(big + small) is taken from
   * the difference of Stirling series, which does not cancel (common practice):
   * {@code −(big − ½) log1p(small/big) − small ln(big + small) + small + c(big) − c(big + small)},
   * with {@code c(x) = 1/(12x) − 1/(360x³) + 1/(1260x⁵) − 1/(1680x⁷)}.
   */
  static double lnBeta(double a, double b) {
    double big = Math.max(a, b);
    double small = Math.min(a, b);
    if (big < 20) {
      return lnGamma(a) + lnGamma(b) - lnGamma(a + b);
    }
    double d = -(big - 0.5) * Math.log1p(small / big) - small * Math.log(big + small) + small
        + stirlingCorrection(big) - stirlingCorrection(big + small);
    return lnGamma(small) + d;
  }

  private static double stirlingCorrection(double x) {
    double r = 1.0 / x;
    double r2 = r * r;
    return r * (1.0 / 12 - r2 * (1.0 / 360 - r2 * (1.0 / 1260 - r2 / 1680)));
  }

  /** Q(a, x) = Γ(a, x)/Γ(a), the regularized upper incomplete gamma function. */
  static double gammaQ(double a, double x, double lnGammaA) {
    if (x < a + 1.0) {
      // series for P(a, x), then Q = 1 − P
      double sum = 1.0 / a;
      double term = sum;
      double ap = a;
      for (int n = 0; n < MAX_ITERATIONS; n++) {
        ap += 1.0;
        term *= x / ap;
        sum += term;
        if (Math.abs(term) < Math.abs(sum) * EPS) {
          break;
        }
      }
      return 1.0 - sum * Math.exp(-x + a * Math.log(x) - lnGammaA);
    }
    // continued fraction for Q(a, x), modified Lentz
    double b = x + 1.0 - a;
    double c = 1.0 / TINY;
    double d = 1.0 / b;
    double h = d;
    for (int i = 1; i < MAX_ITERATIONS; i++) {
      double an = -i * (i - a);
      b += 2.0;
      d = an * d + b;
      if (Math.abs(d) < TINY) {
        d = TINY;
      }
      c = b + an / c;
      if (Math.abs(c) < TINY) {
        c = TINY;
      }
      d = 1.0 / d;
      double del = d * c;
      h *= del;
      if (Math.abs(del - 1.0) < EPS) {
        break;
      }
    }
    return Math.exp(-x + a * Math.log(x) - lnGammaA) * h;
  }

  /** I_x(a, b) given x, y = 1 − x and their logarithms, each computed accurately by the caller. */
  private static double regularizedBeta(double x, double y, double lnX, double lnY, double a, double b) {
    double lnFront = a * lnX + b * lnY - lnBeta(a, b);
    if (x < (a + 1.0) / (a + b + 2.0)) {
      return Math.exp(lnFront) * betaContinuedFraction(x, a, b) / a;
    }
    return 1.0 - Math.exp(lnFront) * betaContinuedFraction(y, b, a) / b;
  }

  /** The continued fraction of the incomplete beta function, modified Lentz. */
  private static double betaContinuedFraction(double x, double a, double b) {
    double qab = a + b;
    double qap = a + 1.0;
    double qam = a - 1.0;
    double c = 1.0;
    double d = 1.0 - qab * x / qap;
    if (Math.abs(d) < TINY) {
      d = TINY;
    }
    d = 1.0 / d;
    double h = d;
    for (int m = 1; m < MAX_ITERATIONS; m++) {
      int m2 = 2 * m;
      double aa = m * (b - m) * x / ((qam + m2) * (a + m2));
      d = 1.0 + aa * d;
      if (Math.abs(d) < TINY) {
        d = TINY;
      }
      c = 1.0 + aa / c;
      if (Math.abs(c) < TINY) {
        c = TINY;
      }
      d = 1.0 / d;
      h *= d * c;
      aa = -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2));
      d = 1.0 + aa * d;
      if (Math.abs(d) < TINY) {
        d = TINY;
      }
      c = 1.0 + aa / c;
      if (Math.abs(c) < TINY) {
        c = TINY;
      }
      d = 1.0 / d;
      double del = d * c;
      h *= del;
      if (Math.abs(del - 1.0) < EPS) {
        break;
      }
    }
    return h;
  }
}
