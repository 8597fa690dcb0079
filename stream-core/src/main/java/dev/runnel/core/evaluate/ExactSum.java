package dev.runnel.core.evaluate;

import java.math.BigDecimal;
import java.util.Arrays;

/**
 * The exact sum of doubles, rounded once when read: the running sum is kept as a few
 * non-overlapping partial sums whose total is exactly the sum of the values added (Shewchuk's
 * error-free transformation: for a + b rounded to hi, (a + b) − hi is a double and is kept; common
 * practice, the method of Python's {@code math.fsum}). The result does not depend on the order in
 * which the values were added, and sums of disjoint parts merge into exactly the sum of the whole
 * ({@link #add(ExactSum)}). One writer thread.
 *
 * <p>A non-finite value, or a sum past the largest double, makes the sum infinite or NaN as plain
 * addition would.
 */
final class ExactSum {

  private double[] partials = new double[4];
  private int n;
  /** The sum of non-finite values and overflows (0 while there is none). */
  private double special;

  /** Adds {@code x} exactly. */
  void add(double x) {
    if (!Double.isFinite(x)) {
      special += x;
      return;
    }
    int i = 0;
    for (int j = 0; j < n; j++) {
      double y = partials[j];
      if (Math.abs(x) < Math.abs(y)) {
        double t = x;
        x = y;
        y = t;
      }
      double hi = x + y;
      if (!Double.isFinite(hi)) {
        special += hi; // past the largest double: the sum is infinite either way
        return;
      }
      double lo = y - (hi - x);
      if (lo != 0.0) {
        partials[i++] = lo;
      }
      x = hi;
    }
    if (i == partials.length) {
      partials = Arrays.copyOf(partials, 2 * partials.length);
    }
    partials[i++] = x;
    n = i;
  }

  /** Adds everything added to {@code other} exactly (other not modified). */
  void add(ExactSum other) {
    for (int j = 0; j < other.n; j++) {
      add(other.partials[j]);
    }
    if (other.special != 0.0 || Double.isNaN(other.special)) {
      special += other.special;
    }
  }

  /** The exact sum, as a decimal (not rounded). Allocates. */
  BigDecimal exact() {
    BigDecimal s = BigDecimal.ZERO;
    for (int j = 0; j < n; j++) {
      s = s.add(new BigDecimal(partials[j]));
    }
    return s;
  }

  /** The exact sum rounded once to the nearest double (ties to even). Allocates. */
  double value() {
    if (special != 0.0 || Double.isNaN(special)) {
      return special;
    }
    return n == 0 ? 0.0 : n == 1 ? partials[0] : exact().doubleValue();
  }
}
