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

  // The defaults, one place: the configuration's keys (dev.runnel.core.config.ConfigKeys) take
  // theirs from here, and docs/configuration.md is checked against them (ConfigDocsTest).
  /** Default prior variance (configuration key {@code model.prior_variance}). */
  public static final double DEFAULT_PRIOR_VARIANCE = 1.0;
  /** Default of {@code constantTerm} (configuration key {@code model.constant_term}). */
  public static final boolean DEFAULT_CONSTANT_TERM = true;
  /** Default of {@code windupGuard} (configuration key {@code model.forget_towards_prior}). */
  public static final boolean DEFAULT_WINDUP_GUARD = true;
  /** Default interval coverage (configuration key {@code model.interval_level}). */
  public static final double DEFAULT_INTERVAL_LEVEL = 0.9;
  /** Default noise half-life in records (configuration key {@code model.noise_half_life_records}). */
  public static final double DEFAULT_NOISE_HALF_LIFE_RECORDS = 500;

  /**
   * Checks every setting.
   *
   * @throws IllegalArgumentException naming the setting and its value when one is out of range
   */
  public ModelSettings {
    if (!(priorVariance > 0)) {
      throw new IllegalArgumentException("priorVariance (model.prior_variance): " + priorVariance
          + " is not allowed; use a number greater than 0, or DIFFUSE (+Infinity) for no prior");
    }
    if (!(intervalZ > 0) || Double.isInfinite(intervalZ)) {
      throw new IllegalArgumentException("intervalZ: " + intervalZ
          + " is not allowed; use a positive finite z-value, e.g. zForLevel(model.interval_level)");
    }
    if (!(noiseHalfLifeRecords > 0)) {
      throw new IllegalArgumentException("noiseHalfLifeRecords (model.noise_half_life_records): " + noiseHalfLifeRecords
          + " is not allowed; use a number of records greater than 0, or +Infinity for a plain mean");
    }
  }

  /**
   * The defaults, the same as a configuration's {@code model} section with no keys: the
   * {@code DEFAULT_} constants above (prior variance 1, constant term, windup guard on, 90 %
   * interval, noise half-life 500 records).
   *
   * @return the default settings
   */
  public static ModelSettings defaults() {
    return new ModelSettings(DEFAULT_PRIOR_VARIANCE, DEFAULT_CONSTANT_TERM, DEFAULT_WINDUP_GUARD,
        zForLevel(DEFAULT_INTERVAL_LEVEL), DEFAULT_NOISE_HALF_LIFE_RECORDS);
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
      throw new IllegalArgumentException("level (model.interval_level): " + level
          + " is not allowed; use a number between 0 and 1 (both excluded), e.g. 0.9");
    }
    return NormalQuantile.inverseCdf(0.5 + 0.5 * level);
  }
}
