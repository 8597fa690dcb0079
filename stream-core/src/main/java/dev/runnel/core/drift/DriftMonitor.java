package dev.runnel.core.drift;

import dev.runnel.core.config.DriftBaseline;
import dev.runnel.core.config.ErrorTest;
import dev.runnel.core.config.PipelineConfig;
import java.io.DataInput;
import java.io.DataOutput;
import java.io.EOFException;
import java.io.IOException;
import java.util.ArrayDeque;
import java.util.ArrayList;
import java.util.Iterator;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

/**
 * The pipeline's drift alarms. One writer thread. Two inputs:
 * <ul>
 *   <li>{@link #observeError} for every scored record (hot path, allocates nothing unless an
 *       alarm fires): the a priori error divided by its predictive sd with a reference noise sd,
 *       {@code z = e / (s_ref √(1 + xᵀPx))}; the test watches {@code min(|z|, MAX_ABS_Z)} with a
 *       two-sided {@link PageHinkley} test and records the event time at which it fired;</li>
 *   <li>{@link #observeSnapshot} once per published snapshot (cold path): each column's raw-unit
 *       weight is compared with its baseline, {@code score = (w − w_b) / √(se² + se_b²)}; a weight
 *       alarm is raised while {@code |score| > k} and cleared when it falls back.</li>
 * </ul>
 * An error-level alarm is listed in the snapshot after it fired and in the next
 * {@code alarm_hold_snapshots − 1} snapshots.
 *
 * <p>Implementation notes: the weight score divides by the combined standard error of the two
 * estimates as if they were independent. Estimates that share data are positively correlated,
 * so the true sd of the difference is smaller and the score is conservative (fewer false alarms
 * than a normal tail at k would give, and a somewhat later alarm). Raw units are used because the
 * model-basis weights are re-expressed whenever a scaler moves; raw weights change only with data.
 */
public final class DriftMonitor {

  /** Absolute standardized errors are clipped at this value before the test sees them, so one wild record cannot fire it alone (with λ above it). */
  public static final double MAX_ABS_Z = 8.0;

  private final PipelineConfig.Drift settings;
  private final PageHinkley test;
  private final int historySize;
  private final ArrayDeque<Map<String, double[]>> history = new ArrayDeque<>();
  private final LinkedHashMap<String, double[]> first = new LinkedHashMap<>();
  private final LinkedHashMap<String, DriftAlarm> weightAlarms = new LinkedHashMap<>();
  private final ArrayList<DriftAlarm> errorAlarms = new ArrayList<>();
  private final ChangeAttribution attribution;
  private final WeightBreakScan breaks;
  private final LinkedHashMap<String, Double> moved = new LinkedHashMap<>();
  private long weightFired;
  private double refNoiseSd = Double.NaN;
  private long sinceRestart;
  private long errorFired;
  private long changeFired;
  /** Whether the latest error-level alarm was "up" (read right after {@link #observeError} returned true; not state). */
  private boolean lastErrorUp;
  /** A covariance reset is due at the next update (an "up" alarm fired and drift.reset_to_records > 0). */
  private boolean resetDue;
  /** Updates left during which the noise estimate is held after a reset (at most {@value #HOLD_LIMIT} × m). */
  private long noiseHoldLeft;
  /** Held updates so far, and the moving mean of their squared standardized errors. */
  private long heldCount;
  private double heldLevel;

  /** The noise estimate is held at most this many times {@code drift.reset_to_records} updates. */
  static final int HOLD_LIMIT = 10;
  /** The hold ends once the moving mean of squared standardized errors is below this (errors within √2 of the held noise sd). */
  static final double CAUGHT_UP_LEVEL = 2.0;

  /**
   * @param settings the {@code drift} section. Not modified.
   */
  public DriftMonitor(PipelineConfig.Drift settings) {
    this.settings = settings;
    this.test = settings.errorTest() == ErrorTest.PAGE_HINKLEY
        ? new PageHinkley(settings.errorAllowance(), settings.errorThreshold(), settings.errorWarmupRecords())
        : null;
    this.attribution = new ChangeAttribution(settings.attributionRecords(), settings.attributionSe());
    this.breaks = new WeightBreakScan(settings.breakBlockRecords(), settings.breakBlocks(), settings.breakSe());
    this.historySize = switch (settings.baseline()) {
      case PREVIOUS_SNAPSHOT -> 1;
      case SNAPSHOTS_AGO -> settings.baselineSnapshots();
      case FIRST_READY_SNAPSHOT -> 0;
    };
  }

  /**
   * One scored record's a priori error. After a start or an alarm, the first
   * {@code error_warmup_records} errors are skipped (the model and its noise estimate settle),
   * the next freezes the reference noise sd, and the test then learns the level for another
   * {@code error_warmup_records} errors before it may fire. The test sees {@code |e| / (s_ref √(1 + xᵀPx))}, where
   * {@code s_ref} is the noise sd frozen when the test (re)started: standardizing by the live noise
   * estimate would let that estimate absorb a change and fire a second, opposite alarm as it
   * catches up. Non-finite values are ignored.
   *
   * @param error actual − predicted
   * @param predictiveSd the prediction's sd {@code s √(1 + xᵀPx)} with the live noise sd s
   * @param noiseSd the live noise sd s
   * @param eventTimeMillis the record's event time
   * @param trained the pipeline's trained-record count including this record
   * @return true if the error-level test fired on this record
   */
  public boolean observeError(double error, double predictiveSd, double noiseSd, long eventTimeMillis, long trained) {
    if (test == null || !(predictiveSd > 0) || !(noiseSd > 0)) {
      return false;
    }
    if (sinceRestart < settings.errorWarmupRecords()) {
      // the model and its noise estimate settle first; then the reference noise sd is frozen
      sinceRestart++;
      return false;
    }
    if (Double.isNaN(refNoiseSd)) {
      refNoiseSd = noiseSd;
    }
    double z = error / predictiveSd * (noiseSd / refNoiseSd);
    if (!Double.isFinite(z)) {
      return false;
    }
    double x = Math.min(Math.abs(z), MAX_ABS_Z);
    PageHinkley.Direction d = test.add(x);
    if (d == PageHinkley.Direction.NONE) {
      return false;
    }
    // rare path: an alarm fired; the next value freezes a new reference noise sd
    lastErrorUp = d == PageHinkley.Direction.UP;
    if (d == PageHinkley.Direction.UP && settings.resetToRecords() > 0) {
      resetDue = true;
      noiseHoldLeft = (long) HOLD_LIMIT * settings.resetToRecords();
      heldCount = 0;
      heldLevel = 0.0;
    }
    refNoiseSd = Double.NaN;
    sinceRestart = 0;
    errorFired++;
    errorAlarms.add(new DriftAlarm(DriftAlarm.ERROR_LEVEL, null, d == PageHinkley.Direction.UP ? "up" : "down",
        eventTimeMillis, -1, trained, test.lastFireStatistic(), test.threshold(), test.lastFireMean(), Double.NaN));
    return true;
  }

  /** The change attribution that follows an error-level alarm. */
  public ChangeAttribution attribution() { return attribution; }

  /**
   * Opens the change attribution's window (call right after {@link #observeError} returned true).
   * Cold path. See {@link ChangeAttribution#open}.
   */
  public void openAttribution(String[] names, double[] rawWeights, int dimension, double effectiveSampleSize,
                              long layout, long trained) {
    // the "before" estimate is the weight alarm's baseline snapshot where it has the column: the
    // model's weights at the alarm have already taken in the records between the change and the
    // alarm (and, with a design that moves over the day, spread the change over other columns)
    Map<String, double[]> base = settings.baseline() == DriftBaseline.FIRST_READY_SNAPSHOT ? first : history.peekFirst();
    double[] before = java.util.Arrays.copyOf(rawWeights, dimension);
    if (base != null) {
      for (int j = 0; j < dimension; j++) {
        double[] b = base.get(names[j]);
        if (b != null) {
          before[j] = b[0];
        }
      }
    }
    attribution.open(names, before, dimension, effectiveSampleSize, layout, trained);
  }

  /**
   * One trained record's raw-unit row while the attribution window is open (hot path while open,
   * {@code O(p²)}); when the window closes, its named columns become changed-weight alarms, listed
   * from the next snapshot on, largest score first.
   *
   * @param x raw-unit row. Not modified.
   * @param y the target
   * @param dimension the row's length
   * @param layout the layout version
   * @param eventTimeMillis the record's event time
   * @param trained the pipeline's trained-record count including this record
   */
  public void observeTrained(double[] x, double y, int dimension, long layout, long eventTimeMillis, long trained) {
    List<ChangeAttribution.Change> named = attribution.observe(x, y, dimension, layout);
    if (named == null) {
      return;
    }
    for (ChangeAttribution.Change c : named) {
      changeFired++;
      errorAlarms.add(new DriftAlarm(DriftAlarm.CHANGED_WEIGHT, c.column(), c.score() > 0 ? "up" : "down",
          eventTimeMillis, -1, trained, Math.abs(c.score()), attribution.threshold(), c.before(), c.after()));
    }
  }

  /** The weight-break scan (kept all the time). */
  public WeightBreakScan breaks() { return breaks; }

  /**
   * One trained record's raw-unit row for the weight-break scan (hot path: {@code O(p²)}, no
   * allocation unless a look names columns); the columns a look names become weight-break alarms,
   * listed from the next snapshot on for {@code alarm_hold_snapshots} snapshots, largest score first.
   *
   * @param x raw-unit row. Not modified.
   * @param y the target (model units)
   * @param dimension the row's length
   * @param layout the layout version
   * @param eventTimeMillis the record's event time
   * @param trained the pipeline's trained-record count including this record
   * @param names the column names by index (called only when a look names columns)
   */
  public void observeBreak(double[] x, double y, int dimension, long layout, long eventTimeMillis, long trained,
                           java.util.function.IntFunction<String> names) {
    if (!breaks.observe(x, y, dimension, layout)) {
      return;
    }
    for (int k = 0; k < breaks.namedCount(); k++) {
      double z = breaks.namedScore(k);
      errorAlarms.add(new DriftAlarm(DriftAlarm.WEIGHT_BREAK, names.apply(breaks.namedColumn(k)), z > 0 ? "up" : "down",
          eventTimeMillis, -1, trained, Math.abs(z), breaks.threshold(), breaks.namedBefore(k), breaks.namedAfter(k)));
    }
  }

  /**
   * The forgetting factor for the next update: {@code lambda}, or, once after an "up" alarm when
   * {@code drift.reset_to_records} is {@code m > 0}, {@code lambda · min(1, m / n_eff)}: the
   * information is cut to about {@code m} records' worth (covariance resetting), and normal
   * forgetting goes on from the next record.
   *
   * @param lambda the clock's forgetting factor for this record
   * @param effectiveSampleSize the model's effective sample size before this update
   */
  public double forgettingFor(double lambda, double effectiveSampleSize) {
    if (!resetDue) {
      return lambda;
    }
    resetDue = false;
    double m = settings.resetToRecords();
    return effectiveSampleSize > m ? lambda * (m / effectiveSampleSize) : lambda;
  }

  /** Whether the next update should leave the noise estimate as it is (the model is catching up after a reset). */
  public boolean noiseHeld() { return noiseHoldLeft > 0; }

  /**
   * After a held update: the model has caught up once, after at least {@code m} held updates, the
   * moving mean (over about {@code m} updates) of the squared standardized a priori errors
   * {@code z² = e² / (s² (1 + xᵀPx))}, with the held noise sd s, is below {@value #CAUGHT_UP_LEVEL};
   * or after {@value #HOLD_LIMIT}·m updates in any case (the noise itself may have grown).
   *
   * @param zSquared this record's squared standardized a priori error (NaN when not scored: not counted)
   * @return true when the hold has just ended (the caller restarts the noise estimate)
   */
  public boolean afterUpdate(double zSquared) {
    if (noiseHoldLeft <= 0) {
      return false;
    }
    noiseHoldLeft--;
    int m = Math.max(1, settings.resetToRecords());
    if (Double.isFinite(zSquared)) {
      heldCount++;
      heldLevel += (Math.min(zSquared, 100.0) - heldLevel) / Math.min(heldCount, m);
    }
    if (heldCount >= m && heldLevel < CAUGHT_UP_LEVEL) {
      noiseHoldLeft = 0;
    }
    return noiseHoldLeft == 0;
  }

  /**
   * Whether the error-level alarm that {@link #observeError} just reported was "up". Only an up
   * alarm opens the change attribution: a down alarm usually means the model has caught up with
   * an earlier change, and its baseline snapshot would then sit in the middle of that change.
   */
  public boolean lastErrorAlarmUp() { return lastErrorUp; }

  /** Changed-weight alarms fired since the start. */
  public long changeAlarmsFired() { return changeFired; }

  /**
   * One snapshot's raw-unit weights and standard errors: evaluates the weight alarms, moves the
   * baselines on and dates the error-level alarms fired since the previous snapshot.
   *
   * @param index the snapshot's index (0 for the pipeline's first)
   * @param eventTimeMillis the snapshot's event time
   * @param trained the pipeline's trained-record count
   * @param names column names. Not modified.
   * @param raw raw-unit weights (NaN when not defined). Not modified.
   * @param rawSe their standard errors. Not modified.
   * @param n number of columns
   */
  public void observeSnapshot(long index, long eventTimeMillis, long trained, String[] names, double[] raw,
                              double[] rawSe, int n) {
    Map<String, double[]> base = switch (settings.baseline()) {
      case FIRST_READY_SNAPSHOT -> first;
      case PREVIOUS_SNAPSHOT, SNAPSHOTS_AGO -> history.peekFirst();
    };
    double k = settings.weightAlarmSe();
    moved.clear();
    LinkedHashMap<String, double[]> now = new LinkedHashMap<>();
    LinkedHashMap<String, DriftAlarm> still = new LinkedHashMap<>();
    for (int j = 0; j < n; j++) {
      double w = raw[j];
      double se = rawSe[j];
      if (!Double.isFinite(w) || !(se > 0) || Double.isInfinite(se)) {
        continue;
      }
      now.put(names[j], new double[] {w, se});
      double[] b = base == null ? null : base.get(names[j]);
      if (b == null) {
        continue;
      }
      double score = (w - b[0]) / Math.sqrt(se * se + b[1] * b[1]);
      moved.put(names[j], score);
      if (k > 0 && Math.abs(score) > k) {
        String dir = score > 0 ? "up" : "down";
        DriftAlarm a = weightAlarms.get(names[j]);
        if (a == null) {
          weightFired++;
          a = new DriftAlarm(DriftAlarm.WEIGHT, names[j], dir, eventTimeMillis, index, trained, Math.abs(score), k,
              b[0], w);
        } else {
          a = a.withScore(Math.abs(score), w, dir);
        }
        still.put(names[j], a);
      }
    }
    weightAlarms.clear();
    weightAlarms.putAll(still);
    if (settings.baseline() == DriftBaseline.FIRST_READY_SNAPSHOT) {
      for (Map.Entry<String, double[]> e : now.entrySet()) {
        first.putIfAbsent(e.getKey(), e.getValue());
      }
      first.keySet().retainAll(now.keySet());
    } else {
      history.addLast(now);
      while (history.size() > historySize) {
        history.removeFirst();
      }
    }
    for (int i = 0; i < errorAlarms.size(); i++) {
      DriftAlarm a = errorAlarms.get(i);
      if (a.firedAtSnapshot() < 0) {
        errorAlarms.set(i, new DriftAlarm(a.kind(), a.column(), a.direction(), a.firedAtMillis(), index,
            a.firedAtRecord(), a.score(), a.threshold(), a.baselineValue(), a.currentValue()));
      }
    }
    Iterator<DriftAlarm> it = errorAlarms.iterator();
    while (it.hasNext()) {
      if (index - it.next().firedAtSnapshot() >= settings.alarmHoldSnapshots()) {
        it.remove();
      }
    }
  }

  /** The alarms raised at the latest snapshot: weight alarms in column order, then error-level alarms. */
  public List<DriftAlarm> alarms() {
    List<DriftAlarm> out = new ArrayList<>(weightAlarms.values());
    for (DriftAlarm a : errorAlarms) {
      if (a.firedAtSnapshot() >= 0) {
        out.add(a);
      }
    }
    return out;
  }

  /** The signed score of a column at the latest snapshot, NaN when it had no baseline. */
  public double moved(String column) {
    Double d = moved.get(column);
    return d == null ? Double.NaN : d;
  }

  /** The published status. */
  public DriftStatus status() {
    return new DriftStatus(settings.errorTest().word(),
        test == null ? Double.NaN : test.upStatistic(), test == null ? Double.NaN : test.downStatistic(),
        test == null ? Double.NaN : test.threshold(), test == null ? Double.NaN : test.mean(),
        test == null ? 0 : test.count(), weightFired, errorFired, settings.baseline().word(), settings.weightAlarmSe());
  }

  /** Weight alarms fired since the start. */
  public long weightAlarmsFired() { return weightFired; }

  /** Error-level alarms fired since the start. */
  public long errorAlarmsFired() { return errorFired; }

  // ------------------------------------------------------------------ checkpoint

  /** Writes the whole state. */
  public void writeTo(DataOutput out) throws IOException {
    out.writeLong(weightFired);
    out.writeLong(errorFired);
    out.writeDouble(refNoiseSd);
    out.writeLong(sinceRestart);
    out.writeBoolean(test != null);
    if (test != null) {
      test.writeTo(out);
    }
    out.writeInt(history.size());
    for (Map<String, double[]> m : history) {
      writeMap(out, m);
    }
    writeMap(out, first);
    out.writeInt(weightAlarms.size());
    for (DriftAlarm a : weightAlarms.values()) {
      writeAlarm(out, a);
    }
    out.writeInt(errorAlarms.size());
    for (DriftAlarm a : errorAlarms) {
      writeAlarm(out, a);
    }
    out.writeInt(moved.size());
    for (Map.Entry<String, Double> e : moved.entrySet()) {
      out.writeUTF(e.getKey());
      out.writeDouble(e.getValue());
    }
  }

  /**
   * Reads a state written by {@link #writeTo}; the settings come from the configuration.
   *
   * @throws IOException if the state is cut short or a count, kind or direction is not one
   *     {@link #writeTo} writes
   */
  public void readFrom(DataInput in) throws IOException {
    try {
      read(in);
    } catch (EOFException e) {
      throw new EOFException("drift checkpoint is truncated");
    }
  }

  private void read(DataInput in) throws IOException {
    weightFired = count(in.readLong(), "weight alarms fired");
    errorFired = count(in.readLong(), "error alarms fired");
    refNoiseSd = in.readDouble();
    sinceRestart = count(in.readLong(), "records since the error test restarted");
    if (in.readBoolean()) {
      // the test's parameters come from the configuration; a saved test is skipped when it is now off
      (test != null ? test : new PageHinkley(0, 1, 1)).readFrom(in);
    }
    history.clear();
    int h = (int) count(in.readInt(), "history snapshots");
    for (int i = 0; i < h; i++) {
      history.addLast(readMap(in));
    }
    while (history.size() > Math.max(historySize, 0)) {
      history.removeFirst();
    }
    first.clear();
    first.putAll(readMap(in));
    weightAlarms.clear();
    int wa = (int) count(in.readInt(), "weight alarms");
    for (int i = 0; i < wa; i++) {
      DriftAlarm a = readAlarm(in);
      if (!DriftAlarm.WEIGHT.equals(a.kind())) {
        throw new IOException("corrupt drift checkpoint: a weight alarm of kind " + a.kind());
      }
      weightAlarms.put(a.column(), a);
    }
    errorAlarms.clear();
    int ea = (int) count(in.readInt(), "error alarms");
    for (int i = 0; i < ea; i++) {
      DriftAlarm a = readAlarm(in);
      if (!DriftAlarm.ERROR_LEVEL.equals(a.kind()) && !DriftAlarm.CHANGED_WEIGHT.equals(a.kind())
          && !DriftAlarm.WEIGHT_BREAK.equals(a.kind())) {
        throw new IOException("corrupt drift checkpoint: an error-level alarm of kind " + a.kind());
      }
      errorAlarms.add(a);
    }
    moved.clear();
    int mv = (int) count(in.readInt(), "scores");
    for (int i = 0; i < mv; i++) {
      moved.put(in.readUTF(), in.readDouble());
    }
  }

  /** Writes the change attribution's state (checkpoint version 5 on). */
  public void writeAttributionTo(DataOutput out) throws IOException {
    out.writeLong(changeFired);
    out.writeBoolean(resetDue);
    out.writeLong(noiseHoldLeft);
    out.writeLong(heldCount);
    out.writeDouble(heldLevel);
    attribution.writeTo(out);
  }

  /** Reads a state written by {@link #writeAttributionTo}; {@code in == null} resets it (an older checkpoint). */
  public void readAttributionFrom(DataInput in) throws IOException {
    if (in == null) {
      changeFired = 0;
      resetDue = false;
      noiseHoldLeft = 0;
      heldCount = 0;
      heldLevel = 0.0;
      attribution.reset();
      return;
    }
    try {
      changeFired = count(in.readLong(), "changed-weight alarms fired");
      resetDue = in.readBoolean();
      noiseHoldLeft = count(in.readLong(), "records the noise estimate is held");
      heldCount = count(in.readLong(), "held records");
      heldLevel = in.readDouble();
      attribution.readFrom(in);
    } catch (EOFException e) {
      throw new EOFException("drift checkpoint is truncated");
    }
  }

  /** Whether the attribution has state to write (a checkpoint without it keeps its former version). */
  public boolean hasAttributionState() {
    return changeFired > 0 || attribution.hasState() || resetDue || noiseHoldLeft > 0;
  }

  /** Writes the weight-break scan's state (checkpoint version 9 on). */
  public void writeBreakTo(DataOutput out) throws IOException {
    breaks.writeTo(out);
  }

  /** Reads a state written by {@link #writeBreakTo}; {@code in == null} resets it (an older checkpoint). */
  public void readBreakFrom(DataInput in) throws IOException {
    if (in == null) {
      breaks.reset();
      return;
    }
    try {
      breaks.readFrom(in);
    } catch (EOFException e) {
      throw new EOFException("drift checkpoint is truncated");
    }
  }

  /** Whether the weight-break scan has state to write (a checkpoint without it keeps its former version). */
  public boolean hasBreakState() { return breaks.hasState(); }

  /** A count read from a checkpoint: refused when negative. */
  static long count(long n, String what) throws IOException {
    if (n < 0) {
      throw new IOException("corrupt drift checkpoint: " + what + " " + n);
    }
    return n;
  }

  private static void writeMap(DataOutput out, Map<String, double[]> m) throws IOException {
    out.writeInt(m.size());
    for (Map.Entry<String, double[]> e : m.entrySet()) {
      out.writeUTF(e.getKey());
      out.writeDouble(e.getValue()[0]);
      out.writeDouble(e.getValue()[1]);
    }
  }

  private static LinkedHashMap<String, double[]> readMap(DataInput in) throws IOException {
    int n = (int) count(in.readInt(), "weights in a baseline");
    LinkedHashMap<String, double[]> m = new LinkedHashMap<>();
    for (int i = 0; i < n; i++) {
      String k = in.readUTF();
      m.put(k, new double[] {in.readDouble(), in.readDouble()});
    }
    return m;
  }

  private static void writeAlarm(DataOutput out, DriftAlarm a) throws IOException {
    out.writeUTF(a.kind());
    out.writeBoolean(a.column() != null);
    if (a.column() != null) {
      out.writeUTF(a.column());
    }
    out.writeUTF(a.direction());
    out.writeLong(a.firedAtMillis());
    out.writeLong(a.firedAtSnapshot());
    out.writeLong(a.firedAtRecord());
    out.writeDouble(a.score());
    out.writeDouble(a.threshold());
    out.writeDouble(a.baselineValue());
    out.writeDouble(a.currentValue());
  }

  private static DriftAlarm readAlarm(DataInput in) throws IOException {
    String kind = in.readUTF();
    String column = in.readBoolean() ? in.readUTF() : null;
    if (DriftAlarm.WEIGHT.equals(kind) && column == null) {
      throw new IOException("corrupt drift checkpoint: a weight alarm without a column");
    }
    String direction = in.readUTF();
    if (!direction.equals("up") && !direction.equals("down")) {
      throw new IOException("corrupt drift checkpoint: alarm direction \"" + direction + "\"");
    }
    return new DriftAlarm(kind, column, direction, in.readLong(), in.readLong(), in.readLong(), in.readDouble(),
        in.readDouble(), in.readDouble(), in.readDouble());
  }
}
