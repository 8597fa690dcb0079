package dev.runnel.core.model;

/**
 * Settings of one {@link RlsModel}, immutable and checked when built.
 *
 * @param priorVariance prior variance of every weight, in standardized units and in units of the
 *     noise variance (a ridge penalty of {@code 1/priorVariance} per standardized column); must be
 *     positive, or {@link #DIFFUSE} ({@code +Infinity}) for no prior at all: the information
 *     starts at exactly zero and the model is {@linkplain RlsModel#ready() ready} once it is full
 *     rank
 * @param constantTerm whether column 0 is the constant term (always 1); it is then the column that
 *     absorbs re-basing shifts
 * @param windupGuard whether forgetting is stabilized towards the prior (cyclic top-up of each
 *     column's prior information, see {@code docs/model.md}); no effect in diffuse mode or with
 *     {@code lambda = 1}
 * @param intervalZ z-value of the prediction interval, e.g. {@code zForLevel(0.90)}; positive
 * @param noiseHalfLifeRecords half-life, in accepted updates, of the exponentially weighted noise
 *     variance estimate; positive, {@code +Infinity} for a plain mean
 */
public record ModelSettings(double priorVariance, boolean constantTerm, boolean windupGuard,
    double intervalZ, double noiseHalfLifeRecords) {

  /** The {@code priorVariance} meaning "no prior": information starts at exactly zero. */
  public static final double DIFFUSE = Double.POSITIVE_INFINITY;

  /**
   * Checks every setting.
   *
   * @throws IllegalArgumentException naming the setting and its value when one is out of range
   */
  public ModelSettings {
    if (!(priorVariance > 0)) {
      throw new IllegalArgumentException(
          "model.prior-variance must be positive (or DIFFUSE = +Infinity), got " + priorVariance);
    }
    if (!(intervalZ > 0) || Double.isInfinite(intervalZ)) {
      throw new IllegalArgumentException("model.interval-z must be positive and finite, got " + intervalZ);
    }
    if (!(noiseHalfLifeRecords > 0)) {
      throw new IllegalArgumentException(
          "model.noise-half-life-records must be positive (or +Infinity), got " + noiseHalfLifeRecords);
    }
  }

  /**
   * Defaults: prior variance 100, constant term, windup guard on, 90 % interval, noise half-life
   * 1000 records.
   *
   * @return the default settings
   */
  public static ModelSettings defaults() {
    return new ModelSettings(100.0, true, true, zForLevel(0.90), 1000.0);
  }

  /** @return whether there is no prior ({@code priorVariance == DIFFUSE}) */
  public boolean diffuse() {
    return priorVariance == DIFFUSE;
  }

  /**
   * @param v new prior variance, or {@link #DIFFUSE}
   * @return a copy with {@code priorVariance = v}
   */
  public ModelSettings withPriorVariance(double v) {
    return new ModelSettings(v, constantTerm, windupGuard, intervalZ, noiseHalfLifeRecords);
  }

  /**
   * @param c whether column 0 is the constant term
   * @return a copy with {@code constantTerm = c}
   */
  public ModelSettings withConstantTerm(boolean c) {
    return new ModelSettings(priorVariance, c, windupGuard, intervalZ, noiseHalfLifeRecords);
  }

  /**
   * @param g whether the windup guard is on
   * @return a copy with {@code windupGuard = g}
   */
  public ModelSettings withWindupGuard(boolean g) {
    return new ModelSettings(priorVariance, constantTerm, g, intervalZ, noiseHalfLifeRecords);
  }

  /**
   * @param z new interval z-value
   * @return a copy with {@code intervalZ = z}
   */
  public ModelSettings withIntervalZ(double z) {
    return new ModelSettings(priorVariance, constantTerm, windupGuard, z, noiseHalfLifeRecords);
  }

  /**
   * @param h new noise half-life in records
   * @return a copy with {@code noiseHalfLifeRecords = h}
   */
  public ModelSettings withNoiseHalfLifeRecords(double h) {
    return new ModelSettings(priorVariance, constantTerm, windupGuard, intervalZ, h);
  }

  /**
   * The z-value of a two-sided central interval: {@code Phi^-1((1 + level) / 2)}.
   *
   * @param level coverage, in (0, 1), e.g. 0.90
   * @return z, e.g. 1.6448536269514722 for 0.90
   * @throws IllegalArgumentException if {@code level} is not in (0, 1)
   */
  public static double zForLevel(double level) {
    if (!(level > 0 && level < 1)) {
      throw new IllegalArgumentException("model.interval-level must be in (0, 1), got " + level);
    }
    return NormalQuantile.inverseCdf(0.5 + 0.5 * level);
  }
}
