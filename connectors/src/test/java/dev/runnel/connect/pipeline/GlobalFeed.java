package dev.runnel.connect.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.connect.testing.KafkaTestSupport;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.model.GlobalModel;
import dev.runnel.core.model.ModelShare;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Random;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.ejml.data.DMatrixRMaj;
import org.ejml.dense.row.CommonOps_DDRM;
import org.ejml.dense.row.factory.DecompositionFactory_DDRM;
import org.ejml.dense.row.factory.LinearSolverFactory_DDRM;
import org.ejml.interfaces.decomposition.QRDecomposition;
import org.ejml.interfaces.linsol.LinearSolverDense;

/**
 * A feed for {@code model.scope: global} on Kafka, and the checks its tests share: 4 input
 * partitions, each with hub levels of its own (one level two partitions hold) and temperatures and
 * prices whose scalers differ by partition, forgetting by event time ({@link #HALF_LIFE}); the
 * union ridge solution by EJML's QR (as stream-core's {@code GlobalReferenceTest}); the partitions'
 * states read from {@code <name>.state}.
 *
 * <p>How the check is made exact with forgetting. A column a partition first learns from another
 * partition's share (a hub level only others hold) gets its prior when that share is folded, and
 * with forgetting by event time that prior then decays from the receiver's clock at the fold,
 * which depends on when the instance read the share (docs/operations.md, "Scaling"): two runs agree
 * exactly on the records' information, on such a prior only as far as the timing of folds allows.
 * So the feed has a first stretch ({@link #FIRST} records per partition, one share each) in which
 * every level of every partition appears and each partition's records all carry one event time
 * {@code t0_p}; its tests produce that stretch alone and produce the rest only once every
 * partition's committed state has folded every other partition's first share. Every prior row of
 * partition {@code p}'s view (its own columns' and the columns learned from shares) is then stated
 * at {@code t0_p}, whatever the timing, later shares name no new column, and the records' rows
 * weigh {@code 2^(-(T - t)/h)} at the view's clock {@code T} however the folds were timed: the
 * views are one problem again, exactly.
 */
final class GlobalFeed {

  static final int PARTITIONS = 4;
  static final double PRIOR_VARIANCE = 4.0;
  static final int SHARE_EVERY = 50;
  /** Records per partition in the first stretch (one share), all at the partition's first event time. */
  static final int FIRST = SHARE_EVERY;
  /** {@code model.forgetting.half_life}. */
  static final String HALF_LIFE = "PT10H";
  static final double HALF_LIFE_MS = 10 * 3_600_000.0;
  /** The records after the first stretch span this many half-lives, whatever their number. */
  static final double HALF_LIVES_SPANNED = 4.0;

  private GlobalFeed() { }

  static String yaml(String name, String topic, String bootstrap) {
    return String.format(Locale.ROOT, """
        name: %s
        input:
          topic: %s
          fields: {hub: text, temperature_c: number, price: number, sessions: number, observed_at: time}
          event_time: {field: observed_at, format: iso8601}
        target: sessions
        features:
          - {kind: onehot, field: hub, max_levels: 40}
          - {kind: numeric, field: temperature_c}
          - {kind: numeric, field: price}
        model:
          prior_variance: %s
          forgetting: {half_life: %s}
          forget_towards_prior: false
          scope: global
          share_every_records: %d
        outputs:
          snapshot_every_records: 100
        web:
          enabled: false
        kafka:
          bootstrap_servers: "%s"
          commit_interval_ms: 200
          commit_interval_records: 300
          client_properties:
            session.timeout.ms: "6000"
            heartbeat.interval.ms: "1000"
            producer.transaction.timeout.ms: "15000"
        """, name, topic, PRIOR_VARIANCE, HALF_LIFE, SHARE_EVERY, bootstrap);
  }

  static PipelineConfig config(String name, String topic, String bootstrap) {
    return ConfigLoader.parse(yaml(name, topic, bootstrap), name + ".yaml");
  }

  /** One record as produced. */
  record Rec(int part, long t, String hub, double temp, double price, double y) { }

  /** Partition {@code p}'s first event time: every record of its first stretch carries it. */
  static long firstTime(int p) {
    return Instant.parse("2026-11-02T00:00:00Z").toEpochMilli() + 1000L * p;
  }

  /**
   * Per partition, {@code perPartition} JSON lines (a multiple of {@link #SHARE_EVERY}: the last
   * record makes the last share): the first {@link #FIRST} at {@link #firstTime}, holding every
   * level the partition will have; the others evenly spaced over {@link #HALF_LIVES_SPANNED}
   * half-lives after it.
   */
  static List<List<String>> lines(long seed, int perPartition, List<Rec> recs) {
    Random rnd = new Random(seed);
    List<List<String>> out = new ArrayList<>();
    long step = (long) (HALF_LIVES_SPANNED * HALF_LIFE_MS / (perPartition - FIRST));
    for (int p = 0; p < PARTITIONS; p++) {
      List<String> mine = new ArrayList<>();
      java.util.Set<String> early = new java.util.HashSet<>();
      for (int i = 0; i < perPartition; i++) {
        long t = firstTime(p) + (i < FIRST ? 0 : step * (i - FIRST + 1));
        String hub = p <= 1 && rnd.nextDouble() < 0.25 ? "H-shared" : "H" + p + "-" + rnd.nextInt(3);
        if (i < FIRST) {
          early.add(hub);
        } else {
          assertTrue(early.contains(hub), "every level of partition " + p + " is in its first stretch: " + hub);
        }
        double temp = 5 + 5 * p + (2 + p) * rnd.nextGaussian();
        double price = 0.2 + 0.05 * p + 0.03 * rnd.nextGaussian();
        double y = 30 + (hub.hashCode() % 5) - 0.4 * temp - 20 * price + rnd.nextGaussian();
        recs.add(new Rec(p, t, hub, temp, price, y));
        mine.add(String.format(Locale.ROOT, "{\"hub\":\"%s\",\"observed_at\":\"%s\",\"temperature_c\":%s,\"price\":%s,\"sessions\":%s}",
            hub, Instant.ofEpochMilli(t), temp, price, y));
      }
      out.add(mine);
    }
    return out;
  }

  /** The latest committed checkpoint of each input partition, restored (null where none yet). */
  static PipelineStep[] committedStates(String bootstrap, PipelineConfig cfg) {
    String topic = cfg.input().topic().orElseThrow();
    Map<String, byte[]> last = new HashMap<>();
    for (ConsumerRecord<byte[], byte[]> r : KafkaTestSupport.readAll(bootstrap, cfg.name() + ".state")) {
      last.put(new String(r.key(), StandardCharsets.UTF_8), r.value());
    }
    PipelineStep[] steps = new PipelineStep[PARTITIONS];
    for (int p = 0; p < PARTITIONS; p++) {
      byte[] b = last.get(topic + "-" + p);
      if (b != null) {
        steps[p] = new PipelineStep(cfg, p);
        steps[p].restore(b);
      }
    }
    return steps;
  }

  /** Every partition learned {@code trained} records and folded every other partition's shares of them. */
  static boolean synced(PipelineStep[] steps, int trained) {
    long shares = trained / SHARE_EVERY;
    for (int p = 0; p < PARTITIONS; p++) {
      if (steps[p] == null || steps[p].trained() != trained) {
        return false;
      }
      for (int q = 0; q < PARTITIONS; q++) {
        if (q != p && steps[p].globalModel().lastFolded(q) != shares) {
          return false;
        }
      }
    }
    return true;
  }

  /**
   * The same feed through stream-core alone, without Kafka: the first stretch, every first share
   * folded by every other partition (at the sync point the tests wait for), then the rest, and
   * every later share folded by every other partition at the end.
   */
  static PipelineStep[] uninterrupted(PipelineConfig cfg, List<List<String>> lines) {
    PipelineStep[] steps = new PipelineStep[PARTITIONS];
    PipelineStep.Sink none = new PipelineStep.Sink() {
      @Override public void prediction(Prediction p, EventRecord r) { }
      @Override public void reject(RejectReason reason, String detail) { throw new AssertionError(reason + ": " + detail); }
      @Override public void snapshotDue() { }
    };
    for (int p = 0; p < PARTITIONS; p++) {
      steps[p] = new PipelineStep(cfg, p);
    }
    int[][] stretches = {{0, FIRST}, {FIRST, lines.get(0).size()}};
    for (int[] stretch : stretches) {
      List<byte[]> shares = new ArrayList<>();
      for (int p = 0; p < PARTITIONS; p++) {
        for (int off = stretch[0]; off < stretch[1]; off++) {
          byte[] b = lines.get(p).get(off).getBytes(StandardCharsets.UTF_8);
          steps[p].process(b, 0, b.length, 0L, p, off, none);
          ModelShare s = steps[p].shareIfDue();
          if (s != null) {
            shares.add(s.toBytes());
          }
        }
      }
      try {
        for (byte[] b : shares) {
          ModelShare s = ModelShare.fromBytes(b);
          for (int p = 0; p < PARTITIONS; p++) {
            if (p != s.source()) {
              assertEquals(GlobalModel.FoldResult.FOLDED, steps[p].fold(s));
            }
          }
        }
      } catch (IOException e) {
        throw new UncheckedIOException(e);
      }
    }
    return steps;
  }

  /** A view's weights and standard errors by column name. */
  static Map<String, double[]> byName(GlobalModel g) {
    int n = g.view().dimension();
    double[] w = new double[n];
    double[] se = new double[n];
    g.view().weights(w);
    g.view().standardErrors(se);
    Map<String, double[]> out = new HashMap<>();
    List<String> names = g.viewColumns();
    for (int v = 0; v < n; v++) {
      out.put(names.get(v), new double[] {w[v], se[v]});
    }
    return out;
  }

  /**
   * The largest relative difference (norm-wise for the weights, per column for the standard
   * errors) between two views of partition {@code p}: the same columns, compared by name.
   */
  static double[] difference(GlobalModel a, GlobalModel b) {
    Map<String, double[]> x = byName(a);
    Map<String, double[]> y = byName(b);
    assertEquals(new java.util.TreeSet<>(x.keySet()), new java.util.TreeSet<>(y.keySet()), "the same columns");
    double d = 0;
    double n = 0;
    double se = 0;
    for (Map.Entry<String, double[]> e : x.entrySet()) {
      double[] o = y.get(e.getKey());
      d += (e.getValue()[0] - o[0]) * (e.getValue()[0] - o[0]);
      n += o[0] * o[0];
      se = Math.max(se, Math.abs(e.getValue()[1] - o[1]) / Math.abs(o[1]));
    }
    return new double[] {Math.sqrt(d / n), se};
  }

  /** Which union problem {@link #againstUnion} solves: the right one, or a wrong one a negative control must tell apart. */
  enum Union {
    /** Every row weighted {@code 2^(-(T - t)/h)}, every prior row of the view once, stated at {@code t0_p}. */
    RIGHT,
    /** The prior counted once per partition. */
    PRIOR_PER_PARTITION,
    /** Every row weighing 1 (the forgetting not applied). */
    NO_FORGETTING,
    /** The priors of the columns only other partitions hold stated at the view's clock, as a fold at the last sync point would give them. */
    FOREIGN_PRIOR_AT_THE_END
  }

  /**
   * Checks partition {@code part}'s view against the weighted ridge solution over the union of
   * every partition's records, in the view's columns and bases, solved from scratch by EJML's QR
   * least squares (EJML as reference, as stream-core's GlobalReferenceTest). At the view's clock
   * {@code T}, a record at {@code t} weighs {@code w = 2^(-(T - t)/h)} (its row and target times
   * {@code sqrt(w)}), and each prior row {@code w0/prior_variance} once, with {@code w0 = 2^(-(T - t0_p)/h)}
   * (see the class doc for why every prior row of the view is stated at {@code t0_p}), stated
   * in the basis {@code (0, 1)} every column starts in and re-based to the view's. The noise
   * variance is the residual sum of squares over {@code sum(w) - p} (the model's effective sample size).
   *
   * @return {weights' norm-wise relative difference, standard errors' largest relative difference}
   */
  static double[] againstUnion(PipelineStep step, int part, List<Rec> recs, Union union) {
    GlobalModel g = step.globalModel();
    long now = step.lastEventTimeMillis();
    List<String> cols = g.viewColumns();
    int p = cols.size();
    int ic = g.viewIndex("constant");
    int it = g.viewIndex("temperature_c");
    int ip = g.viewIndex("price");
    assertTrue(ic >= 0 && it >= 0 && ip >= 0, "columns: " + cols);
    java.util.Set<String> own = new java.util.HashSet<>();
    for (Rec r : recs) {
      if (r.part() == part) {
        own.add("hub=" + r.hub());
      }
    }
    int m = recs.size() + p;
    DMatrixRMaj a = new DMatrixRMaj(m, p);
    DMatrixRMaj y = new DMatrixRMaj(m, 1);
    int i = 0;
    double n = 0;
    for (Rec r : recs) {
      double w = union == Union.NO_FORGETTING ? 1.0 : StrictMath.pow(2.0, -(now - r.t()) / HALF_LIFE_MS);
      double sw = Math.sqrt(w);
      a.set(i, ic, sw);
      a.set(i, it, sw * (r.temp() - g.viewOffset(it)) / g.viewScale(it));
      a.set(i, ip, sw * (r.price() - g.viewOffset(ip)) / g.viewScale(ip));
      int h = g.viewIndex("hub=" + r.hub());
      assertTrue(h >= 0, "every view has hub=" + r.hub() + ": " + cols);
      a.set(i, h, sw);
      y.set(i, 0, sw * r.y());
      n += w;
      i++;
    }
    double w0 = union == Union.NO_FORGETTING ? 1.0 : StrictMath.pow(2.0, -(now - firstTime(part)) / HALF_LIFE_MS);
    int copies = union == Union.PRIOR_PER_PARTITION ? PARTITIONS : 1;
    for (int k = 0; k < p; k++) {
      boolean foreign = cols.get(k).startsWith("hub=") && !cols.get(k).equals("hub=(other)") && !own.contains(cols.get(k));
      double root = Math.sqrt(copies * (union == Union.FOREIGN_PRIOR_AT_THE_END && foreign ? 1.0 : w0) / PRIOR_VARIANCE);
      a.set(i, k, root / g.viewScale(k));
      if (k == ic) { // the constant's prior row gains (0 - offset) / scale on each re-based column
        a.set(i, it, root * (0 - g.viewOffset(it)) / g.viewScale(it));
        a.set(i, ip, root * (0 - g.viewOffset(ip)) / g.viewScale(ip));
      }
      i++;
    }
    LinearSolverDense<DMatrixRMaj> solver = LinearSolverFactory_DDRM.qr(m, p); // EJML Householder QR
    assertTrue(solver.setA(a.copy()));
    DMatrixRMaj theta = new DMatrixRMaj(p, 1);
    solver.solve(y, theta);
    DMatrixRMaj fit = new DMatrixRMaj(m, 1);
    CommonOps_DDRM.mult(a, theta, fit);
    double rss = 0;
    for (int k = 0; k < m; k++) {
      rss += (y.get(k, 0) - fit.get(k, 0)) * (y.get(k, 0) - fit.get(k, 0));
    }
    double s = Math.sqrt(rss / (n - p));
    QRDecomposition<DMatrixRMaj> qr = DecompositionFactory_DDRM.qr(m, p); // EJML QR: R of the weighted rows
    assertTrue(qr.decompose(a.copy()));
    DMatrixRMaj rinv = new DMatrixRMaj(p, p);
    assertTrue(CommonOps_DDRM.invert(qr.getR(null, true), rinv));
    double[] w = new double[p];
    double[] se = new double[p];
    g.view().weights(w);
    g.view().standardErrors(se);
    double d = 0;
    double norm = 0;
    double worstSe = 0;
    for (int j = 0; j < p; j++) {
      d += (w[j] - theta.get(j, 0)) * (w[j] - theta.get(j, 0));
      norm += theta.get(j, 0) * theta.get(j, 0);
      double sum = 0;
      for (int k = 0; k < p; k++) {
        sum += rinv.get(j, k) * rinv.get(j, k);
      }
      double ref = s * Math.sqrt(sum);
      worstSe = Math.max(worstSe, Math.abs(se[j] - ref) / ref);
    }
    return new double[] {Math.sqrt(d / norm), worstSe};
  }

  /** Per input offset of each partition, how many outputs (predictions and rejects) it has. */
  static int[][] outputsPerOffset(String bootstrap, String name, int perPartition) throws IOException {
    ObjectMapper m = new ObjectMapper();
    int[][] count = new int[PARTITIONS][perPartition];
    for (String t : new String[] {name + ".predictions", name + ".rejects"}) {
      for (ConsumerRecord<byte[], byte[]> r : KafkaTestSupport.readAll(bootstrap, t)) {
        JsonNode j = m.readTree(r.value());
        count[(int) j.path("source").path("partition").asLong()][(int) j.path("source").path("offset").asLong()]++;
      }
    }
    return count;
  }
}
