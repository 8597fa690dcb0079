package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.lang.management.ManagementFactory;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The error metrics of settled forecasts by horizon bucket, against a plain computation over a
 * list; bucket edges; the per-entity cap with what it leaves out counted (and bounded memory for a
 * million entities); the checkpoint round trip; and no allocation once warm.
 */
class HorizonMetricsTest {

  static final long H = 3_600_000L;
  static final long[] BOUNDS = {H, 6 * H, 24 * H, 168 * H};

  /** One settled forecast as the reference keeps it. */
  record Obs(String entity, long horizon, double error, boolean covered) { }

  static char[] key(String entity) {
    // as the step builds it: the length in two chars, then the chars
    char[] k = new char[entity.length() + 2];
    k[0] = (char) (entity.length() >>> 16);
    k[1] = (char) entity.length();
    entity.getChars(0, entity.length(), k, 2);
    return k;
  }

  static void add(HorizonMetrics m, Obs o) {
    char[] k = key(o.entity());
    m.add(m.entity(k, k.length), o.horizon(), o.error(), o.covered());
  }

  /** The reference bucket: a plain reading of "each bound is an upper bound, inclusive". */
  static int referenceBucket(long h) {
    int b = 0;
    while (b < BOUNDS.length && h > BOUNDS[b]) {
      b++;
    }
    return b;
  }

  /** Count, MAE, RMSE, bias, coverage and the faded four by a plain loop over the list (common practice definitions). */
  static double[] reference(List<Obs> all, String entity, int bucket, double halfLife) {
    double decay = StrictMath.pow(2.0, -1.0 / halfLife);
    long n = 0;
    double abs = 0;
    double sq = 0;
    double err = 0;
    long cov = 0;
    List<Obs> cell = new ArrayList<>();
    for (Obs o : all) {
      if ((entity == null || o.entity().equals(entity)) && referenceBucket(o.horizon()) == bucket) {
        cell.add(o);
      }
    }
    for (Obs o : cell) {
      n++;
      abs += Math.abs(o.error());
      sq += o.error() * o.error();
      err += o.error();
      cov += o.covered() ? 1 : 0;
    }
    // the fading window, as a weighted mean with weight 2^(-i/h) for the i-th most recent
    double w = 0;
    double wa = 0;
    double ws = 0;
    double we = 0;
    double wc = 0;
    for (int i = 0; i < cell.size(); i++) {
      Obs o = cell.get(cell.size() - 1 - i);
      double f = StrictMath.pow(decay, i);
      w += f;
      wa += f * Math.abs(o.error());
      ws += f * o.error() * o.error();
      we += f * o.error();
      wc += f * (o.covered() ? 1 : 0);
    }
    return new double[] {n, abs / n, Math.sqrt(sq / n), err / n, (double) cov / n, wa / w, Math.sqrt(ws / w), we / w, wc / w};
  }

  static double[] of(Snapshot.Metrics m) {
    return new double[] {m.count(), m.mae(), m.rmse(), m.bias(), m.coverage(), m.recentMae(), m.recentRmse(),
        m.recentBias(), m.recentCoverage()};
  }

  static List<Obs> randomObs(long seed, int n, int entities) {
    Random rnd = new Random(seed);
    List<Obs> out = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      long h = switch (rnd.nextInt(6)) {
        case 0 -> BOUNDS[rnd.nextInt(BOUNDS.length)]; // exactly on a bound
        case 1 -> BOUNDS[rnd.nextInt(BOUNDS.length)] + 1; // just past one
        case 2 -> -rnd.nextInt(3) * H; // a request whose target time had passed
        default -> (long) (rnd.nextDouble() * 200 * H);
      };
      out.add(new Obs("hub-" + rnd.nextInt(entities), h, 5 * rnd.nextGaussian() + 0.5, rnd.nextInt(10) != 0));
    }
    return out;
  }

  @Test
  void everyBucketOverallAndPerEntityEqualsAPlainLoopOverTheSettledList() {
    List<Obs> obs = randomObs(7, 3000, 6);
    HorizonMetrics m = new HorizonMetrics(BOUNDS, 50, 100);
    for (Obs o : obs) {
      add(m, o);
    }
    assertEquals(5, m.buckets());
    assertEquals(6, m.entities());
    for (int b = 0; b < m.buckets(); b++) {
      double[] want = reference(obs, null, b, 50);
      assertTrue(want[0] > 50, "the feed fills bucket " + b);
      assertArrayEquals(want, of(m.metrics(-1, b)), 1e-9, "overall, bucket " + b);
      for (int e = 0; e < m.entities(); e++) {
        String name = Snapshot.entityValues(m.entityKey(e)).get(0);
        assertArrayEquals(reference(obs, name, b, 50), of(m.metrics(e, b)), 1e-9, name + ", bucket " + b);
      }
    }
    // entities are listed in the order they first settled a forecast
    List<String> firstSeen = new ArrayList<>();
    for (Obs o : obs) {
      if (!firstSeen.contains(o.entity())) {
        firstSeen.add(o.entity());
      }
    }
    for (int e = 0; e < m.entities(); e++) {
      assertEquals(firstSeen.get(e), Snapshot.entityValues(m.entityKey(e)).get(0));
    }
  }

  @Test
  void aHorizonExactlyOnABoundFallsInThatBucket_oneMillisecondMoreInTheNext() {
    HorizonMetrics m = new HorizonMetrics(BOUNDS, 10, 10);
    assertEquals(0, m.bucketOf(H), "exactly PT1H: the PT1H bucket");
    assertEquals(1, m.bucketOf(H + 1));
    assertEquals(1, m.bucketOf(6 * H));
    assertEquals(2, m.bucketOf(6 * H + 1));
    assertEquals(3, m.bucketOf(168 * H), "exactly P7D");
    assertEquals(4, m.bucketOf(168 * H + 1), "beyond the largest bound: the open bucket");
    assertEquals(0, m.bucketOf(0), "a horizon of 0");
    assertEquals(0, m.bucketOf(-5 * H), "a target time already passed");
    assertEquals(Long.MAX_VALUE, m.bound(4));
    // and the values land there
    char[] k = key("A");
    int e = m.entity(k, k.length);
    m.add(e, 6 * H, 2.0, true);
    m.add(e, 6 * H + 1, -4.0, false);
    assertEquals(1, m.metrics(-1, 1).count());
    assertEquals(2.0, m.metrics(-1, 1).bias());
    assertEquals(1, m.metrics(e, 2).count());
    assertEquals(-4.0, m.metrics(e, 2).bias());
    assertEquals(0.0, m.metrics(e, 2).coverage());
    assertTrue(Double.isNaN(m.metrics(e, 0).mae()), "an empty bucket has no value");
  }

  @Test
  void entitiesBeyondTheCapCountOverallOnlyAndAreCounted() {
    List<Obs> obs = randomObs(11, 2000, 40);
    HorizonMetrics m = new HorizonMetrics(BOUNDS, 50, 10);
    for (Obs o : obs) {
      add(m, o);
    }
    assertEquals(10, m.entities());
    List<String> kept = new ArrayList<>();
    for (int e = 0; e < 10; e++) {
      kept.add(Snapshot.entityValues(m.entityKey(e)).get(0));
    }
    long notKept = obs.stream().filter(o -> !kept.contains(o.entity())).count();
    assertTrue(notKept > 500, "most of the feed is beyond the cap: " + notKept);
    assertEquals(notKept, m.settledNotKept());
    long overall = 0;
    for (int b = 0; b < m.buckets(); b++) {
      overall += m.metrics(-1, b).count();
      assertArrayEquals(reference(obs, null, b, 50), of(m.metrics(-1, b)), 1e-9, "overall counts every entity");
    }
    assertEquals(obs.size(), overall);
    // with a cap of 0 only the overall table is kept
    HorizonMetrics none = new HorizonMetrics(BOUNDS, 50, 0);
    for (Obs o : obs) {
      add(none, o);
    }
    assertEquals(0, none.entities());
    assertEquals(obs.size(), none.settledNotKept());
  }

  @Test
  void aMillionEntitiesStayWithinTheCap() {
    HorizonMetrics m = new HorizonMetrics(BOUNDS, 50, 100);
    char[] k = new char[12];
    for (int i = 0; i < 1_000_000; i++) {
      String s = Integer.toString(i);
      k[0] = 0;
      k[1] = (char) s.length();
      s.getChars(0, s.length(), k, 2);
      m.add(m.entity(k, s.length() + 2), i % (200 * H), 1.0, true);
    }
    assertEquals(100, m.entities());
    assertEquals(100, m.entityCapacity(), "the per-entity arrays stop growing at the cap");
    assertEquals(1_000_000 - 100, m.settledNotKept());
  }

  @Test
  void aCheckpointRoundTripWritesTheSameBytesAndContinuesIdentically() throws IOException {
    List<Obs> obs = randomObs(3, 4000, 30);
    HorizonMetrics whole = new HorizonMetrics(BOUNDS, 20, 12);
    HorizonMetrics first = new HorizonMetrics(BOUNDS, 20, 12);
    for (int i = 0; i < obs.size(); i++) {
      add(whole, obs.get(i));
      if (i < 1700) {
        add(first, obs.get(i));
      }
    }
    byte[] cp = bytes(first);
    HorizonMetrics second = new HorizonMetrics(BOUNDS, 20, 12);
    assertTrue(second.readFrom(new DataInputStream(new ByteArrayInputStream(cp))));
    assertArrayEquals(cp, bytes(second), "a restored table writes what it read");
    for (int i = 1700; i < obs.size(); i++) {
      add(second, obs.get(i));
    }
    assertArrayEquals(bytes(whole), bytes(second), "restored and continued equals uninterrupted");
    // a changed bucket list starts the tables afresh
    HorizonMetrics other = new HorizonMetrics(new long[] {H, 24 * H}, 20, 12);
    assertFalse(other.readFrom(new DataInputStream(new ByteArrayInputStream(cp))));
    assertEquals(0, other.entities());
    assertEquals(0, other.metrics(-1, 0).count());
    assertArrayEquals(bytes(new HorizonMetrics(new long[] {H, 24 * H}, 20, 12)), bytes(other));
  }

  static byte[] bytes(HorizonMetrics m) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    m.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  @Test
  void warmUpdatesAllocateNothing() {
    com.sun.management.ThreadMXBean bean = (com.sun.management.ThreadMXBean) ManagementFactory.getThreadMXBean();
    HorizonMetrics m = new HorizonMetrics(BOUNDS, 50, 50);
    char[][] keys = new char[200][];
    for (int i = 0; i < keys.length; i++) {
      keys[i] = key("hub-" + i);
    }
    long[] before = {bean.getCurrentThreadAllocatedBytes()};
    for (int round = 0; round < 3; round++) {
      if (round == 2) {
        before[0] = bean.getCurrentThreadAllocatedBytes();
      }
      for (int i = 0; i < 20_000; i++) {
        char[] k = keys[i % keys.length]; // 50 kept, 150 beyond the cap
        m.add(m.entity(k, k.length), (i % 300) * H, i % 7 - 3.0, i % 5 != 0);
      }
    }
    long allocated = bean.getCurrentThreadAllocatedBytes() - before[0];
    // a Snapshot.Metrics or a char[] per update alone would be 20000 * 24 bytes or more
    assertTrue(allocated < 4_096, "bytes allocated by 20000 warm updates: " + allocated);
  }
}
