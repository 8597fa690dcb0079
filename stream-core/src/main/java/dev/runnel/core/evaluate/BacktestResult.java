package dev.runnel.core.evaluate;

import java.util.List;
import java.util.Map;

/**
 * Everything a backtest reports, as immutable values: per configuration the prequential metrics
 * overall, per segment level, per local hour of day and per period, the rejects and the chosen
 * coefficient paths; per pair of configurations the Diebold–Mariano tests.
 *
 * @param records records read from the source
 * @param partitions partitions seen
 * @param segmentField the segment field, or null
 * @param periodMillis length of the over-time buckets
 * @param alpha significance level of the verdicts
 * @param variants one per configuration, in the order given
 * @param comparisons one per pair (i &lt; j), in order (0,1), (0,2), …, (1,2), …
 * @param horizons one per simulated forecast horizon, in the order given (empty without horizons)
 */
public record BacktestResult(long records, int partitions, String segmentField, long periodMillis, double alpha,
                             List<VariantResult> variants, List<Comparison> comparisons, List<HorizonResult> horizons) {

  public BacktestResult {
    variants = List.copyOf(variants);
    comparisons = List.copyOf(comparisons);
    horizons = List.copyOf(horizons);
  }

  /** Without horizons. */
  public BacktestResult(long records, int partitions, String segmentField, long periodMillis, double alpha,
                        List<VariantResult> variants, List<Comparison> comparisons) {
    this(records, partitions, segmentField, periodMillis, alpha, variants, comparisons, List.of());
  }

  /**
   * The simulated forecasts of one horizon (docs/backtesting.md, "Horizons").
   *
   * @param horizonMillis the horizon h: each forecast was issued h before its actual's target time
   * @param variants one per configuration, in the order given
   * @param comparisons one per pair, in the order of {@link #comparisons()}
   */
  public record HorizonResult(long horizonMillis, List<HorizonVariant> variants, List<HorizonComparison> comparisons) {
    public HorizonResult {
      variants = List.copyOf(variants);
      comparisons = List.copyOf(comparisons);
    }
  }

  /**
   * One configuration at one horizon.
   *
   * @param label the configuration's label
   * @param metrics MAE, RMSE, bias, coverage of the settled simulated forecasts (count: how many settled)
   * @param warmingUp requests made while the model was warming up (no forecast to settle)
   * @param notSettled forecasts made but never settled (dropped by {@code input.forecast.max_pending},
   *     or their actual came later than {@code max_actual_delay} or was rejected)
   * @param beyondLookahead actuals whose issue time lay before a record already learned from (out of
   *     order by more than the look-ahead): not simulated
   * @param notIssued actuals whose issue time was not before their own event time, or whose request
   *     the step rejected: not simulated
   * @param lookaheadMillis the span of event time the records were held back for
   * @param maxHeld the most records held back at once (per partition)
   * @param breakdown the same settled forecasts by entity, by hour of day and by period of the target time
   */
  public record HorizonVariant(String label, Metrics metrics, long warmingUp, long notSettled, long beyondLookahead,
                               long notIssued, long lookaheadMillis, int maxHeld, Breakdown breakdown) { }

  /**
   * Where within one horizon the error of one configuration is (docs/backtesting.md, "Where within a
   * horizon"). Every row's metrics come from exact sums of its forecasts' errors, |errors| and
   * squared errors (each squared error the double e·e), rounded once: the rows of one table hold
   * every settled forecast of the horizon exactly once, so their counts add up to the horizon's
   * count and their exact sums to the horizon's exact sums ({@link #total}).
   *
   * @param entityFields {@code input.forecast.entity_fields} (empty without {@code input.forecast}:
   *     then there is no entity and {@code byEntity} is empty)
   * @param topEntities how many entities get a row of their own (the rest share the "(other)" row)
   * @param period the calendar period of {@code byPeriod}
   * @param byEntity the entities with the most settled forecasts (counted over all configurations,
   *     ties by their values), most first, then the "(other)" row when any entity was left over. The
   *     same entities, in the same order, for every configuration
   * @param byHour 24 rows, hour 0 first: the hour of day of the target time in the configuration's
   *     {@code input.time_zone}
   * @param byPeriod the periods of the target times (local, as the hours), in time order; the same
   *     labels for every configuration (a period without forecasts has count 0)
   * @param total all the settled forecasts of the horizon, from exact sums
   */
  public record Breakdown(List<String> entityFields, int topEntities, BreakdownPeriod period, List<EntityGroup> byEntity,
                          List<Group> byHour, List<Group> byPeriod, Group total) {
    public Breakdown {
      entityFields = List.copyOf(entityFields);
      byEntity = List.copyOf(byEntity);
      byHour = List.copyOf(byHour);
      byPeriod = List.copyOf(byPeriod);
    }
  }

  /**
   * One row of a breakdown.
   *
   * @param label the hour ("00" to "23"), the period (ISO 8601: 2026-W22 or 2026-05) or "total"
   * @param metrics MAE, RMSE, bias and coverage from exact sums
   * @param sumSquaredError the exact sum of the squared errors, rounded once
   */
  public record Group(String label, Metrics metrics, double sumSquaredError) { }

  /**
   * One entity's row of a breakdown, or the row of the entities left over.
   *
   * @param values the entity's values, one per entity field; empty for the "(other)" row
   * @param entities 1 for an entity's row; for the "(other)" row, how many entities it holds
   * @param metrics MAE, RMSE, bias and coverage from exact sums
   * @param sumSquaredError the exact sum of the squared errors, rounded once
   */
  public record EntityGroup(List<String> values, int entities, Metrics metrics, double sumSquaredError) {
    public EntityGroup {
      values = List.copyOf(values);
    }

    /** Whether this is the row of the entities left over. */
    public boolean other() {
      return values.isEmpty();
    }

    /** The values joined by ", ", or "(other)". */
    public String label() {
      return values.isEmpty() ? "(other)" : String.join(", ", values);
    }
  }

  /**
   * The Diebold–Mariano tests of one pair at one horizon.
   *
   * @param stepMillis mean spacing in target time of the compared series (NaN with fewer than 2 or no spread)
   * @param comparison the tests; their {@code horizon} is the horizon in steps, k = ⌈h / step⌉
   */
  public record HorizonComparison(double stepMillis, Comparison comparison) { }

  /**
   * One configuration's results.
   *
   * @param label the label given
   * @param pipelineName the configuration's {@code name}
   * @param records records handed in
   * @param scored records scored a priori with an interval (the ones in the metrics)
   * @param forecasts records without a target (scored only)
   * @param warmingUp records scored while the model was warming up
   * @param rejected rejected records
   * @param rejectsByReason rejects per reason id, only reasons that occurred
   * @param overall metrics over all scored records
   * @param segments metrics per level of the segment field (sorted by level; "(absent)" last)
   * @param byHour metrics per local hour of day, 24 entries (hour 0 first)
   * @param overTime metrics per period, in time order
   * @param paths coefficient paths of the chosen columns (raw units, first partition)
   * @param sharing the configuration's {@code model.scope} and, with {@code global}, the shares its
   *     partitions made and folded
   */
  public record VariantResult(String label, String pipelineName, long records, long scored, long forecasts,
                              long warmingUp, long rejected, Map<String, Long> rejectsByReason, Metrics overall,
                              List<Segment> segments, List<Metrics> byHour, List<Bucket> overTime,
                              List<WeightPath> paths, Sharing sharing) {
    public VariantResult {
      rejectsByReason = Map.copyOf(rejectsByReason);
      segments = List.copyOf(segments);
      byHour = List.copyOf(byHour);
      overTime = List.copyOf(overTime);
      paths = List.copyOf(paths);
      java.util.Objects.requireNonNull(sharing, "sharing");
    }

    /** A result of {@code model.scope: partition} (no shares). */
    public VariantResult(String label, String pipelineName, long records, long scored, long forecasts,
                         long warmingUp, long rejected, Map<String, Long> rejectsByReason, Metrics overall,
                         List<Segment> segments, List<Metrics> byHour, List<Bucket> overTime, List<WeightPath> paths) {
      this(label, pipelineName, records, scored, forecasts, warmingUp, rejected, rejectsByReason, overall, segments,
          byHour, overTime, paths, Sharing.PARTITION);
    }
  }

  /**
   * A configuration's scope and what its partitions shared (docs/backtesting.md, "Global scope"):
   * counted over the last pass (a replay that set a record aside counts the pass without it).
   *
   * @param scope {@code partition} or {@code global}, as {@code model.scope}
   * @param sharesMade shares made by all partitions (0 with {@code partition})
   * @param sharesFolded shares folded by all partitions, each share once per partition that folded it
   * @param partitions the same per partition that had records, ascending (empty with {@code partition})
   */
  public record Sharing(String scope, long sharesMade, long sharesFolded, List<PartitionShares> partitions) {
    /** {@code model.scope: partition}: nothing shared. */
    public static final Sharing PARTITION = new Sharing("partition", 0, 0, List.of());

    public Sharing {
      partitions = List.copyOf(partitions);
    }

    /** Whether the configuration has {@code model.scope: global}. */
    public boolean global() {
      return "global".equals(scope);
    }
  }

  /** Shares one partition made, and folded (made by the others), in a global-scope configuration. */
  public record PartitionShares(int partition, long sharesMade, long sharesFolded) { }

  /** Metrics of one segment level. */
  public record Segment(String level, Metrics metrics) { }

  /**
   * Metrics of one period.
   *
   * @param start local start of the period, ISO 8601 without offset (e.g. 2026-03-25T00:00)
   * @param startLocalMillis the same as local epoch millis
   * @param metrics the period's metrics
   */
  public record Bucket(String start, long startLocalMillis, Metrics metrics) { }

  /** The path of one column's weight, at each coefficient snapshot of one partition. */
  public record WeightPath(String column, int partition, List<PathPoint> points) {
    public WeightPath {
      points = List.copyOf(points);
    }
  }

  /** One point of a path; NaN while the column does not exist. */
  public record PathPoint(long eventTimeMillis, double weight, double standardError) { }

  /**
   * The tests of one pair.
   *
   * @param a first label
   * @param b second label
   * @param n records scored by both (the pairs tested)
   * @param squared the test under squared loss
   * @param absolute the test under absolute loss
   * @param squaredVerdict plain-language verdict under squared loss
   * @param absoluteVerdict plain-language verdict under absolute loss
   */
  public record Comparison(String a, String b, int n, DieboldMariano.Result squared, DieboldMariano.Result absolute,
                           String squaredVerdict, String absoluteVerdict) { }

  /** The variant with this label, or null. */
  public VariantResult variant(String label) {
    for (VariantResult v : variants) {
      if (v.label().equals(label)) {
        return v;
      }
    }
    return null;
  }
}
