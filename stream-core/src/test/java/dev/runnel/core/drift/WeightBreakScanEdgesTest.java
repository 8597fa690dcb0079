package dev.runnel.core.drift;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.Random;
import org.junit.jupiter.api.Test;

/** The scan's edges: off, skipped records, a new layout of the same width, a state without columns, and columns that are not identified. */
class WeightBreakScanEdgesTest {

  @Test
  void offSkipsAndNewLayoutsDropWhatTheyMust() throws IOException {
    WeightBreakScan off = new WeightBreakScan(0, 8, 1e-9);
    assertFalse(off.enabled());
    assertEquals(1e-9, off.threshold());
    for (int i = 0; i < 50; i++) {
      assertFalse(off.observe(new double[] {1, i}, i % 3, 2, 0L), "an off scan names nothing");
    }
    assertFalse(off.hasState(), "an off scan has no state to write");
    WeightBreakScan fresh = new WeightBreakScan(5, 4, 1e-9);
    assertFalse(fresh.hasState(), "nothing seen yet");
    // non-finite targets and rows are skipped: never counted, never a look
    WeightBreakScan a = new WeightBreakScan(5, 4, 1e-9);
    WeightBreakScan b = new WeightBreakScan(5, 4, 1e-9);
    Random rnd = new Random(3);
    for (int i = 0; i < 40; i++) {
      double[] x = {1, rnd.nextGaussian()};
      double y = x[1] + rnd.nextGaussian();
      assertFalse(a.observe(new double[] {1, 2}, Double.NaN, 2, 1L));
      assertFalse(a.observe(new double[] {1, Double.POSITIVE_INFINITY}, 1.0, 2, 1L));
      assertFalse(a.observe(new double[] {Double.NaN, 2}, 1.0, 2, 1L));
      assertEquals(b.observe(x, y, 2, 1L), a.observe(x, y, 2, 1L));
    }
    assertTrue(a.hasState());
    assertArrayEquals(state(b), state(a), "skipped records leave no trace");
    // a new layout of the same width drops the block being filled as well as the kept blocks
    WeightBreakScan c = new WeightBreakScan(5, 4, 1e9);
    WeightBreakScan d = new WeightBreakScan(5, 4, 1e9);
    for (int i = 0; i < 13; i++) {
      c.observe(new double[] {1, i}, i, 2, 1L);
    }
    for (int i = 0; i < 7; i++) {
      double[] x = {1, rnd.nextGaussian()};
      c.observe(x, x[1], 2, 2L);
      d.observe(x, x[1], 2, 2L);
    }
    byte[] sc = state(c);
    byte[] sd = state(d);
    assertArrayEquals(java.util.Arrays.copyOfRange(sd, 16, sd.length), java.util.Arrays.copyOfRange(sc, 16, sc.length),
        "after the counters, the state of a scan that saw only the new layout");
    // a state without columns (too many columns came after looks were made) reads back
    c.observe(new double[WeightBreakScan.MAX_COLUMNS + 1], 1.0, WeightBreakScan.MAX_COLUMNS + 1, 3L);
    assertTrue(c.hasState());
    WeightBreakScan e = new WeightBreakScan(5, 4, 1e9);
    e.readFrom(new DataInputStream(new ByteArrayInputStream(state(c))));
    assertArrayEquals(state(c), state(e));
    assertEquals(c.looks(), e.looks());
  }

  /**
   * A constant beside every level of a one-hot feature: neither the constant nor the levels have a
   * weight the data identify, so none is named, even when the level means move and the threshold is
   * tiny; a numeric column whose weight changes is named (docs/drift.md, "Identifiability").
   */
  @Test
  void columnsThatAreNotIdentifiedAreNeverNamed() {
    WeightBreakScan scan = new WeightBreakScan(300, 2, 1e-6);
    Random rnd = new Random(5);
    boolean named = false;
    for (int i = 0; i < 600; i++) {
      int level = rnd.nextInt(3);
      double v = rnd.nextGaussian();
      double[] x = {1, level == 0 ? 1 : 0, level == 1 ? 1 : 0, level == 2 ? 1 : 0, v};
      double y = (i < 300 ? 1 : 3) * level + (i < 300 ? 1 : 2) * v + 0.1 * rnd.nextGaussian();
      named = scan.observe(x, y, 5, 0L);
    }
    assertTrue(named);
    assertEquals(1, scan.namedCount(), "only the numeric column");
    assertEquals(4, scan.namedColumn(0));
  }

  private static byte[] state(WeightBreakScan s) throws IOException {
    ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    s.writeTo(new DataOutputStream(bytes));
    return bytes.toByteArray();
  }
}
