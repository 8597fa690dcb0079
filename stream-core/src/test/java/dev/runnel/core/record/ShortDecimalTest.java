package dev.runnel.core.record;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Random;
import org.junit.jupiter.api.Test;

/** The decoder's allocation-free number fast path against {@link Double#parseDouble} as reference. */
class ShortDecimalTest {

  private static double parse(String s) {
    char[] c = ("xx" + s + "yy").toCharArray();
    return JsonRecordDecoder.parseShortDecimal(c, 2, s.length());
  }

  @Test
  void shortDecimalsGiveTheSameBitsAsDoubleParseDouble() {
    Random r = new Random(11);
    int handled = 0;
    for (int k = 0; k < 200_000; k++) {
      int digits = 1 + r.nextInt(15);
      StringBuilder b = new StringBuilder();
      if (r.nextBoolean()) b.append('-');
      int point = r.nextInt(digits + 1);
      for (int d = 0; d < digits; d++) {
        if (d == point && d > 0) b.append('.');
        b.append((char) ('0' + r.nextInt(10)));
      }
      if (r.nextInt(4) == 0) b.append(r.nextBoolean() ? 'e' : 'E').append(r.nextBoolean() ? "-" : "").append(r.nextInt(30));
      String s = b.toString();
      double got = parse(s);
      if (!Double.isNaN(got)) {
        handled++;
        // Double.parseDouble (the JDK's correctly rounded parser) as reference
        assertEquals(Double.doubleToRawLongBits(Double.parseDouble(s)), Double.doubleToRawLongBits(got), s);
      }
    }
    assertTrue(handled > 150_000, "most short decimals take the fast path: " + handled);
  }

  @Test
  void longOrOddTextIsLeftToTheGeneralParser() {
    for (String s : new String[] {"1234567890123456", "1e23", "1e-23", "NaN", "-", ".", "1e", "--1", "1.2.3", "Infinity", ""}) {
      assertTrue(Double.isNaN(parse(s)), s);
    }
    assertEquals(Double.doubleToRawLongBits(-0.0), Double.doubleToRawLongBits(parse("-0.0")));
    assertEquals(0.162, parse("0.162"));
    assertEquals(35.0, parse("35"));
  }
}
