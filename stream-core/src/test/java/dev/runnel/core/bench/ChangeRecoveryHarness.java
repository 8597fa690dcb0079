package dev.runnel.core.bench;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.drift.DriftAlarm;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.pipeline.Snapshot;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import java.util.Random;

/**
 * A seeded harness, not a test (issue 17): generated linear feeds with six correlated numeric
 * columns (each loads on one shared factor, pairwise correlations from 0.25 to 0.7, plus a daily
 * pattern of up to one sd that makes them correlated with the hour harmonics), an hour-of-day
 * cycle in the target and unit noise, a record every 10 minutes, a 7-day half-life (about 1,000
 * records). In a change trial one randomly chosen column's true weight triples at record
 * {@value #STEP}; stationary trials have no change. For each trial it reports which columns the
 * weight-break scan, the changed-weight alarms and the weight alarms name (side by side, the same
 * trials), and for each value of
 * {@code drift.reset_to_records} the RMSE of the a priori errors and the coverage of the 90 %
 * intervals over stretches after the change. Run from the repository root:
 *
 * <pre>
 * mvn -o -q -pl stream-core test-compile
 * java -cp "stream-core/target/test-classes:stream-core/target/classes:$(cat cp.txt)" dev.runnel.core.bench.ChangeRecoveryHarness 200 100 [DAILY_MAX [SNAPSHOT_RECORDS [noise|se]]]
 * </pre>
 * ({@code cp.txt} from {@code mvn -o -q -pl stream-core dependency:build-classpath -Dmdep.outputFile=../cp.txt}).
 * {@code -Drunnel.harness.namingOnly=true} prints the naming table alone (one pipeline per trial instead
 * of four); {@code -Drunnel.harness.break="break_se: 4.5"} sets drift keys of the weight-break scan (several
 * separated by {@code ;}), as for the threshold's calibration in docs/drift.md.
 */
public final class ChangeRecoveryHarness {

  static final int STEP = 8_000;
  static final int N = STEP + 3 * 1008 + 200;
  static final int P = 6;
  /** The values of drift.reset_to_records compared; {@code -Drunnel.harness.namingOnly=true} runs only the first (the naming table alone). */
  static final int[] RESETS = Boolean.getBoolean("runnel.harness.namingOnly") ? new int[] {0} : new int[] {0, 50, 100, 200};
  /**
   * Extra drift keys for the weight-break scan, e.g. {@code -Drunnel.harness.break="break_se: 4"} (several
   * separated by {@code ;}); none by default (the defaults).
   */
  static final String BREAK_KEYS = String.join("", java.util.Arrays.stream(System.getProperty("runnel.harness.break", "").split(";"))
      .filter(k -> !k.isBlank()).map(k -> "  " + k.trim() + "\n").toList());
  static final String[] NAMES = {"x1", "x2", "x3", "x4", "x5", "x6", "x7", "x8", "x9", "x10"};

  /**
   * With "se" as the fifth argument (the "Measured" feed): each trial has 6 to 10 columns, and
   * the changed weight steps by 4 to 10 of its standard errors (a uniform draw, either sign) instead of
   * tripling. The standard error is the one the model has in the steady state: in the column's sd
   * units, with unit noise, {@code √([Σ⁻¹]_jj / n_eff)}, where Σ is the columns' correlation net of
   * their daily patterns (which the hour harmonics absorb) and {@code n_eff = 1/(1 − λ)} the model's
   * effective sample size with a 7-day half-life at 144 records a day (least-squares variance
   * σ²(XᵀX)⁻¹, common practice).
   */
  static boolean seStep;

  /** With "noise" as the fifth argument a change trial doubles the noise sd instead of a weight. */
  static boolean noiseStep;

  /** Records between snapshots (the fourth argument; default 144, a day); the weight alarm's baseline is 8 snapshots back. */
  static int snapshotRecords = 144;

  static String config(int reset, int p) {
    StringBuilder fields = new StringBuilder();
    StringBuilder features = new StringBuilder();
    for (int j = 0; j < p; j++) {
      fields.append(NAMES[j]).append(": number, ");
      features.append("  - {kind: numeric, field: ").append(NAMES[j]).append("}\n");
    }
    return """
        name: recovery
        input:
          fields: {%sy: number, at: time}
          event_time: {field: at, format: iso8601}
        target: y
        features:
        %s  - {kind: cyclic, cycle: hour_of_day}
        model:
          prior_variance: 100
          forgetting: {half_life: P7D}
          interval_level: 0.9
        outputs:
          snapshot_every_records: %d
        drift:
          reset_to_records: %d
        %s""".formatted(fields, features, snapshotRecords, reset, BREAK_KEYS);
  }

  /** A feed: its lines, the changed column (−1: none), its number of columns and the step in standard errors. */
  record Feed(List<byte[]> lines, int changed, int p, double stepSe) { }

  /** Largest amplitude of a column's daily pattern, in its sd (the third argument; default 1). */
  static double dailyMax = 1.0;

  static Feed feed(long seed, boolean change) {
    Random rnd = new Random(seed);
    final int P = seStep ? 6 + rnd.nextInt(5) : ChangeRecoveryHarness.P;
    double[] load = new double[P];
    double[] beta = new double[P];
    double[] mean = new double[P];
    double[] sd = new double[P];
    double[] daily = new double[P];
    double[] phase = new double[P];
    for (int j = 0; j < P; j++) {
      daily[j] = dailyMax * rnd.nextDouble(); // a daily pattern (as a price that follows the hour)
      phase[j] = 2 * Math.PI * rnd.nextDouble();
      load[j] = 0.5 + 0.34 * rnd.nextDouble(); // pairwise correlation load_i·load_j in [0.25, 0.7]
      beta[j] = (rnd.nextBoolean() ? 1 : -1) * (0.5 + rnd.nextDouble());
      mean[j] = 10 * rnd.nextGaussian();
      sd[j] = 0.5 + 2 * rnd.nextDouble();
    }
    int changed = change ? rnd.nextInt(P) : -1;
    double[] after = beta.clone();
    double stepSe = Double.NaN;
    if (changed >= 0) {
      if (seStep) {
        stepSe = (rnd.nextBoolean() ? 1 : -1) * (4 + 6 * rnd.nextDouble());
        after[changed] = beta[changed] + stepSe * steadyStateSe(load, changed);
      } else if (!noiseStep) {
        after[changed] = 3.0 * beta[changed];
      }
    }
    long t = Instant.parse("2026-01-01T00:00:00Z").toEpochMilli();
    List<byte[]> out = new ArrayList<>(N);
    double[] x = new double[P];
    StringBuilder sb = new StringBuilder();
    for (int i = 0; i < N; i++) {
      t += 600_000;
      double f = rnd.nextGaussian();
      double hourAngle = 2 * Math.PI * ((t / 3_600_000.0) % 24.0) / 24;
      double y = 3.0 + 1.5 * Math.sin(hourAngle) + rnd.nextGaussian() * (noiseStep && change && i >= STEP ? 2.0 : 1.0);
      for (int j = 0; j < P; j++) {
        double u = load[j] * f + Math.sqrt(1 - load[j] * load[j]) * rnd.nextGaussian()
            + daily[j] * Math.sin(hourAngle + phase[j]);
        x[j] = mean[j] + sd[j] * u;
        double b = i >= STEP ? after[j] : beta[j];
        y += b * (x[j] - mean[j]) / sd[j]; // a weight of b per standard deviation of the column
      }
      sb.setLength(0);
      sb.append('{');
      for (int j = 0; j < P; j++) {
        sb.append('"').append(NAMES[j]).append("\":").append(String.format(Locale.ROOT, "%.6f", x[j])).append(',');
      }
      sb.append("\"y\":").append(String.format(Locale.ROOT, "%.6f", y)).append(",\"at\":\"").append(Instant.ofEpochMilli(t)).append("\"}");
      out.add(sb.toString().getBytes(StandardCharsets.UTF_8));
    }
    return new Feed(out, changed, P, stepSe);
  }

  /** The steady-state standard error of column j's weight, in its sd units (see {@link #seStep}). */
  static double steadyStateSe(double[] load, int j) {
    int p = load.length;
    double[][] sigma = new double[p][p];
    for (int a = 0; a < p; a++) {
      for (int b = 0; b < p; b++) {
        sigma[a][b] = a == b ? 1.0 : load[a] * load[b];
      }
    }
    double nEff = 1.0 / (1.0 - Math.pow(0.5, 1.0 / 1008));
    double inv = new org.apache.commons.math3.linear.LUDecomposition(
        new org.apache.commons.math3.linear.Array2DRowRealMatrix(sigma)).getSolver().getInverse().getEntry(j, j);
    return Math.sqrt(inv / nEff);
  }

  /** One run's outcome. */
  static final class Run implements PipelineStep.Sink {
    final PipelineStep step;
    final double[] err = new double[N];
    final boolean[] covered = new boolean[N];
    final List<DriftAlarm> changedAlarms = new ArrayList<>();
    final List<DriftAlarm> breakAlarms = new ArrayList<>();
    final List<DriftAlarm> weightAlarms = new ArrayList<>();
    final List<DriftAlarm> errorAlarms = new ArrayList<>();
    int i;

    Run(int reset, int p) { step = new PipelineStep(ConfigLoader.parse(config(reset, p), "recovery.yaml")); }

    Run feed(List<byte[]> lines) {
      Arrays.fill(err, Double.NaN);
      for (i = 0; i < lines.size(); i++) {
        byte[] b = lines.get(i);
        step.process(b, 0, b.length, 0L, 0, i, this);
      }
      return this;
    }

    @Override public void prediction(Prediction p, EventRecord r) {
      if (p.status() == Prediction.Status.SCORED) {
        err[i] = p.error();
        covered[i] = p.covered();
      }
    }
    @Override public void reject(RejectReason reason, String detail) { throw new AssertionError(reason + " " + detail); }
    @Override public void snapshotDue() {
      Snapshot s = step.snapshot();
      for (DriftAlarm a : s.alarms()) {
        List<DriftAlarm> l = a.kind().equals(DriftAlarm.CHANGED_WEIGHT) ? changedAlarms
            : a.kind().equals(DriftAlarm.WEIGHT_BREAK) ? breakAlarms
            : a.kind().equals(DriftAlarm.WEIGHT) ? weightAlarms
            : a.kind().equals(DriftAlarm.ERROR_LEVEL) && "up".equals(a.direction()) ? errorAlarms : null;
        if (l != null && l.stream().noneMatch(o -> java.util.Objects.equals(o.column(), a.column()) && o.firedAtRecord() == a.firedAtRecord())) {
          l.add(a);
        }
      }
    }

    double rmse(int from, int to) {
      double s = 0;
      int n = 0;
      for (int k = from; k < to; k++) {
        if (!Double.isNaN(err[k])) { s += err[k] * err[k]; n++; }
      }
      return Math.sqrt(s / n);
    }

    double coverage(int from, int to) {
      int c = 0;
      int n = 0;
      for (int k = from; k < to; k++) {
        if (!Double.isNaN(err[k])) { n++; if (covered[k]) c++; }
      }
      return (double) c / n;
    }

    /** Records from the change until the RMSE over the last 200 records is within 10 % of the noise sd (1). */
    int recovery() {
      double sd = noiseStep ? 2.0 : 1.0;
      for (int k = STEP + 200; k < N; k++) {
        if (rmse(k - 200, k) <= 1.1 * sd) {
          return k - STEP;
        }
      }
      return N - STEP;
    }
  }

  public static void main(String[] args) {
    int trials = args.length > 0 ? Integer.parseInt(args[0]) : 200;
    int stationary = args.length > 1 ? Integer.parseInt(args[1]) : 100;
    dailyMax = args.length > 2 ? Double.parseDouble(args[2]) : 1.0;
    snapshotRecords = args.length > 3 ? Integer.parseInt(args[3]) : 144;
    noiseStep = args.length > 4 && args[4].equals("noise");
    seStep = args.length > 4 && args[4].equals("se");
    int r = RESETS.length;
    double[][] rmseDay = new double[r][trials];
    double[][] rmseWeek = new double[r][trials];
    double[][] rmseLater = new double[r][trials];
    double[][] covWeek = new double[r][trials];
    double[][] covLater = new double[r][trials];
    double[][] recov = new double[r][trials];
    double[][] statRmse = new double[r][stationary];
    double[][] statCov = new double[r][stationary];
    int firstRight = 0;
    int anyWrong = 0;
    int weightFirstRight = 0;
    int weightAnyWrong = 0;
    int weightNone = 0;
    int none = 0;
    int errorUp = 0;
    Naming breaks = new Naming();
    List<Long> delay = new ArrayList<>();
    List<Long> weightDelay = new ArrayList<>();
    for (int t = 0; t < trials; t++) {
      Feed f = feed(1000 + t, true);
      String want = NAMES[f.changed()];
      breaks.stepSe = f.stepSe();
      for (int k = 0; k < r; k++) {
        Run run = new Run(RESETS[k], f.p()).feed(f.lines());
        rmseDay[k][t] = run.rmse(STEP, STEP + 144);
        rmseWeek[k][t] = run.rmse(STEP, STEP + 1008);
        rmseLater[k][t] = run.rmse(STEP + 1008, STEP + 3 * 1008);
        covWeek[k][t] = run.coverage(STEP, STEP + 1008);
        covLater[k][t] = run.coverage(STEP + 1008, STEP + 3 * 1008);
        recov[k][t] = run.recovery();
        if (k == 0) {
          if (run.errorAlarms.stream().anyMatch(a -> a.firedAtRecord() > STEP)) {
            errorUp++;
          }
          // the raw constant changes with any column whose mean is not 0 (−b·m/s): it is left out of both counts
          List<DriftAlarm> after = run.changedAlarms.stream().filter(a -> a.firedAtRecord() > STEP
              && !a.column().equals("constant")).toList();
          if (after.isEmpty()) {
            none++;
          } else {
            if (after.get(0).column().equals(want)) {
              firstRight++;
              delay.add(after.get(0).firedAtRecord() - STEP);
            }
          }
          if (after.stream().anyMatch(a -> !a.column().equals(want))) {
            anyWrong++;
          }
          breaks.count(run.breakAlarms, want, "break");
          List<DriftAlarm> wa = run.weightAlarms.stream().filter(a -> a.firedAtRecord() > STEP
              && !a.column().equals("constant")).toList();
          if (wa.isEmpty()) {
            weightNone++;
          } else if (wa.get(0).column().equals(want)) {
            weightFirstRight++;
            weightDelay.add(wa.get(0).firedAtRecord() - STEP);
          }
          for (DriftAlarm a : after) if (!a.column().equals(want)) System.err.println("trial " + t + " want " + want + ": " + a);
          if (wa.stream().anyMatch(a -> !a.column().equals(want))) {
            weightAnyWrong++;
          }
        }
      }
    }
    int statChanged = 0;
    int statWeight = 0;
    int statBreak = 0;
    for (int t = 0; t < stationary; t++) {
      Feed f = feed(500_000 + t, false);
      for (int k = 0; k < r; k++) {
        Run run = new Run(RESETS[k], f.p()).feed(f.lines());
        statRmse[k][t] = run.rmse(STEP, N);
        statCov[k][t] = run.coverage(STEP, N);
        if (k == 0) {
          if (!run.changedAlarms.isEmpty()) statChanged++;
          for (DriftAlarm a : run.changedAlarms) System.err.println("stationary " + t + ": " + a);
          if (run.weightAlarms.stream().anyMatch(a -> !a.column().equals("constant"))) statWeight++;
          if (!run.breakAlarms.isEmpty()) statBreak++;
          for (DriftAlarm a : run.breakAlarms) System.err.println("stationary " + t + " break: " + a);
        }
      }
    }
    System.out.printf(Locale.ROOT, "%d change trials (%s), %d stationary trials,"
        + " daily patterns up to %.1f sd, a snapshot every %d records%n%n", trials,
        noiseStep ? "the noise sd doubles; RMSE and recovery below against sd 2"
            : seStep ? "6 to 10 correlated columns, one weight steps by 4 to 10 of its standard errors"
            : "one weight of six correlated columns triples", stationary, dailyMax, snapshotRecords);
    System.out.printf(Locale.ROOT, "error-level \"up\" alarm after the change (opens the changed-weight alarm's window): %.1f %% of change trials%n%n",
        100.0 * errorUp / trials);
    System.out.println("| naming | weight-break scan (kept all the time) | changed-weight alarm (after an error alarm) | weight alarm (snapshots) |");
    System.out.println("|---|---|---|---|");
    System.out.printf(Locale.ROOT, "| first named column is the changed one | %.1f %% | %.1f %% | %.1f %% |%n", 100.0 * breaks.firstRight / trials, 100.0 * firstRight / trials, 100.0 * weightFirstRight / trials);
    System.out.printf(Locale.ROOT, "| a column whose weight did not change is named | %.1f %% | %.1f %% | %.1f %% |%n", 100.0 * breaks.anyWrong / trials, 100.0 * anyWrong / trials, 100.0 * weightAnyWrong / trials);
    System.out.printf(Locale.ROOT, "| nothing named after the change | %.1f %% | %.1f %% | %.1f %% |%n", 100.0 * breaks.none / trials, 100.0 * none / trials, 100.0 * weightNone / trials);
    System.out.printf(Locale.ROOT, "| median records from the change to the right name | %s | %s | %s |%n", median(breaks.delay), median(delay), median(weightDelay));
    System.out.printf(Locale.ROOT, "| stationary trials with any such alarm | %.1f %% | %.1f %% | %.1f %% |%n%n", 100.0 * statBreak / stationary, 100.0 * statChanged / stationary, 100.0 * statWeight / stationary);
    System.out.printf(Locale.ROOT, "weight-break scan, first named right, by step size: %s%n", breaks.bySize());
    System.out.printf(Locale.ROOT, "weight-break scan, a column named before the change: %.1f %% of change trials%n%n", 100.0 * breaks.before / trials);
    if (RESETS.length == 1) {
      return;
    }
    System.out.println("| drift.reset_to_records | RMSE day 1 | RMSE week 1 | RMSE weeks 2-3 | records to recover (median) | 90 % coverage week 1 | weeks 2-3 | stationary RMSE | stationary coverage |");
    System.out.println("|---|---|---|---|---|---|---|---|---|");
    for (int k = 0; k < r; k++) {
      System.out.printf(Locale.ROOT, "| %s | %.3f | %.3f | %.3f | %.0f | %.1f %% | %.1f %% | %.4f | %.1f %% |%n",
          RESETS[k] == 0 ? "0 (off)" : String.valueOf(RESETS[k]), mean(rmseDay[k]), mean(rmseWeek[k]), mean(rmseLater[k]),
          med(recov[k]), 100 * mean(covWeek[k]), 100 * mean(covLater[k]), mean(statRmse[k]), 100 * mean(statCov[k]));
    }
  }

  /** Counts of one naming alarm over the change trials (the constant left out, as above). */
  static final class Naming {
    int firstRight;
    int anyWrong;
    int none;
    int before;
    final List<Long> delay = new ArrayList<>();
    final int[] right = new int[6];
    final int[] all = new int[6];
    double stepSe;

    void count(List<DriftAlarm> alarms, String want, String label) {
      List<DriftAlarm> after = alarms.stream().filter(a -> a.firedAtRecord() > STEP && !a.column().equals("constant")).toList();
      if (alarms.stream().anyMatch(a -> a.firedAtRecord() <= STEP && !a.column().equals("constant"))) {
        before++;
      }
      int bin = Double.isNaN(stepSe) ? 0 : Math.min(5, (int) Math.abs(stepSe) - 4);
      all[bin]++;
      if (after.isEmpty()) {
        none++;
      } else if (after.get(0).column().equals(want)) {
        firstRight++;
        right[bin]++;
        delay.add(after.get(0).firedAtRecord() - STEP);
      }
      if (after.stream().anyMatch(a -> !a.column().equals(want))) {
        anyWrong++;
        for (DriftAlarm a : after) if (!a.column().equals(want)) System.err.println(label + " want " + want + ": " + a);
      }
    }

    String bySize() {
      StringBuilder b = new StringBuilder();
      for (int k = 0; k < 6; k++) {
        if (all[k] > 0) b.append(String.format(Locale.ROOT, "%d-%d se: %d/%d  ", k + 4, k + 5, right[k], all[k]));
      }
      return b.toString();
    }
  }

  static double mean(double[] v) {
    double s = 0;
    for (double d : v) s += d;
    return s / v.length;
  }

  static double med(double[] v) {
    double[] c = v.clone();
    Arrays.sort(c);
    return c[c.length / 2];
  }

  static String median(List<Long> v) {
    if (v.isEmpty()) return "-";
    List<Long> c = new ArrayList<>(v);
    c.sort(null);
    return String.valueOf(c.get(c.size() / 2));
  }
}
