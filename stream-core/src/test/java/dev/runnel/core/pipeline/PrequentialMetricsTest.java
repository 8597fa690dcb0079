package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The prequential metrics against their definitions, recomputed from the list of errors: plain
 * means over the whole stream, and for the fading window weights {@code 2^(-i/h)} on the i-th most
 * recent error, normalized by their sum (the class's javadoc).
 */
class PrequentialMetricsTest {

  @Test
  void everyMetricMatchesItsDefinition_afterEveryRecord() throws IOException {
    double h = 7.0;
    PrequentialMetrics m = new PrequentialMetrics(h);
    assertTrue(Double.isNaN(m.mae()) && Double.isNaN(m.rmse()) && Double.isNaN(m.bias()) && Double.isNaN(m.coverage())
        && Double.isNaN(m.recentMae()) && Double.isNaN(m.recentRmse()) && Double.isNaN(m.recentBias())
        && Double.isNaN(m.recentCoverage()), "NaN before the first record");
    Random rnd = new Random(17);
    int n = 60;
    double[] e = new double[n];
    boolean[] in = new boolean[n];
    for (int t = 0; t < n; t++) {
      e[t] = 2.0 * rnd.nextGaussian() + (t > 30 ? 1.5 : -0.5);
      in[t] = rnd.nextInt(3) > 0;
      m.add(e[t], in[t]);
      double abs = 0;
      double sq = 0;
      double sum = 0;
      int cov = 0;
      double w = 0;
      double wAbs = 0;
      double wSq = 0;
      double wErr = 0;
      double wCov = 0;
      for (int i = 0; i <= t; i++) {
        abs += Math.abs(e[i]);
        sq += e[i] * e[i];
        sum += e[i];
        cov += in[i] ? 1 : 0;
        double wi = Math.pow(2.0, -(t - i) / h);
        w += wi;
        wAbs += wi * Math.abs(e[i]);
        wSq += wi * e[i] * e[i];
        wErr += wi * e[i];
        wCov += in[i] ? wi : 0;
      }
      int c = t + 1;
      String at = "record " + c;
      assertEquals(c, m.count(), at);
      assertEquals(abs / c, m.mae(), 1e-12, at + " mae");
      assertEquals(Math.sqrt(sq / c), m.rmse(), 1e-12, at + " rmse");
      assertEquals(sum / c, m.bias(), 1e-12, at + " bias");
      assertEquals((double) cov / c, m.coverage(), 1e-15, at + " coverage");
      assertEquals(wAbs / w, m.recentMae(), 1e-12, at + " recent mae");
      assertEquals(Math.sqrt(wSq / w), m.recentRmse(), 1e-12, at + " recent rmse");
      assertEquals(wErr / w, m.recentBias(), 1e-12, at + " recent bias");
      assertEquals(wCov / w, m.recentCoverage(), 1e-12, at + " recent coverage");
    }
    // a restore into a metrics object with state of its own gives the same state
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    m.writeTo(new DataOutputStream(b));
    PrequentialMetrics r = new PrequentialMetrics(h);
    r.add(100.0, false);
    r.readFrom(new DataInputStream(new ByteArrayInputStream(b.toByteArray())));
    ByteArrayOutputStream b2 = new ByteArrayOutputStream();
    r.writeTo(new DataOutputStream(b2));
    assertArrayEquals(b.toByteArray(), b2.toByteArray());
    assertEquals(m.recentCoverage(), r.recentCoverage());
    assertEquals(m.coverage(), r.coverage());
  }

  @Test
  void theHalfLifeMustBePositiveAndFinite() {
    for (double bad : new double[] {0.0, -1.0, Double.NaN, Double.POSITIVE_INFINITY}) {
      IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> new PrequentialMetrics(bad));
      assertTrue(e.getMessage().contains("outputs.metrics_half_life_records"), e.getMessage());
    }
  }
}
