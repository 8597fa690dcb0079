package dev.runnel.core.nist;

/**
 * Log relative error, the number of correct significant digits: {@code -log10(|e - c| / |c|)},
 * capped at 15; when the certified value is 0, {@code -log10(|e|)} (both common practice in the
 * NIST StRD accuracy literature). 0 for a non-finite estimate.
 */
public final class Lre {

  /** The cap: a double carries about 15.95 digits. */
  public static final double CAP = 15.0;

  private Lre() { }

  /**
   * @param estimate computed value
   * @param certified certified value
   * @return digits of agreement, in [0, 15]
   */
  public static double of(double estimate, double certified) {
    if (!Double.isFinite(estimate)) {
      return 0.0;
    }
    double err = Math.abs(estimate - certified);
    if (err == 0.0) {
      return CAP;
    }
    double rel = certified == 0.0 ? err : err / Math.abs(certified);
    double lre = -Math.log10(rel);
    return Math.max(0.0, Math.min(CAP, lre));
  }
}
