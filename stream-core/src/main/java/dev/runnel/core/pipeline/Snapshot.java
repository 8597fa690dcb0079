package dev.runnel.core.pipeline;

import dev.runnel.core.drift.DriftAlarm;
import dev.runnel.core.drift.DriftMonitor;
import dev.runnel.core.drift.DriftStatus;
import dev.runnel.core.feature.Featurizer;
import dev.runnel.core.model.RlsModel;
import dev.runnel.core.record.RejectReason;
import java.util.ArrayList;
import java.util.List;

/**
 * An immutable picture of one pipeline's model at one moment: every column's weight in the
 * model's (standardized) basis and in the raw units of its input, with standard errors, the noise
 * level, the effective sample size, the vocabularies and scalers, and the prequential metrics.
 * Built on the cold path (allocates; O(p³)).
 *
 * <p>Raw units: a scaled column encodes {@code z = (v − m)/s}, so its weight per unit of the
 * (transformed) input is {@code w/s}, and the constant in raw units is
 * {@code w₀ − Σ w_j m_j / s_j}; its standard error uses the full covariance,
 * {@code se(c) = σ √(cᵀ (RᵀR)⁻¹ c)} with {@code c = e₀ − Σ (m_j/s_j) e_j}.
 *
 * @param eventTimeMillis the stream clock's time; for a snapshot of an event-time period, the end of
 *     that period (periods are half-open: it holds the records before this time)
 * @param records records handed in, including rejected ones
 * @param trained records the model learned from
 * @param forecasts records scored without a target
 * @param rejected rejected records
 * @param layoutVersion the layout's version
 * @param ready whether the model gives weights (false while a diffuse start warms up)
 * @param noiseSd the noise sd used for intervals (faded a priori errors)
 * @param residualSd the residual sd used for standard errors
 * @param effectiveSampleSize Σ of the records' forgetting weights
 * @param columns one entry per column, in layout order
 * @param vocabularies one entry per one-hot feature
 * @param scalers one entry per scaled column
 * @param metrics prequential metrics overall and over the fading window
 * @param index the snapshot's sequence number in this pipeline's state (0 for the first; -1 if none was due yet)
 * @param alarms the drift alarms raised at this snapshot
 * @param drift the drift monitor's status (null when not known)
 * @param forecasting the forecast counts and the settled forecasts' errors by horizon; null without
 *     {@code input.forecast}
 * @param contrasts per one-hot feature, its levels' effects against the mean of its levels with
 *     standard errors (empty unless {@code drift.contrast_levels} &gt; 0)
 * @param sharing with {@code model.scope: global}, what this partition's view of the one model holds
 *     beyond its own records; null for a model per partition
 */
public record Snapshot(long eventTimeMillis, long records, long trained, long forecasts, long rejected,
                       long layoutVersion, boolean ready, double noiseSd, double residualSd,
                       double effectiveSampleSize, List<Column> columns,
                       List<Featurizer.VocabularySnapshot> vocabularies,
                       List<Featurizer.ScalerSnapshot> scalers, Metrics metrics, long index,
                       List<DriftAlarm> alarms, DriftStatus drift, Forecasting forecasting, List<Contrasts> contrasts,
                       Sharing sharing) {

  /** Version of the snapshot's published layout (see docs/formats.md). */
  public static final int FORMAT_VERSION = 2;

  /** A snapshot of a model per partition (no {@link Sharing}). */
  public Snapshot(long eventTimeMillis, long records, long trained, long forecasts, long rejected,
                  long layoutVersion, boolean ready, double noiseSd, double residualSd,
                  double effectiveSampleSize, List<Column> columns,
                  List<Featurizer.VocabularySnapshot> vocabularies,
                  List<Featurizer.ScalerSnapshot> scalers, Metrics metrics, long index,
                  List<DriftAlarm> alarms, DriftStatus drift, Forecasting forecasting, List<Contrasts> contrasts) {
    this(eventTimeMillis, records, trained, forecasts, rejected, layoutVersion, ready, noiseSd, residualSd,
        effectiveSampleSize, columns, vocabularies, scalers, metrics, index, alarms, drift, forecasting, contrasts, null);
  }

  /**
   * With {@code model.scope: global}: this partition's part in the one model (docs/formats.md).
   *
   * @param partition the partition whose view this is
   * @param sharesMade shares this partition made
   * @param sharesFolded shares of other partitions folded into its view
   * @param foldedBySource per source partition, the last share's sequence number folded (sorted by partition)
   * @param viewColumns the view's columns: this partition's own and every column another partition shared
   * @param othersColumns the view's columns this partition's layout does not hold, with their
   *     weights in the view (standardized, in the basis the view keeps them in)
   */
  public record Sharing(long partition, long sharesMade, long sharesFolded, java.util.SortedMap<Integer, Long> foldedBySource,
                        int viewColumns, List<Column> othersColumns) {
    public Sharing {
      foldedBySource = java.util.Collections.unmodifiableSortedMap(new java.util.TreeMap<>(foldedBySource));
      othersColumns = List.copyOf(othersColumns);
    }
  }

  public Snapshot {
    columns = List.copyOf(columns);
    vocabularies = List.copyOf(vocabularies);
    scalers = List.copyOf(scalers);
    alarms = List.copyOf(alarms);
    contrasts = List.copyOf(contrasts);
  }

  /** A snapshot without forecasting information or contrasts. */
  public Snapshot(long eventTimeMillis, long records, long trained, long forecasts, long rejected,
                  long layoutVersion, boolean ready, double noiseSd, double residualSd,
                  double effectiveSampleSize, List<Column> columns,
                  List<Featurizer.VocabularySnapshot> vocabularies,
                  List<Featurizer.ScalerSnapshot> scalers, Metrics metrics, long index,
                  List<DriftAlarm> alarms, DriftStatus drift) {
    this(eventTimeMillis, records, trained, forecasts, rejected, layoutVersion, ready, noiseSd, residualSd,
        effectiveSampleSize, columns, vocabularies, scalers, metrics, index, alarms, drift, null, List.of());
  }

  /**
   * One one-hot feature's contrasts: each shown level's raw-unit weight minus the mean of the
   * raw-unit weights of all {@code levelsTotal} admitted levels, with standard errors from the
   * model's covariance, {@code se(cᵀw) = σ √(cᵀ (RᵀR)⁻¹ c)} (σ the residual sd). Only differences
   * between levels are identified when a constant term sits beside a full set of levels, and
   * these are; a level's own weight and standard error are mostly the prior.
   *
   * @param feature the feature's name
   * @param levelsTotal admitted levels (the mean is over all of them)
   * @param levels the shown levels, the most recorded first (at most {@code drift.contrast_levels})
   * @param covariance the shown contrasts' covariance, row-major {@code k × k}: the standard error
   *     of level a minus level b is {@code √(V_aa + V_bb − 2 V_ab)}
   */
  public record Contrasts(String feature, int levelsTotal, List<LevelContrast> levels, double[] covariance) {
    public Contrasts {
      levels = List.copyOf(levels);
      covariance = covariance.clone();
    }

    /** The standard error of the difference between shown levels {@code a} and {@code b} (indices into {@link #levels}). */
    public double differenceStandardError(int a, int b) {
      int k = levels.size();
      double v = covariance[a * k + a] + covariance[b * k + b] - 2 * covariance[a * k + b];
      return Math.sqrt(Math.max(0.0, v));
    }
  }

  /** One level's effect against the mean of its feature's levels. */
  public record LevelContrast(String level, String column, long count, double effect, double standardError) { }

  /** A snapshot without drift information (index -1, no alarms). */
  public Snapshot(long eventTimeMillis, long records, long trained, long forecasts, long rejected,
                  long layoutVersion, boolean ready, double noiseSd, double residualSd,
                  double effectiveSampleSize, List<Column> columns,
                  List<Featurizer.VocabularySnapshot> vocabularies,
                  List<Featurizer.ScalerSnapshot> scalers, Metrics metrics) {
    this(eventTimeMillis, records, trained, forecasts, rejected, layoutVersion, ready, noiseSd, residualSd,
        effectiveSampleSize, columns, vocabularies, scalers, metrics, -1, List.of(), null);
  }

  /**
   * One column.
   *
   * @param name column name, e.g. {@code hub=QM-03}
   * @param weight weight in the model's basis
   * @param standardError its standard error
   * @param rawWeight weight per unit of the raw (transformed) input
   * @param rawStandardError its standard error
   * @param centre the scaler's m (0 for an unscaled column)
   * @param scale the scaler's s (1 for an unscaled column)
   * @param movedSe signed drift score against the configured baseline,
   *     {@code (w − w_b) / √(se² + se_b²)} in raw units; NaN when the column has no baseline yet
   */
  public record Column(String name, double weight, double standardError, double rawWeight,
                       double rawStandardError, double centre, double scale, double movedSe) {
    /** A column without a drift score. */
    public Column(String name, double weight, double standardError, double rawWeight,
                  double rawStandardError, double centre, double scale) {
      this(name, weight, standardError, rawWeight, rawStandardError, centre, scale, Double.NaN);
    }
  }

  /** Prequential metrics: overall and over the fading window. */
  public record Metrics(long count, double mae, double rmse, double bias, double coverage,
                        double recentMae, double recentRmse, double recentBias, double recentCoverage) { }

  /**
   * The forecasts issued ahead ({@code input.forecast}, docs/forecasting.md): the step's counts and
   * the errors of settled forecasts by horizon bucket, overall and per entity.
   *
   * @param pending forecasts waiting for their actual now
   * @param remembered forecasts remembered since the state began
   * @param settled forecasts settled by their actual since the state began
   * @param droppedFull forecasts dropped by {@code max_pending}
   * @param droppedExpired forecasts dropped by {@code max_actual_delay}
   * @param bucketBoundsMillis each bucket's upper bound in ms, the last (open) bucket's {@code Long.MAX_VALUE}
   * @param overall one entry per bucket, over every entity
   * @param entityFields the names of the entity fields
   * @param entities the kept entities, in the order they first settled a forecast
   * @param maxEntities {@code max_metric_entities}
   * @param settledNotKept settled forecasts of entities beyond the cap (in {@code overall} only)
   * @param actuals the memory of learned actuals and the actuals rejected for their key or lateness
   */
  public record Forecasting(int pending, long remembered, long settled, long droppedFull, long droppedExpired,
                            List<Long> bucketBoundsMillis, List<Metrics> overall, List<String> entityFields,
                            List<EntityHorizons> entities, int maxEntities, long settledNotKept, ActualCounts actuals) {
    public Forecasting {
      bucketBoundsMillis = List.copyOf(bucketBoundsMillis);
      overall = List.copyOf(overall);
      entityFields = List.copyOf(entityFields);
      entities = List.copyOf(entities);
    }
  }

  /**
   * The memory of learned actuals and what it turned away ({@code input.forecast}, docs/forecasting.md,
   * "Late, repeated and corrected actuals").
   *
   * @param learned keys (entity, target time) remembered as learned now
   * @param forgottenEarly learned keys forgotten by {@code max_learned_actuals} while an actual for them could still come
   * @param replaced actuals whose earlier value was removed and replaced ({@code corrections: replace})
   * @param resettled settled forecasts published again against a corrected actual
   * @param tooLate actuals rejected with {@code actual_too_late}
   * @param repeated actuals rejected with {@code repeated_actual}
   * @param corrected actuals rejected with {@code corrected_actual}
   */
  public record ActualCounts(int learned, long forgottenEarly, long replaced, long resettled, long tooLate, long repeated,
                             long corrected) { }

  /**
   * One entity's errors by horizon bucket.
   *
   * @param entity the entity fields' values, in the order of {@code entity_fields}
   * @param buckets one entry per bucket
   */
  public record EntityHorizons(List<String> entity, List<Metrics> buckets) {
    public EntityHorizons {
      entity = List.copyOf(entity);
      buckets = List.copyOf(buckets);
    }
  }

  /** Cold path: the forecasting part of a snapshot, or null without {@code input.forecast}. */
  private static Forecasting forecastingOf(PipelineStep step) {
    HorizonMetrics h = step.horizonMetrics();
    if (h == null) {
      return null;
    }
    int nb = h.buckets();
    List<Long> bounds = new ArrayList<>(nb);
    List<Metrics> overall = new ArrayList<>(nb);
    for (int b = 0; b < nb; b++) {
      bounds.add(h.bound(b));
      overall.add(h.metrics(-1, b));
    }
    List<EntityHorizons> entities = new ArrayList<>(h.entities());
    for (int e = 0; e < h.entities(); e++) {
      List<Metrics> per = new ArrayList<>(nb);
      for (int b = 0; b < nb; b++) {
        per.add(h.metrics(e, b));
      }
      entities.add(new EntityHorizons(entityValues(h.entityKey(e)), per));
    }
    return new Forecasting(step.pendingForecasts(), step.rememberedForecasts(), step.settledForecasts(),
        step.droppedForecastsFull(), step.droppedForecastsExpired(), bounds, overall,
        step.config().input().forecast().entityFields(), entities, h.maxEntities(), h.settledNotKept(),
        new ActualCounts(step.learnedActuals(), step.learnedActualsForgottenEarly(), step.replacedActuals(),
            step.resettledForecasts(), step.rejected(RejectReason.ACTUAL_TOO_LATE), step.rejected(RejectReason.REPEATED_ACTUAL),
            step.rejected(RejectReason.CORRECTED_ACTUAL)));
  }

  /** The values of an entity text as the step builds it: per field, its length in two chars, then its chars. */
  static List<String> entityValues(char[] key) {
    List<String> out = new ArrayList<>();
    int i = 0;
    while (i + 2 <= key.length) {
      int len = (key[i] << 16) | key[i + 1];
      i += 2;
      out.add(new String(key, i, len));
      i += len;
    }
    return out;
  }

  /** The weight of the column with this name, or NaN if there is none. */
  public double weightOf(String name) {
    for (Column c : columns) {
      if (c.name().equals(name)) {
        return c.weight();
      }
    }
    return Double.NaN;
  }

  /** The raw-unit weight of the column with this name, or NaN if there is none. */
  public double rawWeightOf(String name) {
    for (Column c : columns) {
      if (c.name().equals(name)) {
        return c.rawWeight();
      }
    }
    return Double.NaN;
  }

  static Snapshot of(PipelineStep step) {
    Featurizer f = step.featurizer();
    RlsModel m = step.model();
    DriftMonitor drift = step.drift();
    int p = step.modelDimension();
    double[] w = new double[p];
    double[] se = new double[p];
    step.modelWeights(w);
    step.modelStandardErrors(se);
    boolean constant = f.hasConstantTerm();
    double[] cov = constant && m.ready() ? step.modelCovariance() : null;
    double sigma = m.residualSd();
    List<Column> cols = new ArrayList<>(p);
    double rawConstant = constant ? w[0] : Double.NaN;
    double[] c = new double[p];
    if (constant) {
      c[0] = 1.0;
    }
    for (int j = 0; j < p; j++) {
      double mj = f.centre(j);
      double sj = f.scale(j);
      if (constant && j > 0) {
        rawConstant -= w[j] * mj / sj;
        c[j] = -mj / sj;
      }
    }
    double rawConstantSe = Double.NaN;
    if (cov != null) {
      double q = 0.0;
      for (int i = 0; i < p; i++) {
        double s = 0.0;
        for (int j = 0; j < p; j++) {
          s += cov[i * p + j] * c[j];
        }
        q += c[i] * s;
      }
      rawConstantSe = sigma * Math.sqrt(Math.max(0.0, q));
    }
    for (int j = 0; j < p; j++) {
      double mj = f.centre(j);
      double sj = f.scale(j);
      boolean isConstant = constant && j == 0;
      String name = f.columnName(j);
      cols.add(new Column(name, w[j], se[j],
          isConstant ? rawConstant : w[j] / sj,
          isConstant ? rawConstantSe : se[j] / sj, mj, sj, drift.moved(name)));
    }
    List<Contrasts> contrasts = contrasts(f, m, p, step::modelCovariance, w, sigma, step.config().drift().contrastLevels());
    PrequentialMetrics pm = step.metrics();
    Metrics metrics = new Metrics(pm.count(), pm.mae(), pm.rmse(), pm.bias(), pm.coverage(),
        pm.recentMae(), pm.recentRmse(), pm.recentBias(), pm.recentCoverage());
    return new Snapshot(step.lastEventTimeMillis(), step.records(), step.trained(), step.forecasts(),
        step.rejected(), f.layoutVersion(), m.ready(), m.noiseSd(), sigma, m.effectiveSampleSize(),
        cols, f.vocabularies(), f.scalers(), metrics, step.snapshotsTaken() - 1, drift.alarms(), drift.status(),
        forecastingOf(step), contrasts, sharingOf(step));
  }

  /** With the global scope, this partition's part in the one model; else null. */
  static Sharing sharingOf(PipelineStep step) {
    dev.runnel.core.model.GlobalModel g = step.globalModel();
    if (g == null) {
      return null;
    }
    RlsModel view = g.view();
    int n = view.dimension();
    double[] w = new double[n];
    double[] se = new double[n];
    view.weights(w);
    view.standardErrors(se);
    java.util.Set<String> local = new java.util.HashSet<>(); // lookups only
    for (int j = 0; j < step.featurizer().dimension(); j++) {
      local.add(step.featurizer().columnName(j));
    }
    List<String> names = g.viewColumns();
    List<Column> others = new ArrayList<>();
    for (int v = 0; v < n; v++) {
      if (!local.contains(names.get(v))) {
        double sc = g.viewScale(v);
        others.add(new Column(names.get(v), w[v], se[v], w[v] / sc, se[v] / sc, g.viewOffset(v), sc, Double.NaN));
      }
    }
    return new Sharing(step.partitionOfShares(), step.sharesMade(), step.sharesFolded(), g.foldedSequences(), n, others);
  }

  /**
   * The contrasts of every one-hot feature with at least two admitted levels: the {@code max}
   * most recorded levels (ties in column order) against the mean of all its levels. O(p³) for the
   * covariance, then O(p² k) per feature.
   */
  static List<Contrasts> contrasts(Featurizer f, RlsModel m, int p, java.util.function.Supplier<double[]> covariance,
      double[] w, double sigma, int max) {
    if (max <= 0 || !m.ready() || !(sigma >= 0)) {
      return List.of();
    }
    double[] cov = null;
    List<Contrasts> out = new ArrayList<>();
    for (Featurizer.VocabularySnapshot v : f.vocabularies()) {
      int total = v.levels().size();
      if (total < 2) {
        continue;
      }
      if (cov == null) {
        cov = covariance.get();
      }
      List<Featurizer.LevelSnapshot> shown = new ArrayList<>(v.levels());
      shown.sort((a, b) -> Long.compare(b.count(), a.count())); // stable: ties keep column order
      if (shown.size() > max) {
        shown = new ArrayList<>(shown.subList(0, max));
      }
      int k = shown.size();
      // c_l = (e_l − (1/L) Σ e_level) / s, one per shown level, over the model's weights
      double[][] c = new double[k][p];
      for (int a = 0; a < k; a++) {
        for (Featurizer.LevelSnapshot l : v.levels()) {
          c[a][l.column()] -= 1.0 / total / f.scale(l.column());
        }
        int own = shown.get(a).column();
        c[a][own] += 1.0 / f.scale(own);
      }
      double[][] pc = new double[k][p];
      for (int a = 0; a < k; a++) {
        for (int i = 0; i < p; i++) {
          double sum = 0.0;
          for (int j = 0; j < p; j++) {
            sum += cov[i * p + j] * c[a][j];
          }
          pc[a][i] = sum;
        }
      }
      double[] vcov = new double[k * k];
      List<LevelContrast> levels = new ArrayList<>(k);
      for (int a = 0; a < k; a++) {
        for (int b = 0; b < k; b++) {
          double sum = 0.0;
          for (int i = 0; i < p; i++) {
            sum += c[b][i] * pc[a][i];
          }
          vcov[a * k + b] = sigma * sigma * sum;
        }
        double effect = 0.0;
        for (int i = 0; i < p; i++) {
          effect += c[a][i] * w[i];
        }
        Featurizer.LevelSnapshot l = shown.get(a);
        levels.add(new LevelContrast(l.level(), f.columnName(l.column()), l.count(), effect,
            Math.sqrt(Math.max(0.0, vcov[a * k + a]))));
      }
      out.add(new Contrasts(v.feature(), total, levels, vcov));
    }
    return out;
  }
}
