package dev.runnel.core.feature;

import dev.runnel.core.config.Scaling;
import dev.runnel.core.config.Transform;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;

/**
 * Running centre and scale of one numeric column, updated one value at a time, with the encoding
 * {@code z = clip((t(v) - m) / s)}. One writer thread.
 *
 * <p>Statistics: Welford's update of mean and sum of squared deviations (common practice),
 * optionally exponentially weighted: with decay {@code a = 2^(-1/h)} per observation for a
 * half-life of {@code h} records, weights sum {@code W = a W + 1}, {@code mean += (x - mean) / W},
 * {@code S = a S + (x - mean_old)(x - mean_new)}. The variance is {@code S / (W - W2 / W)} with
 * {@code W2 = a^2 W2 + 1} (reliability weights; with {@code a = 1} this is {@code S / (n - 1)}).
 * The statistics are kept relative to the first value seen ({@code origin}) so that large, nearly
 * constant values (e.g. 10000000.2, 10000000.1, ...) keep their digits; the update is still Welford's.
 *
 * <p>Centre and scale {@code (m, s)}: in {@link Scaling#STANDARDIZE} mode {@code m} is the running
 * mean and {@code s} the running sd; in {@link Scaling#SCALE} mode {@code m = 0} and {@code s} is
 * the running root mean square; in {@link Scaling#NONE} mode {@code (0, 1)} always. Guard for
 * {@code s ≈ 0}: the effective {@code s} is 1 until there are two observations and the sd exceeds
 * {@link #SD_FLOOR_RELATIVE} times {@code |mean|} (and is positive and finite); a column of constant
 * values therefore encodes as {@code v - m = 0} rather than dividing by a rounding error.
 *
 * <p>Every {@link #observe} that changes {@code (m, s)} leaves the change in {@link #lastScale()}
 * and {@link #lastShift()}, for the featurizer to pass on as a re-basing before encoding.
 */
public final class RunningScaler {

  /** The sd must exceed this times |mean| before it is used as the scale (see class doc). */
  public static final double SD_FLOOR_RELATIVE = 1.0e-10;

  private final Scaling scaling;
  private final Transform transform;
  private final double exponent;
  private final double decay;
  private final double clip;

  private long count;
  private double origin;
  private double weight;
  private double weight2;
  private double meanDev;
  private double sumSq;
  private double meanSquare;
  private double centre = 0.0;
  private double scale = 1.0;
  private double lastScale = 1.0;
  private double lastShift = 0.0;

  /**
   * @param scaling how {@code (m, s)} follow the data
   * @param transform pre-transform applied to raw values by {@link #transformed}
   * @param exponent the power for {@link Transform#POWER}, ignored otherwise
   * @param weightingHalfLifeRecords 0 for equal weights, &gt; 0 for exponential weighting
   * @param clip 0 for none, &gt; 0 to bound |z|
   * @throws IllegalArgumentException for a negative or non-finite half-life or clip
   */
  public RunningScaler(Scaling scaling, Transform transform, double exponent, double weightingHalfLifeRecords, double clip) {
    if (!(weightingHalfLifeRecords >= 0) || Double.isInfinite(weightingHalfLifeRecords)) {
      throw new IllegalArgumentException("weighting_half_life_records must be >= 0 and finite, got " + weightingHalfLifeRecords);
    }
    if (!(clip >= 0) || Double.isInfinite(clip)) throw new IllegalArgumentException("clip must be >= 0 and finite, got " + clip);
    this.scaling = scaling;
    this.transform = transform;
    this.exponent = exponent;
    this.decay = weightingHalfLifeRecords == 0 ? 1.0 : StrictMath.pow(2.0, -1.0 / weightingHalfLifeRecords);
    this.clip = clip;
  }

  /** A plain standardizing scaler without transform, weighting or clipping. */
  public RunningScaler() { this(Scaling.STANDARDIZE, Transform.NONE, 1.0, 0, 0); }

  /**
   * The pre-transform of {@code raw}; NaN when {@code raw} is outside the transform's domain or the
   * result is not finite (see {@link #accepts}).
   */
  public double transformed(double raw) {
    double t;
    switch (transform) {
      case LOG1P: t = raw > -1.0 ? StrictMath.log1p(raw) : Double.NaN; break;
      case SQRT: t = raw >= 0.0 ? Math.sqrt(raw) : Double.NaN; break;
      case POWER:
        if (raw < 0 && exponent != Math.rint(exponent)) t = Double.NaN;
        else if (raw == 0 && exponent < 0) t = Double.NaN;
        else t = StrictMath.pow(raw, exponent);
        break;
      case NONE: default: t = raw;
    }
    return Double.isFinite(t) ? t : Double.NaN;
  }

  /** Whether {@code raw} is inside the transform's domain with a finite result. */
  public boolean accepts(double raw) { return !Double.isNaN(transformed(raw)); }

  /** A description of the transform's domain, for reject details. */
  public String domain() {
    switch (transform) {
      case LOG1P: return "log1p needs a value above -1";
      case SQRT: return "sqrt needs a value of at least 0";
      case POWER: return "power " + exponent + " needs " + (exponent == Math.rint(exponent) ? "" : "a value of at least 0 and ")
          + (exponent < 0 ? "a non-zero value and " : "") + "a finite result";
      default: return "the value must be finite";
    }
  }

  /**
   * Adds one transformed value and recomputes {@code (m, s)}.
   *
   * @param x a transformed value; must be finite
   * @return whether {@code (m, s)} changed; if so {@link #lastScale()} = s'/s and
   *     {@link #lastShift()} = (m' - m)/s
   */
  public boolean observe(double x) {
    if (count == 0) origin = x;
    count++;
    double d = x - origin;
    weight = decay * weight + 1.0;
    weight2 = decay * decay * weight2 + 1.0;
    double delta = d - meanDev;
    meanDev += delta / weight;
    sumSq = decay * sumSq + delta * (d - meanDev);
    meanSquare += (x * x - meanSquare) / weight;
    double m;
    double s;
    switch (scaling) {
      case STANDARDIZE: {
        m = origin + meanDev;
        double sd = sd();
        s = sd > 0 && Double.isFinite(sd) && sd > SD_FLOOR_RELATIVE * Math.abs(m) ? sd : 1.0;
        break;
      }
      case SCALE: {
        m = 0.0;
        double rms = Math.sqrt(meanSquare);
        s = rms > 0 && Double.isFinite(rms) ? rms : 1.0;
        break;
      }
      case NONE: default:
        m = 0.0;
        s = 1.0;
    }
    if (m == centre && s == scale) return false;
    lastScale = s / scale;
    lastShift = (m - centre) / scale;
    centre = m;
    scale = s;
    return true;
  }

  /** {@code clip((x - m) / s)} for a transformed value {@code x}. Reads state only. */
  public double encode(double x) {
    double z = (x - centre) / scale;
    if (clip > 0) {
      if (z > clip) z = clip;
      else if (z < -clip) z = -clip;
    }
    return z;
  }

  /** s'/s of the last change of {@code (m, s)}. */
  public double lastScale() { return lastScale; }

  /** (m' - m)/s of the last change of {@code (m, s)}. */
  public double lastShift() { return lastShift; }

  /** The centre {@code m} in use. */
  public double centre() { return centre; }

  /** The scale {@code s} in use (1 while the guard holds). */
  public double scale() { return scale; }

  /** Number of observations. */
  public long count() { return count; }

  /** Sum of weights (equal to {@link #count()} without weighting). */
  public double weightSum() { return weight; }

  /** Running (weighted) mean; 0 before any observation. */
  public double mean() { return count == 0 ? 0.0 : origin + meanDev; }

  /** Running (weighted) variance with reliability-weight correction; NaN with fewer than 2 observations. */
  public double variance() {
    double denom = weight - weight2 / weight;
    return count < 2 || !(denom > 0) ? Double.NaN : Math.max(0.0, sumSq / denom);
  }

  /** Square root of {@link #variance()}. */
  public double sd() { return Math.sqrt(variance()); }

  /** Running (weighted) mean of squares. */
  public double meanSquare() { return meanSquare; }

  /** The scaling mode. */
  public Scaling scaling() { return scaling; }

  /** The pre-transform. */
  public Transform transform() { return transform; }

  void writeTo(DataOutput out) throws IOException {
    out.writeLong(count);
    out.writeDouble(origin);
    out.writeDouble(weight);
    out.writeDouble(weight2);
    out.writeDouble(meanDev);
    out.writeDouble(sumSq);
    out.writeDouble(meanSquare);
    out.writeDouble(centre);
    out.writeDouble(scale);
    out.writeDouble(lastScale);
    out.writeDouble(lastShift);
  }

  void readFrom(DataInput in) throws IOException {
    count = in.readLong();
    origin = in.readDouble();
    weight = in.readDouble();
    weight2 = in.readDouble();
    meanDev = in.readDouble();
    sumSq = in.readDouble();
    meanSquare = in.readDouble();
    centre = in.readDouble();
    scale = in.readDouble();
    lastScale = in.readDouble();
    lastShift = in.readDouble();
  }
}
