package dev.runnel.core.config;

import java.util.List;

/** One item of the {@code features} list. Every variant is immutable. */
public sealed interface FeatureConfig {

  /** The feature's name: the prefix of its column names; unique within the pipeline. */
  String name();

  /** The configuration word of this kind, e.g. {@code onehot}. */
  String kind();

  /**
   * One-hot over a rolling vocabulary of a text or flag field.
   *
   * @param maxLevels most admitted levels, 1..1000000; the rest share the "(other)" column
   * @param minCount sightings in training records before a level is admitted, at least 1
   * @param expireAfterMillis event time without the level before it expires; 0 = never
   * @param expireAfterRecords training records without the level before it expires; 0 = never
   */
  record OneHot(String name, String field, int maxLevels, int minCount, long expireAfterMillis, long expireAfterRecords)
      implements FeatureConfig {
    @Override public String kind() { return "onehot"; }
  }

  /**
   * Sin/cos pairs of a calendar cycle in the pipeline's time zone.
   *
   * @param field a time field to read, or {@code null} for the record's event time
   * @param harmonics pairs k = 1..harmonics, 1..12
   */
  record Cyclic(String name, Cycle cycle, String field, int harmonics) implements FeatureConfig {
    @Override public String kind() { return "cyclic"; }
  }

  /**
   * One scaled column from a number field.
   *
   * @param exponent the power for {@link Transform#POWER}; 1 otherwise
   * @param weightingHalfLifeRecords 0 = plain running mean/variance; &gt; 0 = exponentially weighted
   * @param clip 0 = off; &gt; 0 bounds |z| (after scaling) to this
   */
  record Numeric(String name, String field, Transform transform, double exponent, Scaling scaling,
                 double weightingHalfLifeRecords, double clip) implements FeatureConfig {
    @Override public String kind() { return "numeric"; }
  }

  /** Powers x^1 .. x^degree of a raw number field, each its own scaled column. */
  record Polynomial(String name, String field, int degree, Scaling scaling, double weightingHalfLifeRecords, double clip)
      implements FeatureConfig {
    @Override public String kind() { return "polynomial"; }
  }

  /**
   * A curve in a raw number field with bends at given knots ({@code kind: bends}): the field itself
   * and one column per basis function, each scaled on its own.
   *
   * @param knots strictly increasing, finite; at least 1 for a hinge basis, 3 for a natural spline
   */
  record Bends(String name, String field, BendBasis basis, List<Double> knots, Scaling scaling,
               double weightingHalfLifeRecords, double clip) implements FeatureConfig {
    /** Copies the list. */
    public Bends { knots = List.copyOf(knots); }
    @Override public String kind() { return "bends"; }
  }

  /**
   * Days that behave differently ({@code kind: special_days}), read from the record's target time
   * (its event time without {@code input.forecast}) as a local date in {@code input.time_zone}.
   *
   * @param dates the listed dates ({@code dates} and {@code dates_file} together), sorted, each once
   * @param datesFile the file the dates were partly read from, or null
   * @param holidayCountry a public-holiday calendar's code as the holiday library names it (lower
   *     case, e.g. {@code nl}), or null for none
   * @param holidayRegion a subdivision of that calendar (e.g. {@code by}), or null for the whole country
   * @param daysBefore columns for the 1..daysBefore days before a special day, 0..7
   * @param daysAfter columns for the 1..daysAfter days after a special day, 0..7
   */
  record SpecialDays(String name, List<java.time.LocalDate> dates, String datesFile, String holidayCountry,
                     String holidayRegion, int daysBefore, int daysAfter) implements FeatureConfig {
    /** Copies the list. */
    public SpecialDays { dates = List.copyOf(dates); }
    @Override public String kind() { return "special_days"; }
  }

  /** The products of every column of feature {@code of.get(0)} with every column of {@code of.get(1)}. */
  record Cross(String name, List<String> of) implements FeatureConfig {
    /** Copies the list. */
    public Cross { of = List.copyOf(of); }
    @Override public String kind() { return "cross"; }
  }

  /**
   * The value of a number field (by default the target) of the same entity at a fixed offset
   * before the record's target time, with a column that says when it is missing
   * ({@code kind: lag}, docs/features.md).
   *
   * @param field the number field whose history is read; the target by default
   * @param offsetMillis how far before the target time, at least one grid step
   * @param gridMillis the width of a time cell; values are kept one per entity and cell
   * @param toleranceMillis how far further back the nearest earlier value may lie; 0 = the offset's cell only
   * @param maxEntities most entities remembered; when full, the least recently updated is dropped
   * @param expireAfterMillis an entity without an actual for this long (by the stream clock) is dropped
   */
  record Lag(String name, String field, long offsetMillis, long gridMillis, long toleranceMillis, int maxEntities,
             long expireAfterMillis) implements FeatureConfig {
    @Override public String kind() { return "lag"; }
  }

  /**
   * An exponentially weighted mean of a number field (by default the target) over the same
   * entity's earlier actuals, weighted by their age in event time; with a season, only those of
   * the same local hour of day or of week as the record's target time ({@code kind: smoothed}).
   *
   * @param halfLifeMillis the age (between target times) at which an actual weighs half
   */
  record Smoothed(String name, String field, long halfLifeMillis, Season season, int maxEntities,
                  long expireAfterMillis) implements FeatureConfig {
    @Override public String kind() { return "smoothed"; }
  }
}
