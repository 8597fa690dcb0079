package dev.runnel.connect.text;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertSame;

import org.junit.jupiter.api.Test;

/** Control characters from data never reach a terminal as themselves. */
class TerminalTextTest {

  @Test
  void escapeSequencesBecomeVisibleText() {
    // ESC [ 2 J clears the screen; ESC ] 0 ; title BEL retitles the window (ECMA-48 / xterm, from memory)
    assertEquals("hub=\\x1B[2J\\x1B[H", TerminalText.safe("hub=\u001b[2J\u001b[H"));
    assertEquals("\\x1B]0;owned\\x07", TerminalText.safe("\u001b]0;owned\u0007"));
    assertEquals("a\\x0Ab\\x0Dc\\x09d", TerminalText.safe("a\nb\rc\td"));
    assertEquals("x\\x7Fy\\x9Bz", TerminalText.safe("x\u007fy\u009bz"));
    assertEquals("abc\\u202Edef\\u2066", TerminalText.safe("abc\u202edef\u2066"));
  }

  @Test
  void everyControlCharacterIsReplacedAndNothingElse() {
    for (char c = 0; c < 0x3000; c++) {
      String out = TerminalText.safe("<" + c + ">");
      boolean control = Character.getType(c) == Character.CONTROL; // Unicode category Cc, java.lang.Character
      boolean bidi = (c >= 0x202A && c <= 0x202E) || (c >= 0x2066 && c <= 0x2069);
      if (control || bidi) {
        for (int i = 0; i < out.length(); i++) {
          assertFalse(Character.getType(out.charAt(i)) == Character.CONTROL, "U+" + Integer.toHexString(c) + " -> " + out);
        }
        assertEquals(control && c < 0x100 ? 6 : 8, out.length(), "U+" + Integer.toHexString(c) + " -> " + out);
      } else {
        assertEquals("<" + c + ">", out, "U+" + Integer.toHexString(c) + " is kept");
      }
    }
  }

  @Test
  void plainTextIsReturnedAsIs() {
    String s = "QM-03 Ærø 東京 price_per_kwh -15.541→-26.850";
    assertSame(s, TerminalText.safe(s));
    assertEquals("null", TerminalText.safe(null));
  }
}
