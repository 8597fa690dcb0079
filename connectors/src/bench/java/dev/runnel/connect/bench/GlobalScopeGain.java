package dev.runnel.connect.bench;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.pipeline.SettledForecast;
import dev.runnel.core.pipeline.ShareExchange;
import dev.runnel.core.pipeline.Snapshot;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import dev.runnel.demo.GeneratedRecord;
import dev.runnel.demo.GroundTruth;
import dev.runnel.demo.QuillmarshGenerator;
import dev.runnel.demo.Settings;
import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.util.List;
import java.util.Locale;

/**
 * What {@code model.scope: global} gains statistically: the demo feed (its generator, seeded, with
 * its ground truth) split into 4 partitions by hub ({@code QM-01} to {@code QM-13}, hub number − 1
 * mod 4, as {@link GlobalScopeCost}), run through 4 {@link PipelineStep}s with {@code model.scope:
 * partition} and 4 with {@code global}, in one run, on the same records in the same order.
 *
 * <p>Both arms use the demo configuration with {@code corrections: learn_as_new} ({@code replace}
 * cannot be shared), so they differ only in the scope. The global arm shares on the configured period
 * ({@code model.share_every}, default {@code PT1H} of event time, and {@code share_every_records: 0}):
 * the feed is walked in its (event-time) order, each share goes through its bytes into the other
 * three steps' inboxes and is folded before their next record ({@link ShareExchange}, the schedule the
 * backtest and replay use with {@code model.scope: global}; the runner folds after the commit).
 *
 * <p>Reports, per arm:
 * <ul>
 *   <li>prequential RMSE of the scored actuals (a priori prediction against the record's sessions),
 *       over the whole feed and over its first days (when each partition has little data);</li>
 *   <li>RMSE of the settled forecasts: next hour (horizon 1 h) and day ahead (the 18:00 requests for
 *       every hour of the next day);</li>
 *   <li>the error of the shared columns' effects against the ground truth: {@code price_per_kwh}
 *       (−18 sessions per EUR/kWh, −36 from the tariff change) and {@code temperature_c} (+0.20 per
 *       °C), read as raw-unit weights from each partition's snapshot every 6 hours of the feed: the
 *       root mean square error per partition, pooled, over the first days, and the spread (standard
 *       deviation) of the 4 partitions' estimates around their mean, averaged over the sample times.</li>
 * </ul>
 * {@code -Dgain.noFold=true} (the global arm folds nothing: it must then print the partition arm's
 * numbers) and {@code -Dgain.withoutDayOfWeek=true} (both arms without the day-of-week feature) are
 * checks, not configurations to use.
 *
 * <p>Deterministic: the feed is seeded, each step is deterministic, and the exchange follows the feed's
 * order, so two runs print the same numbers.
 *
 * <pre>{@code
 * mvn -o -q -pl connectors -am package -DskipTests
 * java -Xmx1g -cp 'connectors/target/test-classes:connectors/target/runnel.jar:connectors/target/lib/*' \
 *     dev.runnel.connect.bench.GlobalScopeGain --days 364 --first-days 7 --share-every PT1H
 * }</pre>
 */
public final class GlobalScopeGain {

  private GlobalScopeGain() { }

  static final int PARTITIONS = 4;
  static final int SAMPLE_EVERY_HOURS = 6;
  /** {@code -Dgain.noFold=true}: the global arm shares but folds nothing (a check: it must then equal the partition arm). */
  static final boolean NO_FOLD = Boolean.getBoolean("gain.noFold");
  static final String PRICE = "price_per_kwh";
  static final String TEMPERATURE = "temperature_c";

  /** {@code -Dgain.withoutDayOfWeek=true}: both arms without the demo's day-of-week feature (a diagnostic). */
  static final boolean WITHOUT_DAY_OF_WEEK = Boolean.getBoolean("gain.withoutDayOfWeek");

  static PipelineConfig config(String scope, String shareEvery) throws IOException {
    String yaml;
    try (InputStream in = GlobalScopeGain.class.getResourceAsStream("/dev/runnel/demo/quillmarsh.yaml")) {
      yaml = new String(in.readAllBytes(), StandardCharsets.UTF_8);
    }
    if (WITHOUT_DAY_OF_WEEK) {
      yaml = yaml.replace("  - {kind: cyclic, cycle: day_of_week, harmonics: 3}\n", "");
    }
    yaml = yaml.replace("corrections: replace", "corrections: learn_as_new")
        .replace("  noise_half_life_records: 500\n", "  noise_half_life_records: 500\n  scope: " + scope + "\n"
            + (scope.equals("global") ? "  share_every_records: 0\n  share_every: " + shareEvery + "\n" : ""));
    return ConfigLoader.parse(yaml, "quillmarsh (" + scope + ")");
  }

  /** Sums of squared errors split by "first days" and "all". */
  static final class Sse {
    double all;
    long n;
    double first;
    long nFirst;
    double sum;
    double sumFirst;

    void add(double e, boolean early) {
      all += e * e;
      sum += e;
      n++;
      if (early) {
        first += e * e;
        sumFirst += e;
        nFirst++;
      }
    }

    double mean() { return sum / n; }

    double meanFirst() { return sumFirst / nFirst; }

    double rmse() { return Math.sqrt(all / n); }

    double rmseFirst() { return Math.sqrt(first / nFirst); }

    double rmseAfter() { return Math.sqrt((all - first) / (n - nFirst)); }
  }

  /** One arm: 4 steps and what they scored. */
  static final class Arm {
    final String label;
    final PipelineStep[] steps = new PipelineStep[PARTITIONS];
    /** The schedule replays and backtests use: each share folded by the others before their next record. */
    final ShareExchange exchange;
    final Sse scored = new Sse();
    final Sse nextHour = new Sse();
    final Sse dayAhead = new Sse();
    final Sse[] price = new Sse[PARTITIONS + 1];
    final Sse[] temperature = new Sse[PARTITIONS + 1];
    final Sse priceSpread = new Sse();
    final Sse temperatureSpread = new Sse();
    long rejects;
    boolean early;

    Arm(String label, PipelineConfig cfg) {
      this.label = label;
      for (int p = 0; p < PARTITIONS; p++) {
        steps[p] = new PipelineStep(cfg, p);
        price[p] = new Sse();
        temperature[p] = new Sse();
      }
      price[PARTITIONS] = new Sse();
      temperature[PARTITIONS] = new Sse();
      int[] parts = new int[PARTITIONS];
      for (int p = 0; p < PARTITIONS; p++) {
        parts[p] = p;
      }
      exchange = new ShareExchange(parts, !NO_FOLD);
    }

    final PipelineStep.Sink sink = new PipelineStep.Sink() {
      @Override public void prediction(Prediction pr, EventRecord r) {
        if (pr.status() == Prediction.Status.SCORED) {
          scored.add(pr.error(), early);
        }
      }
      @Override public void reject(RejectReason reason, String detail) { rejects++; }
      @Override public void snapshotDue() { }
      @Override public void settled(SettledForecast s, EventRecord r) {
        (s.horizonMillis() <= 3_600_000L ? nextHour : dayAhead).add(s.error(), early);
      }
    };

    void process(int p, byte[] line, long offset, boolean earlyRecord) {
      PipelineStep step = steps[p];
      exchange.before(p, step);
      early = earlyRecord;
      step.process(line, 0, line.length, 0L, p, offset, sink);
      exchange.after(p, step);
    }

    /** Reads every partition's raw-unit effects and scores them against the truth. */
    void sample(double truePrice, double trueTemperature, boolean earlySample) {
      double[] ps = new double[PARTITIONS];
      double[] ts = new double[PARTITIONS];
      int have = 0;
      for (int p = 0; p < PARTITIONS; p++) {
        if (!steps[p].model().ready()) {
          continue;
        }
        Snapshot snap = steps[p].snapshot();
        double wp = snap.rawWeightOf(PRICE);
        double wt = snap.rawWeightOf(TEMPERATURE);
        if (Double.isNaN(wp) || Double.isNaN(wt)) {
          continue;
        }
        price[p].add(wp - truePrice, earlySample);
        temperature[p].add(wt - trueTemperature, earlySample);
        price[PARTITIONS].add(wp - truePrice, earlySample);
        temperature[PARTITIONS].add(wt - trueTemperature, earlySample);
        ps[have] = wp;
        ts[have] = wt;
        have++;
      }
      if (have == PARTITIONS) {
        priceSpread.add(sd(ps), earlySample);
        temperatureSpread.add(sd(ts), earlySample);
      }
    }
  }

  static double sd(double[] v) {
    double m = 0;
    for (double x : v) {
      m += x;
    }
    m /= v.length;
    double s = 0;
    for (double x : v) {
      s += (x - m) * (x - m);
    }
    return Math.sqrt(s / (v.length - 1));
  }

  static int partitionOf(GeneratedRecord r) {
    return r.hubIndex() % PARTITIONS; // QM-01 is index 0: hub number - 1 mod 4
  }

  public static void main(String[] args) throws IOException {
    int days = Settings.DEFAULT_DAYS;
    int firstDays = 7;
    String shareEvery = "PT1H";
    for (int i = 0; i + 1 < args.length; i += 2) {
      switch (args[i]) {
        case "--days" -> days = Integer.parseInt(args[i + 1]);
        case "--first-days" -> firstDays = Integer.parseInt(args[i + 1]);
        case "--share-every" -> shareEvery = args[i + 1];
        default -> throw new IllegalArgumentException("unknown option " + args[i]
            + "; use --days N, --first-days N, --share-every ISO-8601-duration");
      }
    }
    Settings settings = Settings.defaults().withDays(days);
    QuillmarshGenerator gen = new QuillmarshGenerator(settings);
    List<GeneratedRecord> feed = gen.records().toList();
    Arm[] arms = {new Arm("partition", config("partition", shareEvery)), new Arm("global", config("global", shareEvery))};
    long[] offsets = new long[PARTITIONS];
    int sampledHour = -1;
    long[] perPartition = new long[PARTITIONS];
    for (GeneratedRecord r : feed) {
      int hour = r.issueHour();
      // sample the effects at the first record of every 6th hour (what the previous hours taught)
      if (hour / SAMPLE_EVERY_HOURS != sampledHour / SAMPLE_EVERY_HOURS && sampledHour >= 0) {
        double truePrice = gen.schedule().isAfterTariffChange(hour)
            ? GroundTruth.PRICE_EFFECT_AFTER_TARIFF_PER_EUR : GroundTruth.PRICE_EFFECT_PER_EUR;
        for (Arm a : arms) {
          a.sample(truePrice, GroundTruth.TEMPERATURE_EFFECT_PER_C, hour < 24 * firstDays);
        }
      }
      sampledHour = hour;
      int p = partitionOf(r);
      byte[] line = r.line().getBytes(StandardCharsets.UTF_8);
      boolean early = hour < 24 * firstDays;
      for (Arm a : arms) {
        a.process(p, line, offsets[p], early);
      }
      offsets[p]++;
      perPartition[p]++;
    }

    System.out.printf(Locale.ROOT, "feed: %,d demo records (%d days, seed %d), 4 partitions by hub (hub number - 1 mod 4): %,d / %,d / %,d / %,d records;"
        + " first days = %d; global shares every %s of event time%n",
        feed.size(), days, settings.seed(), perPartition[0], perPartition[1], perPartition[2], perPartition[3], firstDays, shareEvery);
    Arm g = arms[1];
    long made = 0;
    for (PipelineStep s : g.steps) {
      made += s.sharesMade();
    }
    System.out.printf(Locale.ROOT, "global: %,d shares made, %,d folded; rejects per arm: %d / %d%n", made, g.exchange.sharesFolded(),
        arms[0].rejects, arms[1].rejects);
    System.out.println();
    System.out.println("| measure | partition (4 models) | global (1 model) | global / partition |");
    System.out.println("|---|---|---|---|");
    row("prequential RMSE, actuals, all", arms[0].scored.rmse(), g.scored.rmse());
    row("prequential RMSE, actuals, first " + firstDays + " days", arms[0].scored.rmseFirst(), g.scored.rmseFirst());
    row("prequential RMSE, actuals, after the first " + firstDays + " days", arms[0].scored.rmseAfter(), g.scored.rmseAfter());
    row("settled RMSE, next hour, all", arms[0].nextHour.rmse(), g.nextHour.rmse());
    row("settled RMSE, next hour, first " + firstDays + " days", arms[0].nextHour.rmseFirst(), g.nextHour.rmseFirst());
    row("settled RMSE, next hour, after the first " + firstDays + " days", arms[0].nextHour.rmseAfter(), g.nextHour.rmseAfter());
    row("settled RMSE, day ahead, all", arms[0].dayAhead.rmse(), g.dayAhead.rmse());
    row("settled RMSE, day ahead, first " + firstDays + " days", arms[0].dayAhead.rmseFirst(), g.dayAhead.rmseFirst());
    row("settled RMSE, day ahead, after the first " + firstDays + " days", arms[0].dayAhead.rmseAfter(), g.dayAhead.rmseAfter());
    System.out.printf(Locale.ROOT, "| bias (mean actual - predicted): actuals / next hour / day ahead | %.4f / %.4f / %.4f | %.4f / %.4f / %.4f | |%n",
        arms[0].scored.mean(), arms[0].nextHour.mean(), arms[0].dayAhead.mean(), g.scored.mean(), g.nextHour.mean(), g.dayAhead.mean());
    for (String col : new String[] {PRICE, TEMPERATURE}) {
      boolean isPrice = col.equals(PRICE);
      Sse[] pa = isPrice ? arms[0].price : arms[0].temperature;
      Sse[] ga = isPrice ? g.price : g.temperature;
      row(col + " effect RMSE vs truth, 4 partitions pooled, all", pa[PARTITIONS].rmse(), ga[PARTITIONS].rmse());
      row(col + " effect RMSE vs truth, 4 partitions pooled, first " + firstDays + " days",
          pa[PARTITIONS].rmseFirst(), ga[PARTITIONS].rmseFirst());
      for (int p = 0; p < PARTITIONS; p++) {
        row(col + " effect RMSE vs truth, partition " + p + ", all", pa[p].rmse(), ga[p].rmse());
      }
      System.out.printf(Locale.ROOT, "| %s effect bias (mean estimate - truth), pooled, all / first %d days | %.4f / %.4f | %.4f / %.4f | |%n",
          col, firstDays, pa[PARTITIONS].mean(), pa[PARTITIONS].meanFirst(), ga[PARTITIONS].mean(), ga[PARTITIONS].meanFirst());
      Sse ps = isPrice ? arms[0].priceSpread : arms[0].temperatureSpread;
      Sse gs = isPrice ? g.priceSpread : g.temperatureSpread;
      row(col + " spread across partitions (mean sd), all", ps.mean(), gs.mean());
      row(col + " spread across partitions (mean sd), first " + firstDays + " days", ps.meanFirst(), gs.meanFirst());
    }
    System.out.printf(Locale.ROOT, "%nsamples: effects every %d h of the feed, %d per partition and arm; scored actuals %,d / %,d;"
        + " settled next hour %,d / %,d, day ahead %,d / %,d%n", SAMPLE_EVERY_HOURS, arms[0].price[0].n,
        arms[0].scored.n, g.scored.n, arms[0].nextHour.n, g.nextHour.n, arms[0].dayAhead.n, g.dayAhead.n);
  }

  static void row(String what, double partition, double global) {
    System.out.printf(Locale.ROOT, "| %s | %.4f | %.4f | %.3f |%n", what, partition, global, global / partition);
  }
}
