// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
package dev.runnel.demo;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;

import org.junit.jupiter.api.Test;

class JsonTextTest {
  // Expected strings worked out by hand (rounding half away from zero, common practice).
  @Test void fixed_padsAndSigns() {
    assertEquals("12.0", JsonText.fixed(12.0, 1));
    assertEquals("-0.3", JsonText.fixed(-0.3, 1));
    assertEquals("0.0", JsonText.fixed(-0.04, 1));
    assertEquals("0.050", JsonText.fixed(0.05, 3));
    assertEquals("45.32", JsonText.fixed(7.4 * 9.0 / 5.0 + 32.0, 2));
    assertEquals("-12.35", JsonText.fixed(-12.346, 2));
    assertEquals("7", JsonText.fixed(7.4, 0));
  }

  @Test void compact_dropsTrailingZerosButKeepsOne() {
    assertEquals("40.0", JsonText.compact(40.0, 6));
    assertEquals("0.35", JsonText.compact(0.35, 6));
    assertEquals("-0.015", JsonText.compact(-0.015, 6));
  }

  @Test void quote_escapes() {
    assertEquals("\"a\\\"b\\\\c\\u000a\"", JsonText.quote("a\"b\\c\n"));
  }

  @Test void fixed_rejectsNonFiniteAndBadDecimals() {
    assertThrows(IllegalArgumentException.class, () -> JsonText.fixed(Double.NaN, 1));
    assertThrows(IllegalArgumentException.class, () -> JsonText.fixed(1.0, 7));
  }
}
