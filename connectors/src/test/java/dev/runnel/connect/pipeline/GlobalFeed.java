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
 * prices whose scalers differ by partition; the union ridge solution by EJML's QR (as stream-core's
 * {@code GlobalReferenceTest}); the partitions' states read from {@code <name>.state}.
 *
 * <p>No forgetting: with forgetting by event time, the prior of a column a partition first learns
 * from another partition's share starts decaying when that share is folded, which depends on when
 * the share consumer read it, so two runs agree on the data's information exactly but on that
 * prior only approximately (docs/operations.md, "Scaling"). Without forgetting every prior row
 * weighs the same whenever it came, and every run's views are the same problem.
 */
final class GlobalFeed {

  static final int PARTITIONS = 4;
  static final double PRIOR_VARIANCE = 4.0;
  static final int SHARE_EVERY = 50;

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
        """, name, topic, PRIOR_VARIANCE, SHARE_EVERY, bootstrap);
  }

  static PipelineConfig config(String name, String topic, String bootstrap) {
    return ConfigLoader.parse(yaml(name, topic, bootstrap), name + ".yaml");
  }

  /** One record as produced. */
  record Rec(int part, String hub, double temp, double price, double y) { }

  /** Per partition, {@code perPartition} JSON lines (a multiple of {@link #SHARE_EVERY}: the last record makes the last share). */
  static List<List<String>> lines(long seed, int perPartition, List<Rec> recs) {
    Random rnd = new Random(seed);
    List<List<String>> out = new ArrayList<>();
    long t0 = Instant.parse("2026-11-02T00:00:00Z").toEpochMilli();
    for (int p = 0; p < PARTITIONS; p++) {
      List<String> mine = new ArrayList<>();
      for (int i = 0; i < perPartition; i++) {
        long t = t0 + 60_000L * i + 1000L * p;
        String hub = p <= 1 && rnd.nextDouble() < 0.25 ? "H-shared" : "H" + p + "-" + rnd.nextInt(3);
        double temp = 5 + 5 * p + (2 + p) * rnd.nextGaussian();
        double price = 0.2 + 0.05 * p + 0.03 * rnd.nextGaussian();
        double y = 30 + (hub.hashCode() % 5) - 0.4 * temp - 20 * price + rnd.nextGaussian();
        recs.add(new Rec(p, hub, temp, price, y));
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

  /** Every partition learned its records and folded every other partition's last share. */
  static boolean synced(PipelineStep[] steps, int perPartition) {
    long shares = perPartition / SHARE_EVERY;
    for (int p = 0; p < PARTITIONS; p++) {
      if (steps[p] == null || steps[p].trained() != perPartition) {
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

  /** The same feed through stream-core alone, without Kafka: every share folded by every other partition at the end. */
  static PipelineStep[] uninterrupted(PipelineConfig cfg, List<List<String>> lines) {
    PipelineStep[] steps = new PipelineStep[PARTITIONS];
    List<byte[]> shares = new ArrayList<>();
    PipelineStep.Sink none = new PipelineStep.Sink() {
      @Override public void prediction(Prediction p, EventRecord r) { }
      @Override public void reject(RejectReason reason, String detail) { throw new AssertionError(reason + ": " + detail); }
      @Override public void snapshotDue() { }
    };
    for (int p = 0; p < PARTITIONS; p++) {
      steps[p] = new PipelineStep(cfg, p);
      long off = 0;
      for (String line : lines.get(p)) {
        byte[] b = line.getBytes(StandardCharsets.UTF_8);
        steps[p].process(b, 0, b.length, 0L, p, off++, none);
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

  /**
   * Checks one view against the weighted ridge solution over the union of every partition's
   * records, in the view's columns and bases, solved from scratch by EJML's QR least squares (EJML
   * as reference, as stream-core's GlobalReferenceTest): each prior row {@code 1/prior_variance}
   * once, stated in the basis {@code (0, 1)} every column starts in and re-based to the view's.
   *
   * @param priorCopies how many times the prior counts (1: right; more: a negative control)
   * @return {weights' norm-wise relative difference, standard errors' largest relative difference}
   */
  static double[] againstUnion(GlobalModel g, List<Rec> recs, int priorCopies) {
    List<String> cols = g.viewColumns();
    int p = cols.size();
    int ic = g.viewIndex("constant");
    int it = g.viewIndex("temperature_c");
    int ip = g.viewIndex("price");
    assertTrue(ic >= 0 && it >= 0 && ip >= 0, "columns: " + cols);
    int m = recs.size() + p;
    DMatrixRMaj a = new DMatrixRMaj(m, p);
    DMatrixRMaj y = new DMatrixRMaj(m, 1);
    int i = 0;
    for (Rec r : recs) {
      a.set(i, ic, 1.0);
      a.set(i, it, (r.temp() - g.viewOffset(it)) / g.viewScale(it));
      a.set(i, ip, (r.price() - g.viewOffset(ip)) / g.viewScale(ip));
      int h = g.viewIndex("hub=" + r.hub());
      assertTrue(h >= 0, "every view has hub=" + r.hub() + ": " + cols);
      a.set(i, h, 1.0);
      y.set(i, 0, r.y());
      i++;
    }
    double root = Math.sqrt(priorCopies / PRIOR_VARIANCE);
    for (int k = 0; k < p; k++) {
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
    double s = Math.sqrt(rss / (recs.size() - p));
    QRDecomposition<DMatrixRMaj> qr = DecompositionFactory_DDRM.qr(m, p); // EJML QR: R of the rows
    assertTrue(qr.decompose(a.copy()));
    DMatrixRMaj rinv = new DMatrixRMaj(p, p);
    assertTrue(CommonOps_DDRM.invert(qr.getR(null, true), rinv));
    double[] w = new double[p];
    double[] se = new double[p];
    g.view().weights(w);
    g.view().standardErrors(se);
    double d = 0;
    double n = 0;
    double worstSe = 0;
    for (int j = 0; j < p; j++) {
      d += (w[j] - theta.get(j, 0)) * (w[j] - theta.get(j, 0));
      n += theta.get(j, 0) * theta.get(j, 0);
      double sum = 0;
      for (int k = 0; k < p; k++) {
        sum += rinv.get(j, k) * rinv.get(j, k);
      }
      double ref = s * Math.sqrt(sum);
      worstSe = Math.max(worstSe, Math.abs(se[j] - ref) / ref);
    }
    return new double[] {Math.sqrt(d / n), worstSe};
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
