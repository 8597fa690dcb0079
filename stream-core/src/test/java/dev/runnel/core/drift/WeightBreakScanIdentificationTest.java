package dev.runnel.core.drift;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Only a column whose weight the data identify is tested (the class's "Identifiability"): here the
 * identification test alone decides. Column x2 repeats x1 up to a jitter of 1e-4 (a reading taken
 * twice), so both have data and a positive variance, and the fit of each stretch is well defined,
 * but the split of their joint weight between them is not: in the equilibrated basis the smallest
 * eigenvalue of {@code XᵀX} is about {@code δ²/2 = 5e-9}, so {@code ε·[B + εI]⁻¹_jj ≈ ε·½/(5e-9 + ε)},
 * about 0.08, far above the bound 1e-3 (the eigenvalue of the 2×2 block {@code [[1, c], [c, 1]]},
 * {@code 1 − c} with {@code c ≈ 1 − δ²/2}, common practice). The weight of x1 then jumps by 5, and
 * that of the independent column x3 by 1: each look may name x3 only. Without the identification
 * test, x1's estimates differ between the stretches by about 5 with a standard error near
 * {@code σ/(δ√n) ≈ 0.07}, a score of about 50, and it would be named.
 */
class WeightBreakScanIdentificationTest {

  static final int BLOCK = 200;
  static final double JITTER = 1e-4;
  static final double NOISE = 1e-4;

  @Test
  void aColumnRepeatingAnotherUpToAJitterIsNotNamedWhileAnIdentifiedOneIs() {
    for (long seed = 1; seed <= 3; seed++) {
      WeightBreakScan scan = new WeightBreakScan(BLOCK, 2, 4.0);
      Random rnd = new Random(seed);
      double[] x = new double[4];
      int looksThatNamed = 0;
      for (int i = 0; i < 6 * BLOCK; i++) {
        double x1 = 3.0 + rnd.nextGaussian();
        double x3 = rnd.nextGaussian();
        x[0] = 1.0;
        x[1] = x1;
        x[2] = x1 + JITTER * rnd.nextGaussian();
        x[3] = x3;
        boolean after = i >= 3 * BLOCK;
        double y = 0.5 + (after ? 7.0 : 2.0) * x1 + (after ? 2.0 : 1.0) * x3 + NOISE * rnd.nextGaussian();
        if (scan.observe(x, y, 4, 1L)) {
          looksThatNamed++;
          for (int k = 0; k < scan.namedCount(); k++) {
            int j = scan.namedColumn(k);
            assertTrue(j != 1 && j != 2, "seed " + seed + ", record " + (i + 1) + ": column " + j
                + " is not identified (it repeats another up to 1e-4) and must not be named; score " + scan.namedScore(k));
          }
          // the identified column whose weight moved from 1 to 2 is named, in the right direction
          boolean x3Named = false;
          for (int k = 0; k < scan.namedCount(); k++) {
            if (scan.namedColumn(k) == 3) {
              x3Named = true;
              assertEquals(1.0, scan.namedBefore(k), 0.01, "x3 before");
              assertEquals(2.0, scan.namedAfter(k), 0.01, "x3 after");
            }
          }
          assertTrue(x3Named, "seed " + seed + ": a look named columns without x3");
        }
      }
      assertEquals(1, looksThatNamed, "seed " + seed + ": one look names the break of x3 (the kept blocks are then dropped)");
    }
  }
}
