package dev.runnel.connect.report;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import org.junit.jupiter.api.Test;

/** The report's axes: round tick values (1-2-5 steps) and their labels, worked by hand. */
class HtmlReportTest {

  @Test
  void ticksAreOneTwoOrFiveTimesAPowerOfTen() {
    // RMSE from 0 to 2.37 in about 4 steps: raw step 0.5925 -> 1 (0.5 is too small); 0..3
    assertArrayEquals(new double[] {0, 1, 2, 3}, HtmlReport.niceTicks(0, 2.37, 4), 1e-12);
    // 0 to 1.9: raw 0.475 -> 0.5
    assertArrayEquals(new double[] {0, 0.5, 1.0, 1.5, 2.0}, HtmlReport.niceTicks(0, 1.9, 4), 1e-12);
    // a weight from -31.7 to -8.2: raw 5.875 -> 10; -40..0
    assertArrayEquals(new double[] {-40, -30, -20, -10, 0}, HtmlReport.niceTicks(-31.7, -8.2, 4), 1e-12);
    // a narrow band: 0.2031 to 0.2133, raw 0.00255 -> 0.005
    assertArrayEquals(new double[] {0.2, 0.205, 0.21, 0.215}, HtmlReport.niceTicks(0.2031, 0.2133, 4), 1e-12);
    // exact bounds stay: 0..8 in steps of 2
    assertArrayEquals(new double[] {0, 2, 4, 6, 8}, HtmlReport.niceTicks(0, 8, 4), 1e-12);
    for (double[] t : new double[][] {HtmlReport.niceTicks(0, 2.37, 4), HtmlReport.niceTicks(0.2031, 0.2133, 4),
        HtmlReport.niceTicks(-1e-3, 7e5, 4)}) {
      double step = t[1] - t[0];
      double mantissa = step / Math.pow(10, Math.floor(Math.log10(step) + 1e-9));
      assertTrue(Math.abs(mantissa - 1) < 1e-9 || Math.abs(mantissa - 2) < 1e-9 || Math.abs(mantissa - 5) < 1e-9,
          "step " + step);
    }
  }

  @Test
  void labelsHaveTheDecimalsTheStepNeeds() {
    double[] half = HtmlReport.niceTicks(0, 1.9, 4);
    assertEquals("0.0", HtmlReport.tickLabel(half[0], half));
    assertEquals("1.5", HtmlReport.tickLabel(half[3], half));
    double[] fine = HtmlReport.niceTicks(0.2031, 0.2133, 4);
    assertEquals("0.205", HtmlReport.tickLabel(fine[1], fine));
    double[] tens = HtmlReport.niceTicks(-31.7, -8.2, 4);
    assertEquals("-40", HtmlReport.tickLabel(tens[0], tens));
    assertEquals("0", HtmlReport.tickLabel(tens[4], tens));
  }
}
