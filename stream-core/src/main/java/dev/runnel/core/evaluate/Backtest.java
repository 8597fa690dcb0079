package dev.runnel.core.evaluate;

import dev.runnel.core.config.ModelScope;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.feature.LocalCalendar;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.pipeline.SettledForecast;
import dev.runnel.core.pipeline.ShareExchange;
import dev.runnel.core.pipeline.Snapshot;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.FieldType;
import dev.runnel.core.record.RejectReason;
import java.time.LocalDateTime;
import java.time.ZoneOffset;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.TreeMap;

/**
 * Replays one stream through several configurations in one pass: every record is handed, as the
 * same bytes, to one {@link PipelineStep} per (configuration, partition) — the code that runs
 * live — and each step's a priori errors are logged for the report ({@link #result()}).
 *
 * <p>Determinism: each partition's records reach its steps in offset order, and the report reads
 * the logs partition by partition in ascending order, so the result does not depend on how a
 * source interleaves partitions: a topic and a recording of it give the same bits.
 *
 * <p>A configuration with {@code model.scope: global} is the exception: its partitions' steps share
 * and fold ({@link ShareExchange}: each share is made on the live period rule and folded by the
 * other partitions' steps before their next record), so its result depends on the order in which
 * records of different partitions are handed in. Its caller must hand them in one deterministic
 * order ({@code dev.runnel.connect.replay.MergedFeed} does: by Kafka timestamp, then partition, then
 * offset) and should name the partitions first ({@link #expectPartitions}); docs/backtesting.md,
 * "Global scope".
 *
 * <p>Threads: {@link #accept} runs every variant on the calling thread. A caller may instead give
 * each variant its own thread and call {@link #acceptFor} with that variant's index only; variants
 * share no mutable state. {@link #result()} must be called after all work has finished.
 */
public final class Backtest {

  /**
   * One configuration under test.
   *
   * @param label short unique name shown in the report (e.g. the file name)
   * @param config the checked configuration
   */
  public record Variant(String label, PipelineConfig config) {
    public Variant {
      if (label == null || label.isBlank()) {
        throw new IllegalArgumentException("a variant label must not be blank");
      }
    }
  }

  /**
   * What the report computes besides the overall metrics.
   *
   * @param segmentField a text field whose levels give segments, or null for none
   * @param periodMillis length of the over-time buckets in local time (e.g. one day); positive
   * @param weights column names whose coefficient paths are kept (e.g. {@code price_per_kwh})
   * @param lag HAC lag for the Diebold–Mariano test, or -1 for {@link DieboldMariano#defaultLag}
   * @param horizon forecast horizon h for the test (1 for prequential one-step errors)
   * @param alpha significance level of the verdicts, in (0, 1)
   * @param horizonsMillis forecast horizons to simulate (docs/backtesting.md, "Horizons"), each
   *     positive and distinct, in milliseconds; empty for none
   * @param breakdownEntities with horizons: how many entities get a row of their own in each
   *     horizon's breakdown (the rest share one row), 1 to {@value #MAX_BREAKDOWN_ENTITIES}
   * @param breakdownPeriod with horizons: the calendar period of each horizon's breakdown over time
   */
  public record Options(String segmentField, long periodMillis, List<String> weights, int lag, int horizon,
                        double alpha, List<Long> horizonsMillis, int breakdownEntities, BreakdownPeriod breakdownPeriod) {

    /** The most entities a breakdown shows one by one. */
    public static final int MAX_BREAKDOWN_ENTITIES = 100_000;

    /** Entities shown one by one unless set. */
    public static final int DEFAULT_BREAKDOWN_ENTITIES = 10;

    public Options {
      if (breakdownEntities < 1 || breakdownEntities > MAX_BREAKDOWN_ENTITIES) {
        throw new IllegalArgumentException("--breakdown-entities " + breakdownEntities
            + ": not allowed; use a whole number from 1 to " + MAX_BREAKDOWN_ENTITIES);
      }
      if (breakdownPeriod == null) {
        throw new IllegalArgumentException("--breakdown-period: missing; use week or month");
      }
      weights = List.copyOf(weights);
      horizonsMillis = List.copyOf(horizonsMillis);
      for (int i = 0; i < horizonsMillis.size(); i++) {
        long h = horizonsMillis.get(i);
        if (h <= 0) {
          throw new IllegalArgumentException("--horizons: " + h + " ms is not a horizon; give positive ISO 8601 durations, e.g. PT1H,P1D");
        }
        if (horizonsMillis.indexOf(h) != i) {
          throw new IllegalArgumentException("--horizons: " + h + " ms is given twice; give each horizon once");
        }
      }
      if (periodMillis <= 0) {
        throw new IllegalArgumentException("--period must be positive, got " + periodMillis + " ms");
      }
      if (lag < -1) {
        throw new IllegalArgumentException("--dm-lag must be -1 (automatic) or at least 0, got " + lag);
      }
      if (horizon < 1) {
        throw new IllegalArgumentException("--dm-steps must be at least 1, got " + horizon);
      }
      if (!(alpha > 0 && alpha < 1)) {
        throw new IllegalArgumentException("--alpha must be in (0, 1), got " + alpha);
      }
    }

    /** With the default breakdown (10 entities, ISO weeks). */
    public Options(String segmentField, long periodMillis, List<String> weights, int lag, int horizon, double alpha,
                   List<Long> horizonsMillis) {
      this(segmentField, periodMillis, weights, lag, horizon, alpha, horizonsMillis, DEFAULT_BREAKDOWN_ENTITIES,
          BreakdownPeriod.WEEK);
    }

    /** Without horizons. */
    public Options(String segmentField, long periodMillis, List<String> weights, int lag, int horizon, double alpha) {
      this(segmentField, periodMillis, weights, lag, horizon, alpha, List.of());
    }

    /** No segments, daily buckets, no paths, automatic lag, one-step, 5% level, no horizons. */
    public static Options defaults() {
      return new Options(null, 86_400_000L, List.of(), -1, 1, 0.05);
    }

    /** The same options with these horizons (milliseconds). */
    public Options withHorizons(List<Long> millis) {
      return new Options(segmentField, periodMillis, weights, lag, horizon, alpha, millis, breakdownEntities,
          breakdownPeriod);
    }

    /** The same options with this breakdown of each horizon. */
    public Options withBreakdown(int entities, BreakdownPeriod period) {
      return new Options(segmentField, periodMillis, weights, lag, horizon, alpha, horizonsMillis, entities, period);
    }
  }

  private final List<Variant> variants;
  private final Options options;
  private final VariantState[] states;
  private long records;
  /** The partitions named by {@link #expectPartitions}, or null. */
  private int[] partitions;

  /**
   * @param variants the configurations, at least one; labels unique. Not modified.
   * @param options report options
   * @throws IllegalArgumentException if there is no variant, a label repeats, or the segment
   *     field is not a text field of every configuration
   */
  public Backtest(List<Variant> variants, Options options) {
    if (variants.isEmpty()) {
      throw new IllegalArgumentException("--config: give at least one configuration (two or more to compare)");
    }
    this.variants = List.copyOf(variants);
    this.options = options;
    this.states = new VariantState[variants.size()];
    for (int i = 0; i < states.length; i++) {
      Variant v = variants.get(i);
      for (int j = 0; j < i; j++) {
        if (variants.get(j).label().equals(v.label())) {
          throw new IllegalArgumentException("two configurations share the label " + v.label()
              + "; give the files different names");
        }
      }
      int slot = -1;
      if (options.segmentField() != null) {
        var schema = v.config().input().schema();
        slot = schema.slot(options.segmentField());
        if (slot < 0 || schema.type(slot) != FieldType.TEXT) {
          throw new IllegalArgumentException("--segment-by " + options.segmentField() + ": not a text field of "
              + v.label() + " (its fields: " + schema.fields() + "); name a categorical (text) input field");
        }
      }
      states[i] = new VariantState(v, slot, options.weights(), horizonArray(options));
    }
  }

  private static long[] horizonArray(Options o) {
    long[] h = new long[o.horizonsMillis().size()];
    for (int i = 0; i < h.length; i++) {
      h[i] = o.horizonsMillis().get(i);
    }
    return h;
  }

  /**
   * A configuration's step threw on a record it had held back (horizons): the exception of the
   * record it was running, which may be an earlier one than the record just handed in.
   */
  public static final class RecordFailure extends RuntimeException {
    private final int partition;
    private final long offset;

    RecordFailure(int partition, long offset, RuntimeException cause) {
      super(cause.getClass().getName() + ": " + cause.getMessage() + " (at partition " + partition + ", offset " + offset + ")", cause);
      this.partition = partition;
      this.offset = offset;
    }

    /** The partition of the record the step threw on. */
    public int partition() { return partition; }

    /** The offset of the record the step threw on. */
    public long offset() { return offset; }
  }

  /**
   * Ends one variant's pass: with horizons, the records still held back are run now (and may throw
   * {@link RecordFailure}). Without horizons it does nothing. Call it on the variant's thread after
   * its last record; {@link #result()} calls it for variants not finished yet.
   */
  public void finishFor(int variant) {
    for (Lane lane : states[variant].lanes) {
      if (lane != null) {
        lane.finish();
      }
    }
  }

  /** The horizons, in milliseconds, in the order given. */
  public List<Long> horizonsMillis() {
    return options.horizonsMillis();
  }

  /**
   * One simulated forecast settled by its actual (for tests and inspection).
   *
   * @param partition source partition of the actual
   * @param originOffset source offset of the actual whose request it was
   * @param issueTimeMillis issue time (target − horizon)
   * @param targetTimeMillis target time
   * @param forecast point forecast; low, high its interval; actual the value that settled it
   */
  public record SettledSimulation(int partition, long originOffset, long issueTimeMillis, long targetTimeMillis,
                                  double forecast, double low, double high, double actual) { }

  /**
   * The simulated forecasts of one variant and horizon index that were settled, in partition order
   * and, within a partition, in the source order of the actual each was made for. Finishes the
   * variant's pass first ({@link #finishFor}).
   */
  public List<SettledSimulation> settledSimulations(int variant, int horizon) {
    finishFor(variant);
    List<SettledSimulation> out = new ArrayList<>();
    Lane[] lanes = states[variant].lanes;
    for (int p = 0; p < lanes.length; p++) {
      if (lanes[p] == null) {
        continue;
      }
      HorizonLog log = lanes[p].logs[horizon];
      int[] idx = log.sortedIndex();
      for (int k : idx) {
        out.add(new SettledSimulation(p, log.origin[k], log.issue[k], log.target[k], log.forecast[k], log.low[k],
            log.high[k], log.actual[k]));
      }
    }
    return out;
  }

  /** The variants, in the order given. */
  public List<Variant> variants() {
    return variants;
  }

  /**
   * Hands one record to every variant.
   *
   * @param buf the record's bytes (the Kafka value or one JSON line). Not modified.
   * @param off start in {@code buf}
   * @param len length
   * @param fallbackTimeMillis event time for configurations without a time field (the Kafka timestamp)
   * @param partition source partition, ≥ 0 (0 for a plain file)
   * @param offset source offset or line number
   * @throws IllegalArgumentException if {@code partition} is negative
   */
  public void accept(byte[] buf, int off, int len, long fallbackTimeMillis, int partition, long offset) {
    records++;
    for (int v = 0; v < states.length; v++) {
      states[v].accept(buf, off, len, fallbackTimeMillis, partition, offset);
    }
  }

  /**
   * Hands one record to one variant only (for callers that run each variant on its own thread;
   * every variant must then see every record). Does not count {@link #records()}.
   */
  public void acceptFor(int variant, byte[] buf, int off, int len, long fallbackTimeMillis, int partition, long offset) {
    states[variant].accept(buf, off, len, fallbackTimeMillis, partition, offset);
  }

  /**
   * Marks one record of one variant as set aside: its step threw on it (a defect, not bad input).
   * From now on that record is not handed to the variant's step but logged as a
   * {@code processing_failed} reject. Call {@link #reset()} and replay the stream again to get the
   * state of the stream without the record (the step that threw may have been left half updated).
   *
   * @param message what was thrown; not used in the result beyond the count
   */
  public void setAside(int variant, int partition, long offset, String message) {
    states[variant].setAside.put(new RecordId(partition, offset), message);
  }

  /** Whether {@link #setAside} was called for this record of this variant. */
  public boolean isSetAside(int variant, int partition, long offset) {
    return states[variant].setAside.containsKey(new RecordId(partition, offset));
  }

  /** Records set aside for a variant ({@link #setAside}). */
  public int setAsideCount(int variant) {
    return states[variant].setAside.size();
  }

  /** Forgets everything replayed so far (steps, logs, counts) but keeps the set-aside records, for a new pass. */
  public void reset() {
    records = 0;
    for (VariantState s : states) {
      s.lanes = new Lane[1];
      s.records = 0;
      s.newExchange(partitions);
      s.levelIds.clear();
      s.levels.clear();
      s.entityIds.clear();
      s.entities.clear();
    }
  }

  private record RecordId(int partition, long offset) {}

  /**
   * Names the partitions the records will come from, before the first record: each configuration
   * with {@code model.scope: global} then keeps an inbox of shares for each of them from the start
   * (a partition whose first record comes late still folds every share made before it), and holds
   * no list of every share made. Without it such a configuration learns the partitions as they come
   * and keeps every share made for the late ones. No effect on {@code model.scope: partition}.
   *
   * @param partitionNumbers the partitions, each ≥ 0. Not modified.
   * @throws IllegalStateException if a record was handed in already
   */
  public void expectPartitions(int[] partitionNumbers) {
    for (VariantState s : states) {
      if (s.records > 0) {
        throw new IllegalStateException("name the partitions before the first record (or after reset())");
      }
    }
    this.partitions = partitionNumbers.clone();
    for (VariantState s : states) {
      s.newExchange(partitions);
    }
  }

  /** Whether some configuration has {@code model.scope: global} (its result depends on the order across partitions). */
  public boolean globalScope() {
    for (VariantState s : states) {
      if (s.exchange != null) {
        return true;
      }
    }
    return false;
  }

  /** Shares made by a configuration's partitions so far (0 for {@code model.scope: partition}). */
  public long sharesMade(int variant) {
    ShareExchange ex = states[variant].exchange;
    return ex == null ? 0 : ex.sharesMade();
  }

  /** Shares folded by a configuration's partitions so far (0 for {@code model.scope: partition}). */
  public long sharesFolded(int variant) {
    ShareExchange ex = states[variant].exchange;
    return ex == null ? 0 : ex.sharesFolded();
  }

  /** Records handed to {@link #accept} (or counted by {@link #countRecords}). */
  public long records() {
    return records;
  }

  /** Adds to {@link #records()} for callers that use {@link #acceptFor}. */
  public void countRecords(long n) {
    records += n;
  }

  /** Records seen so far by one variant. */
  public long recordsOf(int variant) {
    return states[variant].records;
  }

  /** Builds the report: metrics, segments, buckets, paths, pairwise tests. Allocates. */
  public BacktestResult result() {
    for (int v = 0; v < states.length; v++) {
      finishFor(v);
    }
    List<BacktestResult.VariantResult> vrs = new ArrayList<>();
    for (VariantState s : states) {
      vrs.add(s.result(options));
    }
    List<BacktestResult.Comparison> cs = new ArrayList<>();
    for (int i = 0; i < states.length; i++) {
      for (int j = i + 1; j < states.length; j++) {
        cs.add(compare(states[i], states[j]));
      }
    }
    int partitions = 0;
    for (VariantState s : states) {
      partitions = Math.max(partitions, s.partitionCount());
    }
    return new BacktestResult(records, partitions, options.segmentField(), options.periodMillis(),
        options.alpha(), vrs, cs, horizonResults());
  }

  private List<BacktestResult.HorizonResult> horizonResults() {
    List<BacktestResult.HorizonResult> out = new ArrayList<>();
    long[] hs = horizonArray(options);
    for (int h = 0; h < hs.length; h++) {
      List<BacktestResult.Breakdown> bds = breakdowns(h);
      List<BacktestResult.HorizonVariant> hv = new ArrayList<>();
      for (int v = 0; v < states.length; v++) {
        hv.add(states[v].horizonResult(h, bds.get(v)));
      }
      List<BacktestResult.HorizonComparison> hc = new ArrayList<>();
      for (int i = 0; i < states.length; i++) {
        for (int j = i + 1; j < states.length; j++) {
          hc.add(compareAt(states[i], states[j], h, hs[h]));
        }
      }
      out.add(new BacktestResult.HorizonResult(hs[h], hv, hc));
    }
    return out;
  }

  /**
   * Each configuration's breakdown of one horizon (docs/backtesting.md, "Where within a horizon"):
   * the entities with the most settled forecasts over all configurations get a row each (ties by
   * their values), the rest one "(other)" row; hours and periods of the target time are local to
   * each configuration's {@code input.time_zone}; the period rows are the union over configurations.
   * Sums are exact ({@link ExactSum}), so the order of the forecasts does not matter.
   */
  private List<BacktestResult.Breakdown> breakdowns(int h) {
    Map<List<String>, long[]> counts = new HashMap<>();
    for (VariantState s : states) {
      long[] per = new long[s.entities.size()];
      for (Lane lane : s.lanes) {
        if (lane == null) {
          continue;
        }
        HorizonLog log = lane.logs[h];
        for (int k = 0; k < log.size; k++) {
          if (log.entity[k] >= 0) {
            per[log.entity[k]]++;
          }
        }
      }
      for (int e = 0; e < per.length; e++) {
        if (per[e] > 0) {
          counts.computeIfAbsent(s.entities.get(e), x -> new long[1])[0] += per[e];
        }
      }
    }
    List<Map.Entry<List<String>, long[]>> ranked = new ArrayList<>(counts.entrySet());
    ranked.sort((x, y) -> x.getValue()[0] != y.getValue()[0] ? Long.compare(y.getValue()[0], x.getValue()[0])
        : compareValues(x.getKey(), y.getKey()));
    int top = Math.min(options.breakdownEntities(), ranked.size());
    Map<List<String>, Integer> rowOf = new HashMap<>();
    for (int i = 0; i < top; i++) {
      rowOf.put(ranked.get(i).getKey(), i);
    }
    int leftOver = ranked.size() - top;
    BreakdownPeriod period = options.breakdownPeriod();
    List<GroupSums[]> entityRows = new ArrayList<>();
    List<GroupSums[]> hourRows = new ArrayList<>();
    List<TreeMap<Long, GroupSums>> periodRows = new ArrayList<>();
    List<GroupSums> totals = new ArrayList<>();
    java.util.TreeSet<Long> periodStarts = new java.util.TreeSet<>();
    for (VariantState s : states) {
      int[] row = new int[s.entities.size()];
      for (int e = 0; e < row.length; e++) {
        Integer r = rowOf.get(s.entities.get(e));
        row[e] = r == null ? top : r;
      }
      GroupSums[] ent = GroupSums.array(top + 1);
      GroupSums[] hours = GroupSums.array(24);
      TreeMap<Long, GroupSums> periods = new TreeMap<>();
      GroupSums total = new GroupSums();
      LocalCalendar cal = new LocalCalendar(s.variant.config().input().timeZone());
      long lastDay = Long.MIN_VALUE;
      GroupSums inPeriod = null;
      for (Lane lane : s.lanes) {
        if (lane == null) {
          continue;
        }
        HorizonLog log = lane.logs[h];
        for (int k = 0; k < log.size; k++) {
          double e = log.actual[k] - log.forecast[k];
          boolean cov = log.actual[k] >= log.low[k] && log.actual[k] <= log.high[k];
          total.add(e, cov);
          if (log.entity[k] >= 0) {
            ent[row[log.entity[k]]].add(e, cov);
          }
          long local = cal.localMillis(log.target[k]);
          hours[(int) (Math.floorMod(local, DAY_MILLIS) / HOUR_MILLIS)].add(e, cov);
          long day = Math.floorDiv(local, DAY_MILLIS);
          if (day != lastDay) {
            lastDay = day;
            inPeriod = periods.computeIfAbsent(period.start(day), x -> new GroupSums());
          }
          inPeriod.add(e, cov);
        }
      }
      periodStarts.addAll(periods.keySet());
      entityRows.add(ent);
      hourRows.add(hours);
      periodRows.add(periods);
      totals.add(total);
    }
    List<BacktestResult.Breakdown> out = new ArrayList<>();
    for (int v = 0; v < states.length; v++) {
      VariantState s = states[v];
      List<BacktestResult.EntityGroup> byEntity = new ArrayList<>();
      if (s.entitySlots.length > 0) {
        GroupSums[] ent = entityRows.get(v);
        for (int i = 0; i < top; i++) {
          byEntity.add(ent[i].entityGroup(ranked.get(i).getKey(), 1));
        }
        if (leftOver > 0) {
          byEntity.add(ent[top].entityGroup(List.of(), leftOver));
        }
      }
      List<BacktestResult.Group> byHour = new ArrayList<>(24);
      for (int hr = 0; hr < 24; hr++) {
        byHour.add(hourRows.get(v)[hr].group(String.format(Locale.ROOT, "%02d", hr)));
      }
      List<BacktestResult.Group> byPeriod = new ArrayList<>();
      for (long start : periodStarts) {
        GroupSums g = periodRows.get(v).get(start);
        byPeriod.add((g != null ? g : new GroupSums()).group(period.label(start)));
      }
      PipelineConfig.Input in = s.variant.config().input();
      out.add(new BacktestResult.Breakdown(in.forecast().enabled() ? in.forecast().entityFields() : List.of(),
          options.breakdownEntities(), period, byEntity, byHour, byPeriod, totals.get(v).group("total")));
    }
    return out;
  }

  private static final long DAY_MILLIS = 86_400_000L;
  private static final long HOUR_MILLIS = 3_600_000L;

  /** Lexicographic order of two entities' values (String order: by UTF-16 code units, no locale). */
  private static int compareValues(List<String> a, List<String> b) {
    for (int i = 0; i < Math.min(a.size(), b.size()); i++) {
      int c = a.get(i).compareTo(b.get(i));
      if (c != 0) {
        return c;
      }
    }
    return Integer.compare(a.size(), b.size());
  }

  /** One row of a breakdown being summed: count, covered and exact sums of e, |e| and e·e. */
  private static final class GroupSums {
    long count;
    long covered;
    final ExactSum sumAbs = new ExactSum();
    final ExactSum sumSq = new ExactSum();
    final ExactSum sumErr = new ExactSum();

    static GroupSums[] array(int n) {
      GroupSums[] a = new GroupSums[n];
      for (int i = 0; i < n; i++) {
        a[i] = new GroupSums();
      }
      return a;
    }

    void add(double e, boolean wasCovered) {
      count++;
      if (wasCovered) {
        covered++;
      }
      sumAbs.add(Math.abs(e));
      sumSq.add(e * e);
      sumErr.add(e);
    }

    /** As {@link Metrics.Accumulator#metrics}, from the exact sums rounded once. */
    Metrics metrics() {
      if (count == 0) {
        return Metrics.EMPTY;
      }
      return new Metrics(count, sumAbs.value() / count, Math.sqrt(sumSq.value() / count), sumErr.value() / count,
          (double) covered / count);
    }

    BacktestResult.Group group(String label) {
      return new BacktestResult.Group(label, metrics(), sumSq.value());
    }

    BacktestResult.EntityGroup entityGroup(List<String> values, int entities) {
      return new BacktestResult.EntityGroup(values, entities, metrics(), sumSq.value());
    }
  }

  /**
   * The Diebold–Mariano tests at one horizon: the simulated forecasts both variants settled for
   * the same actual (partition and source offset), partitions concatenated in order, each in source
   * order. The horizon in steps of this series is k = ⌈h / step⌉, with the step its mean spacing
   * in target time, (latest − earliest target time) / (n − 1); k sets the test's small-sample
   * correction and its least HAC lag k − 1 (forecasts less than h apart share unknowns, so their
   * errors are correlated over k entries).
   */
  private BacktestResult.HorizonComparison compareAt(VariantState a, VariantState b, int h, long horizonMillis) {
    int maxPartitions = Math.max(a.lanes.length, b.lanes.length);
    int total = 0;
    for (int p = 0; p < maxPartitions; p++) {
      Lane la = a.lane(p);
      Lane lb = b.lane(p);
      if (la != null && lb != null) {
        total += Math.min(la.logs[h].size, lb.logs[h].size);
      }
    }
    double[] ea = new double[total];
    double[] eb = new double[total];
    long minT = Long.MAX_VALUE;
    long maxT = Long.MIN_VALUE;
    int n = 0;
    for (int p = 0; p < maxPartitions; p++) {
      Lane la = a.lane(p);
      Lane lb = b.lane(p);
      if (la == null || lb == null) {
        continue;
      }
      HorizonLog x = la.logs[h];
      HorizonLog y = lb.logs[h];
      int[] ix = x.sortedIndex();
      int[] iy = y.sortedIndex();
      int i = 0;
      int j = 0;
      while (i < ix.length && j < iy.length) {
        long ox = x.origin[ix[i]];
        long oy = y.origin[iy[j]];
        if (ox < oy) {
          i++;
        } else if (oy < ox) {
          j++;
        } else {
          ea[n] = x.actual[ix[i]] - x.forecast[ix[i]];
          eb[n] = y.actual[iy[j]] - y.forecast[iy[j]];
          minT = Math.min(minT, x.target[ix[i]]);
          maxT = Math.max(maxT, x.target[ix[i]]);
          n++;
          i++;
          j++;
        }
      }
    }
    double step = n >= 2 && maxT > minT ? (double) (maxT - minT) / (n - 1) : Double.NaN;
    int k = Double.isNaN(step) ? 1 : (int) Math.min(Integer.MAX_VALUE, Math.max(1L, (long) Math.ceil(horizonMillis / step)));
    int lag = options.lag() >= 0 ? options.lag() : DieboldMariano.defaultLag(n, k);
    DieboldMariano.Result sq = DieboldMariano.test(ea, eb, n, Loss.SQUARED, lag, k);
    DieboldMariano.Result ab = DieboldMariano.test(ea, eb, n, Loss.ABSOLUTE, lag, k);
    String la = a.variant.label();
    String lb = b.variant.label();
    return new BacktestResult.HorizonComparison(step, new BacktestResult.Comparison(la, lb, n, sq, ab,
        sq.verdict(la, lb, options.alpha()), ab.verdict(la, lb, options.alpha())));
  }

  /** The settled simulated forecasts of one lane and horizon, in the order they settled. */
  static final class HorizonLog {
    long[] origin = new long[64];
    long[] issue = new long[64];
    long[] target = new long[64];
    double[] forecast = new double[64];
    double[] low = new double[64];
    double[] high = new double[64];
    double[] actual = new double[64];
    /** The entity's id in the variant's table ({@link VariantState#entityId}), or -1 without one. */
    int[] entity = new int[64];
    int size;

    void add(long o, long is, long t, double f, double lo, double hi, double a, int e) {
      if (size == origin.length) {
        int n = size * 2;
        entity = Arrays.copyOf(entity, n);
        origin = Arrays.copyOf(origin, n);
        issue = Arrays.copyOf(issue, n);
        target = Arrays.copyOf(target, n);
        forecast = Arrays.copyOf(forecast, n);
        low = Arrays.copyOf(low, n);
        high = Arrays.copyOf(high, n);
        actual = Arrays.copyOf(actual, n);
      }
      origin[size] = o;
      issue[size] = is;
      target[size] = t;
      forecast[size] = f;
      low[size] = lo;
      high[size] = hi;
      actual[size] = a;
      entity[size] = e;
      size++;
    }

    /** Indices in the order of the actual that asked for each forecast (stable). */
    int[] sortedIndex() {
      Integer[] boxed = new Integer[size];
      for (int i = 0; i < size; i++) {
        boxed[i] = i;
      }
      Arrays.sort(boxed, (p, q) -> Long.compare(origin[p], origin[q]));
      int[] out = new int[size];
      for (int i = 0; i < size; i++) {
        out[i] = boxed[i];
      }
      return out;
    }
  }

  private BacktestResult.Comparison compare(VariantState a, VariantState b) {
    int n = 0;
    int maxPartitions = Math.max(a.lanes.length, b.lanes.length);
    long total = 0;
    for (int p = 0; p < maxPartitions; p++) {
      Lane la = a.lane(p);
      Lane lb = b.lane(p);
      if (la != null && lb != null) {
        total += Math.min(la.size, lb.size);
      }
    }
    double[] ea = new double[(int) Math.min(Integer.MAX_VALUE - 8, total)];
    double[] eb = new double[ea.length];
    for (int p = 0; p < maxPartitions; p++) {
      Lane la = a.lane(p);
      Lane lb = b.lane(p);
      if (la == null || lb == null) {
        continue;
      }
      int m = Math.min(la.size, lb.size);
      for (int k = 0; k < m; k++) {
        double x = la.errors[k];
        double y = lb.errors[k];
        if (!Double.isNaN(x) && !Double.isNaN(y)) {
          ea[n] = x;
          eb[n] = y;
          n++;
        }
      }
    }
    int lag = options.lag() >= 0 ? options.lag() : DieboldMariano.defaultLag(n, options.horizon());
    DieboldMariano.Result sq = DieboldMariano.test(ea, eb, n, Loss.SQUARED, lag, options.horizon());
    DieboldMariano.Result ab = DieboldMariano.test(ea, eb, n, Loss.ABSOLUTE, lag, options.horizon());
    String la = a.variant.label();
    String lb = b.variant.label();
    return new BacktestResult.Comparison(la, lb, n, sq, ab,
        sq.verdict(la, lb, options.alpha()), ab.verdict(la, lb, options.alpha()));
  }

  // ------------------------------------------------------------------ per variant

  /** One variant: its steps and logs, one lane per partition. One writer thread. */
  private static final class VariantState {
    final Variant variant;
    final int segmentSlot;
    final List<String> weightNames;
    Lane[] lanes = new Lane[1];
    long records;
    final Map<String, Integer> levelIds = new HashMap<>();
    final List<String> levels = new ArrayList<>();
    final Map<RecordId, String> setAside = new HashMap<>();
    final long[] horizons;
    /** The slots of {@code input.forecast.entity_fields} (empty without input.forecast). */
    final int[] entitySlots;
    /** The entities of the settled simulated forecasts: values by id, and ids by values. */
    final List<List<String>> entities = new ArrayList<>();
    final Map<List<String>, Integer> entityIds = new HashMap<>();
    /** With {@code model.scope: global}: the shares between this variant's lanes; else null. */
    ShareExchange exchange;

    VariantState(Variant variant, int segmentSlot, List<String> weightNames, long[] horizons) {
      this.variant = variant;
      this.segmentSlot = segmentSlot;
      this.weightNames = weightNames;
      this.horizons = horizons;
      PipelineConfig.Input in = variant.config().input();
      List<String> fields = in.forecast().enabled() ? in.forecast().entityFields() : List.of();
      this.entitySlots = new int[fields.size()];
      for (int i = 0; i < entitySlots.length; i++) {
        entitySlots[i] = in.schema().slot(fields.get(i));
      }
      newExchange(null);
    }

    /** The scope and, with global scope, the shares made and folded per partition that had records. */
    BacktestResult.Sharing sharing() {
      if (exchange == null) {
        return BacktestResult.Sharing.PARTITION;
      }
      List<BacktestResult.PartitionShares> per = new ArrayList<>();
      for (int p = 0; p < lanes.length; p++) {
        if (lanes[p] != null) {
          per.add(new BacktestResult.PartitionShares(p, exchange.sharesMadeBy(p), exchange.sharesFoldedBy(p)));
        }
      }
      return new BacktestResult.Sharing("global", exchange.sharesMade(), exchange.sharesFolded(), per);
    }

    /** A new exchange for a new pass (global scope only): for these partitions, or open when null. */
    void newExchange(int[] partitions) {
      if (variant.config().model().scope() != ModelScope.GLOBAL) {
        exchange = null;
      } else {
        exchange = partitions == null ? new ShareExchange() : new ShareExchange(partitions);
      }
    }

    /** The id of the record's entity (its entity fields' values), or -1 without entity fields. Allocates. */
    int entityId(EventRecord record) {
      if (entitySlots.length == 0) {
        return -1;
      }
      List<String> values;
      if (entitySlots.length == 1) {
        values = List.of(String.valueOf(record.text(entitySlots[0])));
      } else {
        String[] vs = new String[entitySlots.length];
        for (int i = 0; i < vs.length; i++) {
          vs[i] = String.valueOf(record.text(entitySlots[i]));
        }
        values = List.of(vs);
      }
      Integer id = entityIds.get(values);
      if (id == null) {
        id = entities.size();
        entities.add(values);
        entityIds.put(values, id);
      }
      return id;
    }

    BacktestResult.HorizonVariant horizonResult(int h, BacktestResult.Breakdown breakdown) {
      Metrics.Accumulator acc = new Metrics.Accumulator();
      long warming = 0;
      long unsettled = 0;
      long beyond = 0;
      long notIssued = 0;
      long lookahead = 0;
      int held = 0;
      for (Lane lane : lanes) {
        if (lane == null) {
          continue;
        }
        HorizonLog log = lane.logs[h];
        for (int k : log.sortedIndex()) {
          double e = log.actual[k] - log.forecast[k];
          acc.add(e, log.actual[k] >= log.low[k] && log.actual[k] <= log.high[k]);
        }
        warming += lane.requestsWarming[h];
        unsettled += lane.requestsRemembered[h] - log.size;
        beyond += lane.simulated.beyondLookahead[h];
        notIssued += lane.simulated.notBeforeActual[h] + lane.requestsRejected[h];
        lookahead = lane.simulated.lookaheadMillis();
        held = Math.max(held, lane.simulated.maxHeld());
      }
      return new BacktestResult.HorizonVariant(variant.label(), acc.metrics(), warming, unsettled, beyond, notIssued,
          lookahead, held, breakdown);
    }

    Lane lane(int p) {
      return p < lanes.length ? lanes[p] : null;
    }

    int partitionCount() {
      int c = 0;
      for (Lane l : lanes) {
        if (l != null) {
          c++;
        }
      }
      return c;
    }

    void accept(byte[] buf, int off, int len, long fallback, int partition, long offset) {
      if (partition < 0) {
        throw new IllegalArgumentException("partition must not be negative, got " + partition);
      }
      if (partition >= lanes.length) {
        lanes = Arrays.copyOf(lanes, Math.max(partition + 1, lanes.length * 2));
      }
      Lane lane = lanes[partition];
      if (lane == null) {
        lane = new Lane(this, partition);
        lanes[partition] = lane;
      }
      records++;
      if (!setAside.isEmpty() && setAside.containsKey(new RecordId(partition, offset))) {
        lane.setAside(fallback, offset);
        return;
      }
      lane.process(buf, off, len, fallback, offset);
    }

    int levelId(String level) {
      Integer id = levelIds.get(level);
      if (id == null) {
        id = levels.size();
        levels.add(level);
        levelIds.put(level, id);
      }
      return id;
    }

    BacktestResult.VariantResult result(Options o) {
      PipelineConfig cfg = variant.config();
      LocalCalendar cal = new LocalCalendar(cfg.input().timeZone());
      Metrics.Accumulator overall = new Metrics.Accumulator();
      Metrics.Accumulator[] byHour = new Metrics.Accumulator[24];
      for (int h = 0; h < 24; h++) {
        byHour[h] = new Metrics.Accumulator();
      }
      Metrics.Accumulator[] byLevel = new Metrics.Accumulator[levels.size()];
      Metrics.Accumulator absent = new Metrics.Accumulator();
      for (int i = 0; i < byLevel.length; i++) {
        byLevel[i] = new Metrics.Accumulator();
      }
      TreeMap<Long, Metrics.Accumulator> buckets = new TreeMap<>();
      long rec = 0;
      long scored = 0;
      long forecasts = 0;
      long warming = 0;
      long rejected = 0;
      long[] reasons = new long[RejectReason.values().length];
      List<BacktestResult.WeightPath> paths = new ArrayList<>();
      int firstPartition = -1;
      for (int p = 0; p < lanes.length; p++) {
        Lane lane = lanes[p];
        if (lane == null) {
          continue;
        }
        if (firstPartition < 0) {
          firstPartition = p;
        }
        PipelineStep st = lane.step;
        // the simulated requests (horizons) are not records of the source: their counts come off
        rec += st.records() - lane.synthRecords;
        forecasts += st.forecasts() - lane.synthForecasts;
        warming += st.warmingUp() - lane.synthWarming;
        rejected += st.rejected() - lane.synthRejected;
        for (RejectReason r : RejectReason.values()) {
          reasons[r.ordinal()] += st.rejected(r) - lane.synthRejectedBy[r.ordinal()];
        }
        rec += lane.setAside;
        rejected += lane.setAside;
        reasons[RejectReason.PROCESSING_FAILED.ordinal()] += lane.setAside;
        Metrics.Accumulator bucket = null;
        long bucketKey = Long.MIN_VALUE;
        for (int k = 0; k < lane.size; k++) {
          double e = lane.errors[k];
          if (Double.isNaN(e)) {
            continue;
          }
          scored++;
          boolean cov = lane.covered[k] != 0;
          overall.add(e, cov);
          long local = cal.localMillis(lane.times[k]);
          int hour = (int) (Math.floorMod(local, 86_400_000L) / 3_600_000L);
          byHour[hour].add(e, cov);
          int lev = lane.segments[k];
          if (segmentSlot >= 0) {
            (lev >= 0 ? byLevel[lev] : absent).add(e, cov);
          }
          long key = Math.floorDiv(local, o.periodMillis());
          if (key != bucketKey) {
            bucketKey = key;
            bucket = buckets.computeIfAbsent(key, x -> new Metrics.Accumulator());
          }
          bucket.add(e, cov);
        }
      }
      Map<String, Long> rejectsByReason = new LinkedHashMap<>();
      for (RejectReason r : RejectReason.values()) {
        if (reasons[r.ordinal()] > 0) {
          rejectsByReason.put(r.id(), reasons[r.ordinal()]);
        }
      }
      List<BacktestResult.Segment> segments = new ArrayList<>();
      if (segmentSlot >= 0) {
        TreeMap<String, Metrics> sorted = new TreeMap<>();
        for (int i = 0; i < byLevel.length; i++) {
          sorted.put(levels.get(i), byLevel[i].metrics());
        }
        for (Map.Entry<String, Metrics> e : sorted.entrySet()) {
          if (e.getValue().count() > 0) {
            segments.add(new BacktestResult.Segment(e.getKey(), e.getValue()));
          }
        }
        Metrics am = absent.metrics();
        if (am.count() > 0) {
          segments.add(new BacktestResult.Segment("(absent)", am));
        }
      }
      List<Metrics> hours = new ArrayList<>(24);
      for (Metrics.Accumulator a : byHour) {
        hours.add(a.metrics());
      }
      List<BacktestResult.Bucket> overTime = new ArrayList<>();
      for (Map.Entry<Long, Metrics.Accumulator> e : buckets.entrySet()) {
        long startLocal = e.getKey() * o.periodMillis();
        String label = LocalDateTime.ofEpochSecond(Math.floorDiv(startLocal, 1000L), 0, ZoneOffset.UTC).toString();
        overTime.add(new BacktestResult.Bucket(label, startLocal, e.getValue().metrics()));
      }
      if (firstPartition >= 0) {
        Lane lane = lanes[firstPartition];
        lane.finalSnapshot();
        for (int w = 0; w < weightNames.size(); w++) {
          List<BacktestResult.PathPoint> pts = new ArrayList<>(lane.pathTimes.size());
          for (int i = 0; i < lane.pathTimes.size(); i++) {
            double[] ws = lane.pathValues.get(i);
            pts.add(new BacktestResult.PathPoint(lane.pathTimes.get(i), ws[2 * w], ws[2 * w + 1]));
          }
          paths.add(new BacktestResult.WeightPath(weightNames.get(w), firstPartition, pts));
        }
      }
      return new BacktestResult.VariantResult(variant.label(), cfg.name(), rec, scored, forecasts, warming,
          rejected, rejectsByReason, overall.metrics(), segments, hours, overTime, paths, sharing());
    }
  }

  /** One (variant, partition): the live step and the log of its a priori errors, one entry per record. */
  private static final class Lane implements PipelineStep.Sink, SimulatedForecasts.Receiver {
    /** A simulated request's source partition: this minus the horizon index (real ones are ≥ -1). */
    static final long SIMULATED_PARTITION = -2;
    final VariantState owner;
    final PipelineStep step;
    final int partition;
    /** With horizons: the look-ahead that merges simulated requests; else null. */
    final SimulatedForecasts simulated;
    final HorizonLog[] logs;
    final long[] requestsRemembered;
    final long[] requestsWarming;
    final long[] requestsRejected;
    long synthRecords;
    long synthForecasts;
    long synthWarming;
    long synthRejected;
    final long[] synthRejectedBy = new long[RejectReason.values().length];
    /** The horizon index of the simulated request being run, or -1. */
    private int inRequest = -1;
    private long requestOrigin;
    private long requestIssue;
    private long requestTarget;
    private boolean learned;
    private double learnedActual;
    /**
     * Without {@code input.forecast} (no entity to join on): the simulated forecasts made and not yet
     * settled, by the source offset of the actual they were made for; that actual settles them.
     */
    private final Map<Long, List<double[]>> outstanding;
    private final boolean viaPending;
    private boolean finished;
    double[] errors = new double[1024];
    long[] times = new long[1024];
    int[] segments = new int[1024];
    byte[] covered = new byte[1024];
    int size;
    /** Records set aside in this lane ({@link Backtest#setAside}). */
    long setAside;
    // filled by the sink during one process call
    private double pendingError;
    private long pendingTime;
    private int pendingSegment;
    private boolean pendingCovered;
    final List<Long> pathTimes = new ArrayList<>();
    final List<double[]> pathValues = new ArrayList<>();
    private long lastSnapshotRecords = -1;

    Lane(VariantState owner, int partition) {
      this.owner = owner;
      this.partition = partition;
      int nh = owner.horizons.length;
      // the partition is the source of the step's shares with model.scope: global (unused otherwise)
      this.step = new PipelineStep(owner.variant.config(), partition);
      this.viaPending = owner.variant.config().input().forecast().enabled();
      this.outstanding = nh > 0 && !viaPending ? new HashMap<>() : null;
      this.simulated = nh > 0 ? new SimulatedForecasts(owner.horizons, owner.variant.config(), step, this) : null;
      this.logs = new HorizonLog[nh];
      for (int h = 0; h < nh; h++) {
        logs[h] = new HorizonLog();
      }
      this.requestsRemembered = new long[nh];
      this.requestsWarming = new long[nh];
      this.requestsRejected = new long[nh];
    }

    void setAside(long fallback, long offset) {
      if (simulated != null) {
        simulated.offerSetAside(fallback, offset);
      } else {
        setAsideNow(fallback);
      }
    }

    void process(byte[] buf, int off, int len, long fallback, long offset) {
      if (simulated != null) {
        simulated.offer(buf, off, len, fallback, offset);
      } else {
        processNow(buf, off, len, fallback, offset);
      }
    }

    void finish() {
      if (simulated != null && !finished) {
        finished = true;
        simulated.finish();
      }
    }

    @Override
    public boolean release(byte[] buf, int len, long fallback, long offset, boolean aside) {
      if (aside) {
        setAsideNow(fallback);
        return false;
      }
      learned = false;
      try {
        processNow(buf, 0, len, fallback, offset);
      } catch (RuntimeException e) {
        throw new RecordFailure(partition, offset, e);
      }
      if (outstanding != null && !outstanding.isEmpty()) {
        // without input.forecast: the forecasts made for this actual are settled by it once learned
        List<double[]> made = outstanding.remove(offset);
        if (made != null && learned) {
          for (double[] m : made) {
            logs[(int) m[0]].add(offset, (long) m[1], (long) m[2], m[3], m[4], m[5], learnedActual, -1);
          }
        }
      }
      return learned;
    }

    @Override
    public void request(int horizon, long issueMillis, long targetMillis, long originOffset) {
      inRequest = horizon;
      requestOrigin = originOffset;
      requestIssue = issueMillis;
      requestTarget = targetMillis;
      try {
        step.processRequest(issueMillis, targetMillis, SIMULATED_PARTITION - horizon, originOffset, this);
      } catch (RuntimeException e) {
        throw new RecordFailure(partition, originOffset, e);
      } finally {
        inRequest = -1;
      }
    }

    /** A record set aside: logged like a reject, the step not touched. */
    void setAsideNow(long fallback) {
      setAside++;
      pendingError = Double.NaN;
      pendingTime = fallback;
      pendingSegment = -1;
      pendingCovered = false;
      log();
    }

    void processNow(byte[] buf, int off, int len, long fallback, long offset) {
      pendingError = Double.NaN;
      pendingTime = fallback;
      pendingSegment = -1;
      pendingCovered = false;
      ShareExchange ex = owner.exchange;
      if (ex != null) {
        ex.before(partition, step); // the others' shares made since this partition's last record
      }
      step.process(buf, off, len, fallback, partition, offset, this);
      if (ex != null) {
        ex.after(partition, step);
      }
      log();
    }

    private void log() {
      if (size == errors.length) {
        int n = size * 2;
        errors = Arrays.copyOf(errors, n);
        times = Arrays.copyOf(times, n);
        segments = Arrays.copyOf(segments, n);
        covered = Arrays.copyOf(covered, n);
      }
      errors[size] = pendingError;
      times[size] = pendingTime;
      segments[size] = pendingSegment;
      covered[size] = (byte) (pendingCovered ? 1 : 0);
      size++;
    }

    @Override
    public void settled(SettledForecast s, EventRecord record) {
      long h = SIMULATED_PARTITION - s.requestPartition();
      // a forecast settled again against a corrected actual (corrections: replace) counts once, at its
      // first settling, as the snapshots' errors by horizon count it
      if (h >= 0 && h < logs.length && !s.correction()) {
        logs[(int) h].add(s.requestOffset(), s.issueTimeMillis(), s.targetTimeMillis(), s.forecast(), s.low(), s.high(),
            s.actual(), owner.entityId(record));
      }
    }

    @Override
    public void prediction(Prediction p, EventRecord record) {
      if (inRequest >= 0) {
        synthRecords++;
        synthForecasts++;
        if (p.status() == Prediction.Status.WARMING_UP) {
          synthWarming++;
          requestsWarming[inRequest]++;
        } else {
          requestsRemembered[inRequest]++;
          if (outstanding != null) {
            // times as doubles: exact below 2^53 ms (the year 287,000)
            outstanding.computeIfAbsent(requestOrigin, o -> new ArrayList<>(2)).add(new double[] {inRequest,
                requestIssue, requestTarget, p.predicted(), p.low(), p.high()});
          }
        }
        return;
      }
      if (!Double.isNaN(p.actual())) {
        learned = true;
        learnedActual = p.actual();
      }
      pendingTime = p.eventTimeMillis();
      if (p.status() == Prediction.Status.SCORED && !Double.isNaN(p.low()) && !Double.isNaN(p.actual())) {
        pendingError = p.error();
        pendingCovered = p.covered();
        int slot = owner.segmentSlot;
        if (slot >= 0 && record.present(slot)) {
          pendingSegment = owner.levelId(record.text(slot));
        }
      }
    }

    @Override
    public void reject(RejectReason reason, String detail) {
      if (inRequest >= 0) {
        synthRecords++;
        synthRejected++;
        synthRejectedBy[reason.ordinal()]++;
        requestsRejected[inRequest]++;
      }
      // counted by the step; the log entry stays NaN
    }

    @Override
    public void snapshotDue() {
      if (!owner.weightNames.isEmpty()) {
        takeSnapshot();
      }
    }

    void finalSnapshot() {
      if (!owner.weightNames.isEmpty() && lastSnapshotRecords != step.records()) {
        takeSnapshot();
      }
    }

    private void takeSnapshot() {
      if (!step.model().ready()) {
        return;
      }
      Snapshot s = step.snapshot();
      List<String> names = owner.weightNames;
      double[] v = new double[2 * names.size()];
      Arrays.fill(v, Double.NaN);
      for (Snapshot.Column c : s.columns()) {
        int i = names.indexOf(c.name());
        if (i >= 0) {
          v[2 * i] = c.rawWeight();
          v[2 * i + 1] = c.rawStandardError();
        }
      }
      pathTimes.add(s.eventTimeMillis());
      pathValues.add(v);
      lastSnapshotRecords = step.records();
    }
  }
}
