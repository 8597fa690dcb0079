package dev.runnel.core.feature;

import dev.runnel.core.config.FeatureConfig;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.config.Season;
import dev.runnel.core.record.RecordSchema;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;
import java.util.Arrays;

/**
 * An exponentially weighted mean of a number field (by default the target) over the same
 * entity's earlier actuals ({@code kind: smoothed}, docs/features.md): columns {@code <name>} and
 * {@code <name>.missing}.
 *
 * <p>An actual with target time τ weighs {@code 2^(−(τ_last − τ) / half_life)} against the
 * entity's latest target time τ_last, so the mean is {@code Σ w_i y_i / Σ w_i} over the actuals
 * remembered (the common exponentially weighted mean, with the age in event time). Kept per entity
 * (and per season slot) as the mean, the weight sum and τ_last, updated in O(1): a later actual
 * first decays the weight sum by its age step, an earlier one (out of order) comes in with its own
 * smaller weight. With {@code season: hour_of_day} (or {@code hour_of_week}) each entity keeps 24
 * (or 168) such means, one per local hour of the target time (in {@code input.time_zone}), and a
 * record reads the one of its own target time's hour.
 *
 * <p>The value read is the mean as of the record's processing: every actual of the entity
 * processed before it (for a stream in event-time order, every actual known at its issue time).
 * A slot without any actual is missing and imputed ({@link HistoryFeature}).
 *
 * <p>Memory: 24 bytes per slot and entity beside the entity table.
 */
final class SmoothedFeature extends HistoryFeature {

  final FeatureConfig.Smoothed cfg;
  private final double halfLife;
  private final Season season;
  private final int slots;
  private final LocalCalendar calendar;
  private double[] mean = new double[0];
  private double[] weight = new double[0];
  private long[] latest = new long[0];

  SmoothedFeature(FeatureConfig.Smoothed cfg, int position, PipelineConfig config, RecordSchema schema) {
    super(cfg.name(), position, cfg.field(), cfg.maxEntities(), cfg.expireAfterMillis(), config, schema);
    this.cfg = cfg;
    this.halfLife = cfg.halfLifeMillis();
    this.season = cfg.season();
    this.slots = season.slots();
    this.calendar = new LocalCalendar(config.input().timeZone());
  }

  @Override String kind() { return cfg.kind(); }
  @Override String kindWord() { return "smoothed"; }

  /** The season slot of target time {@code t}: 0, the local hour of day, or the local hour of the ISO week. */
  private int slot(long t) {
    if (season == Season.NONE) return 0;
    long local = calendar.localMillis(t);
    int hour = (int) (Math.floorMod(local, 86_400_000L) / 3_600_000L);
    if (season == Season.HOUR_OF_DAY) return hour;
    int dow = dev.runnel.core.record.EventTimes.isoDayOfWeek(Math.floorDiv(local, 86_400_000L));
    return (dow - 1) * 24 + hour;
  }

  @Override boolean lookUp(int id, long targetMillis, long issueMillis) {
    int at = id * slots + slot(targetMillis);
    if (weight[at] == 0.0) return false;
    value = mean[at];
    return true;
  }

  @Override void rememberAt(int id, double y, long targetMillis, long issueMillis) {
    int at = id * slots + slot(targetMillis);
    double w = weight[at];
    if (w == 0.0) {
      mean[at] = y;
      weight[at] = 1.0;
      latest[at] = targetMillis;
      return;
    }
    long last = latest[at];
    if (targetMillis >= last) {
      // decay what came before by the step in event time, then add this actual with weight 1
      double total = w * decay(targetMillis - last) + 1.0;
      mean[at] += (y - mean[at]) / total;
      weight[at] = total;
      latest[at] = targetMillis;
    } else {
      // an earlier actual (out of order) comes in with its own, smaller weight
      double wy = decay(last - targetMillis);
      double total = w + wy;
      mean[at] += wy * (y - mean[at]) / total;
      weight[at] = total;
    }
  }

  /** 2^(−age / half_life) (StrictMath, so the same bits on every machine); 1 for age 0. */
  private double decay(long ageMillis) {
    return ageMillis == 0 ? 1.0 : StrictMath.exp(-LN2 * ageMillis / halfLife);
  }

  private static final double LN2 = 0.6931471805599453; // ln 2 rounded to the nearest double (common practice)

  @Override void growEntities(int n) {
    mean = Arrays.copyOf(mean, n * slots);
    weight = Arrays.copyOf(weight, n * slots);
    latest = Arrays.copyOf(latest, n * slots);
  }

  @Override void clearEntity(int id) {
    int base = id * slots;
    Arrays.fill(mean, base, base + slots, 0.0);
    Arrays.fill(weight, base, base + slots, 0.0);
    Arrays.fill(latest, base, base + slots, 0L);
  }

  /** The slots that hold a mean: count, then each slot's place, mean, weight sum and latest target time. */
  @Override void writeEntity(int id, DataOutput out) throws IOException {
    int base = id * slots;
    int n = 0;
    for (int k = 0; k < slots; k++) if (weight[base + k] != 0.0) n++;
    out.writeInt(n);
    for (int k = 0; k < slots; k++) {
      int at = base + k;
      if (weight[at] == 0.0) continue;
      out.writeInt(k);
      out.writeDouble(mean[at]);
      out.writeDouble(weight[at]);
      out.writeLong(latest[at]);
    }
  }

  @Override void readEntity(int id, DataInput in) throws IOException {
    clearEntity(id);
    int n = in.readInt();
    if (n < 0 || n > slots) throw new IOException("corrupt checkpoint: " + n + " smoothed slots of " + name + ", at most " + slots);
    int base = id * slots;
    for (int i = 0; i < n; i++) {
      int k = in.readInt();
      if (k < 0 || k >= slots) throw new IOException("corrupt checkpoint: smoothed slot " + k + " of " + name);
      mean[base + k] = in.readDouble();
      double w = in.readDouble();
      if (!(w > 0.0) || !Double.isFinite(w)) throw new IOException("corrupt checkpoint: weight " + w + " in " + name);
      weight[base + k] = w;
      latest[base + k] = in.readLong();
    }
  }
}
