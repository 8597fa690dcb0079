package dev.runnel.core.pipeline;

import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.config.TargetPoint;
import dev.runnel.core.config.TargetTransform;
import dev.runnel.core.model.NormalQuantile;

/**
 * The scale the model learns the target in ({@code model.target_transform}) and the way back to
 * the target's own units. Pure functions of the configuration; no state.
 *
 * <p>The model's predictive distribution in its own scale is normal with centre {@code mu} and sd
 * {@code s = noise sd · √(1 + leverage)}. The back-transform {@code h} is monotone non-decreasing
 * ({@code none}: z; {@code log1p}: e^z − 1; {@code sqrt}: max(0, z)²), so it carries every
 * quantile over exactly: {@code h(mu)} is the median of the back-transformed distribution and
 * {@code [h(mu − z s), h(mu + z s)]} its central interval of the same level. The mean, when asked
 * for ({@code target_point: mean}), is the expectation of {@code h(Z)} for {@code Z ~ N(mu, s²)}:
 * for {@code log1p} the log-normal mean {@code e^(mu + s²/2) − 1}; for {@code sqrt}
 * {@code E[max(0, Z)²] = (mu² + s²) Φ(mu/s) + mu s φ(mu/s)} (the second moment of a normal cut at 0;
 * both common practice, checked against numerical integration in the tests).
 * With {@code target_non_negative} every published value is at least 0.
 */
final class TargetScaling {

  private final TargetTransform transform;
  private final boolean mean;
  private final boolean nonNegative;
  /** Whether the model's scale is the target's own and nothing is bounded: values pass through untouched. */
  final boolean identity;

  TargetScaling(PipelineConfig.TargetScale scale) {
    this.transform = scale.transform();
    this.mean = scale.point() == TargetPoint.MEAN;
    this.nonNegative = scale.nonNegative();
    this.identity = transform == TargetTransform.NONE && !nonNegative;
  }

  /** Whether {@code y} (finite) is in the transform's domain and, with {@code target_non_negative}, at least 0. */
  boolean accepts(double y) {
    if (nonNegative && !(y >= 0)) return false;
    switch (transform) {
      case LOG1P: return y > -1.0;
      case SQRT: return y >= 0.0;
      case NONE: default: return true;
    }
  }

  /** Says what {@link #accepts} wants, for a reject's detail. */
  String domain() {
    String bound = transform == TargetTransform.LOG1P ? "greater than -1" : "at least 0";
    if (transform == TargetTransform.NONE || (nonNegative && transform == TargetTransform.LOG1P)) bound = "at least 0";
    String why = nonNegative && transform != TargetTransform.SQRT ? "model.target_non_negative: true"
        : "model.target_transform: " + transform.word();
    return "it must be " + bound + " (" + why + ")";
  }

  /** The target in the model's scale; {@code y} must be accepted. */
  double forward(double y) {
    switch (transform) {
      case LOG1P: return StrictMath.log1p(y);
      case SQRT: return Math.sqrt(y);
      case NONE: default: return y;
    }
  }

  /** The monotone back-transform of a value (a quantile) in the model's scale, bounded at 0 when asked. */
  double back(double z) {
    double v;
    switch (transform) {
      case LOG1P: v = StrictMath.expm1(z); break;
      case SQRT: v = z > 0 ? z * z : 0.0; break;
      case NONE: default: v = z;
    }
    return nonNegative && v < 0 ? 0.0 : v;
  }

  /**
   * The published point for a predictive distribution {@code N(mu, sd²)} in the model's scale: its
   * back-transformed median, or its mean with {@code target_point: mean}.
   */
  double point(double mu, double sd) {
    if (!mean || transform == TargetTransform.NONE) return back(mu);
    double v;
    if (transform == TargetTransform.LOG1P) {
      v = StrictMath.expm1(mu + 0.5 * sd * sd);
    } else if (sd > 0) {
      double a = mu / sd;
      double density = StrictMath.exp(-0.5 * a * a) / SQRT_2PI;
      v = (mu * mu + sd * sd) * NormalQuantile.cdf(a) + mu * sd * density;
    } else {
      v = mu > 0 ? mu * mu : 0.0;
    }
    return nonNegative && v < 0 ? 0.0 : v;
  }

  private static final double SQRT_2PI = 2.5066282746310002;
}
