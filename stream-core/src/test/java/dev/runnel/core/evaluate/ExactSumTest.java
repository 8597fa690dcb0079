package dev.runnel.core.evaluate;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.math.BigDecimal;
import java.util.ArrayList;
import java.util.Collections;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * {@link ExactSum} against java.math.BigDecimal, whose addition of doubles' exact values is exact
 * and whose doubleValue() rounds to nearest (its javadoc; Double.parseDouble of the decimal).
 */
class ExactSumTest {

  /** Values of wildly different sizes and signs, with cancellations a plain double sum loses. */
  static List<Double> awkward(long seed, int n) {
    Random r = new Random(seed);
    List<Double> xs = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      double x = r.nextGaussian() * Math.pow(10, r.nextInt(40) - 20);
      xs.add(x);
      if (r.nextInt(4) == 0) {
        xs.add(-x); // cancels exactly
      }
      if (r.nextInt(5) == 0) {
        xs.add(1e16);
        xs.add(1.0);
        xs.add(-1e16);
      }
    }
    return xs;
  }

  @Test
  void sum_isTheExactSumRoundedOnce_inAnyOrder() {
    for (long seed = 1; seed <= 20; seed++) {
      List<Double> xs = awkward(seed, 500);
      BigDecimal exact = BigDecimal.ZERO;
      double naive = 0;
      ExactSum s = new ExactSum();
      for (double x : xs) {
        exact = exact.add(new BigDecimal(x));
        naive += x;
        s.add(x);
      }
      assertEquals(0, exact.compareTo(s.exact()), "seed " + seed);
      assertEquals(exact.doubleValue(), s.value(), 0.0, "seed " + seed);
      Collections.shuffle(xs, new Random(seed));
      ExactSum t = new ExactSum();
      for (double x : xs) {
        t.add(x);
      }
      assertEquals(Double.doubleToLongBits(s.value()), Double.doubleToLongBits(t.value()), "order, seed " + seed);
      if (seed == 1) {
        // the data are awkward enough that a plain sum goes wrong (else this test proves little)
        assertTrue(naive != exact.doubleValue(), "naive " + naive + " exact " + exact.doubleValue());
      }
    }
  }

  @Test
  void partsMerge_intoExactlyTheWhole() {
    List<Double> xs = awkward(7, 2000);
    ExactSum whole = new ExactSum();
    ExactSum[] parts = {new ExactSum(), new ExactSum(), new ExactSum()};
    for (int i = 0; i < xs.size(); i++) {
      whole.add(xs.get(i));
      parts[i % 3].add(xs.get(i));
    }
    ExactSum merged = new ExactSum();
    BigDecimal partsExact = BigDecimal.ZERO;
    for (ExactSum p : parts) {
      merged.add(p);
      partsExact = partsExact.add(p.exact());
    }
    assertEquals(0, whole.exact().compareTo(partsExact));
    assertEquals(0, whole.exact().compareTo(merged.exact()));
    assertEquals(whole.value(), merged.value(), 0.0);
  }

  @Test
  void nonFiniteAndOverflow_behaveAsPlainAddition() {
    ExactSum s = new ExactSum();
    assertEquals(0.0, s.value(), 0.0);
    s.add(Double.MAX_VALUE);
    s.add(Double.MAX_VALUE);
    assertEquals(Double.POSITIVE_INFINITY, s.value(), 0.0);
    ExactSum n = new ExactSum();
    n.add(1);
    n.add(Double.NaN);
    assertTrue(Double.isNaN(n.value()));
    ExactSum m = new ExactSum();
    m.add(n);
    assertTrue(Double.isNaN(m.value()));
  }
}
