package dev.runnel.core.drift;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The scan compares two stretches only when each holds at least twice as many records as there
 * are columns (2p; the scan's own rule, so that both fits have records to spare beyond their p
 * weights). Two columns (a constant and x), the slope of x moving from 1 to 10, a tiny threshold:
 * the first look that may compare is the first where both stretches hold 2p records, and it names
 * the slope.
 */
class WeightBreakScanShortBlocksTest {

  /** The 1-based record at which the scan first names a column, or -1. */
  private static int firstNamed(int blockRecords, int blocks, int changeAt, int records) {
    WeightBreakScan scan = new WeightBreakScan(blockRecords, blocks, 1e-6);
    Random rnd = new Random(9);
    for (int i = 0; i < records; i++) {
      double x = rnd.nextGaussian();
      double slope = i < changeAt ? 1.0 : 10.0;
      if (scan.observe(new double[] {1, x}, slope * x + 0.01 * rnd.nextGaussian(), 2, 1L)) {
        return i + 1;
      }
    }
    return -1;
  }

  @Test void stretchesOfExactly2pRecordsAreCompared() {
    // blocks of 4 = 2p records, two kept: the look after the second block compares 4 with 4
    assertEquals(8, firstNamed(4, 2, 4, 40), "4 records against 4 (2p each) are compared");
  }

  @Test void stretchesShorterThan2pAreNotCompared() {
    // blocks of 3 records, two kept: every stretch holds 3 < 2p records, nothing is ever compared
    assertEquals(-1, firstNamed(3, 2, 3, 60), "3 records against 3 are never compared");
    // four kept: after 3 blocks the newest block (3 records) against the two before (6) is not
    // compared; after 4 blocks the newest two (6) against the two before (6) are
    int at = firstNamed(3, 4, 6, 60);
    assertEquals(12, at, "first named when both stretches hold 2p records");
    assertTrue(at > 9);
  }

  /**
   * A column that is 0 in every record of both stretches (a level not seen lately) has no weight
   * the data identify: it is not named, and it does not keep the other columns from being compared.
   */
  @Test void aColumnWithoutDataInEitherStretchLeavesTheOthersCompared() {
    WeightBreakScan scan = new WeightBreakScan(10, 2, 1e-6);
    Random rnd = new Random(4);
    int at = -1;
    for (int i = 0; i < 40 && at < 0; i++) {
      double x = rnd.nextGaussian();
      double slope = i < 10 ? 1.0 : 10.0;
      if (scan.observe(new double[] {1, x, 0}, slope * x + 0.01 * rnd.nextGaussian(), 3, 1L)) {
        at = i + 1;
      }
    }
    assertEquals(20, at, "the slope's change is named at the first look");
    assertEquals(1, scan.namedColumn(0), "the slope first (the constant may follow at this tiny threshold)");
    for (int k = 0; k < scan.namedCount(); k++) {
      assertTrue(scan.namedColumn(k) != 2, "the column without data is never named");
    }
  }
}
