package dev.runnel.core.record;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.LinkedHashMap;
import java.util.Map;
import org.junit.jupiter.api.Test;

/**
 * A reused record forgets what it held (its javadoc: {@code clear} makes every field absent): a
 * text read as a String before {@code clear} or before the decoder writes new chars in place must
 * not come back, a field never set reads as no text, and a flag reads what was set.
 */
class EventRecordStateTest {

  private static RecordSchema schema() {
    Map<String, FieldType> f = new LinkedHashMap<>();
    f.put("hub", FieldType.TEXT);
    f.put("fast", FieldType.FLAG);
    return new RecordSchema(f);
  }

  @Test
  void aFieldNeverSetHasNoText() {
    EventRecord r = new EventRecord(schema());
    assertNull(r.text(0));
    assertEquals(-1, r.textLength(0));
    assertFalse(r.present(0));
  }

  @Test
  void clearForgetsATextReadAsAString() {
    EventRecord r = new EventRecord(schema());
    r.setText(0, "hub-7");
    assertEquals("hub-7", r.text(0));
    r.clear();
    assertFalse(r.present(0));
    assertNull(r.text(0), "a cleared field has no text");
    // the decoder's path: chars in place, then the length
    char[] b = r.textBuffer(0, 5);
    "hub-9".getChars(0, 5, b, 0);
    r.setTextLength(0, 5);
    assertEquals("hub-9", r.text(0));
  }

  @Test
  void charsWrittenInPlaceReplaceATextReadBefore() {
    EventRecord r = new EventRecord(schema());
    r.setText(0, "hub-1");
    assertEquals("hub-1", r.text(0)); // held as a String
    char[] b = r.textBuffer(0, 6);
    "hub-22".getChars(0, 6, b, 0);
    r.setTextLength(0, 6);
    assertEquals("hub-22", r.text(0));
    assertEquals(6, r.textLength(0));
  }

  @Test
  void aFlagReadsWhatWasSet() {
    EventRecord r = new EventRecord(schema());
    r.setFlag(1, false);
    assertTrue(r.present(1));
    assertFalse(r.flag(1));
    r.setFlag(1, true);
    assertTrue(r.flag(1));
  }
}
