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
   * Columns added or removed drop the kept blocks (docs/drift.md): after a layout of another width
   * the scan starts over in the new width, never comparing blocks across layouts. Widening from 2
   * to 3 columns mid-block and then a break in the new column: the scan looks, names the new
   * column after the break, and agrees bit for bit with a scan that saw only the new layout's
   * records; narrowing back to 2 columns starts over again the same way.
   */
  @Test
  void aLayoutOfAnotherWidthStartsOverInTheNewWidth() throws IOException {
    WeightBreakScan c = new WeightBreakScan(50, 4, 4.0);
    Random rnd = new Random(21);
    for (int i = 0; i < 130; i++) { // two blocks and part of a third, in 2 columns
      double v = rnd.nextGaussian();
      c.observe(new double[] {1, v}, 1 + 2 * v + 0.1 * rnd.nextGaussian(), 2, 1L);
    }
    long looksBefore = c.looks();
    assertEquals(1, looksBefore, "one look at the second block");
    WeightBreakScan d = new WeightBreakScan(50, 4, 4.0);
    int firstNamed = -1;
    for (int i = 0; i < 400; i++) { // 3 columns; the new column's weight moves from 1 to 3 at record 200
      double v = rnd.nextGaussian();
      double u = rnd.nextGaussian();
      double[] x = {1, v, u};
      double y = 1 + 2 * v + (i < 200 ? 1 : 3) * u + 0.1 * rnd.nextGaussian();
      boolean nd = d.observe(x, y, 3, 2L);
      assertEquals(nd, c.observe(x, y, 3, 2L), "record " + i);
      if (nd && firstNamed < 0) {
        firstNamed = i;
        assertEquals(2, c.namedColumn(0), "the new column is named first");
        assertEquals(d.namedScore(0), c.namedScore(0), 0.0);
      }
      assertEquals(d.filledBlocks(), c.filledBlocks(), "record " + i);
    }
    assertTrue(firstNamed >= 200 && firstNamed < 300, "named after the break: " + firstNamed);
    assertEquals(d.looks(), c.looks() - looksBefore, "the looks since the new layout");
    byte[] sc = state(c);
    byte[] sd = state(d);
    assertArrayEquals(java.util.Arrays.copyOfRange(sd, 16, sd.length), java.util.Arrays.copyOfRange(sc, 16, sc.length),
        "after the counters, the state of a scan that saw only the new layout");
    // back to 2 columns: the scan starts over once more, in 2 columns
    WeightBreakScan e = new WeightBreakScan(50, 4, 4.0);
    for (int i = 0; i < 120; i++) {
      double v = rnd.nextGaussian();
      double[] x = {1, v};
      double y = 1 + 2 * v + 0.1 * rnd.nextGaussian();
      assertEquals(e.observe(x, y, 2, 3L), c.observe(x, y, 2, 3L));
    }
    assertEquals(2, c.filledBlocks());
    byte[] s2 = state(c);
    byte[] se = state(e);
    assertArrayEquals(java.util.Arrays.copyOfRange(se, 16, se.length), java.util.Arrays.copyOfRange(s2, 16, s2.length));
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
