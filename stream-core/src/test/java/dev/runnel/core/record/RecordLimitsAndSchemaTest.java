package dev.runnel.core.record;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.time.LocalDate;
import java.time.ZoneOffset;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;

/**
 * The record limits' bounds at each documented end (accepted at the end, refused one step past it,
 * with a message naming the bound and the value), the accepted time range against java.time, and
 * the schema's slots, copies and equality. The config loader's tests reach these through a file;
 * these pin them where they are defined.
 */
class RecordLimitsAndSchemaTest {

  private static final RecordLimits D = RecordLimits.DEFAULTS;

  private static void refused(String bound, String value, Runnable make) {
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class, make::run);
    assertTrue(e.getMessage().contains(bound) && e.getMessage().contains(value), e.getMessage());
  }

  @Test
  void eachBoundIsAcceptedAtItsEndsAndRefusedPastThem() {
    // text length 1..1000000
    assertEquals(1, new RecordLimits(1, 64, 1, 1970, 2200).maxTextLength());
    assertEquals(1_000_000, new RecordLimits(1_000_000, 64, 1, 1970, 2200).maxTextLength());
    refused("maxTextLength", "0", () -> new RecordLimits(0, 64, 1, 1970, 2200));
    refused("maxTextLength", "1000001", () -> new RecordLimits(1_000_001, 64, 1, 1970, 2200));
    // record bytes 64..16777216
    assertEquals(64, new RecordLimits(1, 64, 1, 1970, 2200).maxRecordBytes());
    assertEquals(16_777_216, new RecordLimits(1, 16_777_216, 1, 1970, 2200).maxRecordBytes());
    refused("maxRecordBytes", "63", () -> new RecordLimits(1, 63, 1, 1970, 2200));
    refused("maxRecordBytes", "16777217", () -> new RecordLimits(1, 16_777_217, 1, 1970, 2200));
    // magnitude: positive and finite
    assertEquals(Double.MIN_VALUE, new RecordLimits(1, 64, Double.MIN_VALUE, 1970, 2200).maxAbsValue());
    assertEquals(Double.MAX_VALUE, new RecordLimits(1, 64, Double.MAX_VALUE, 1970, 2200).maxAbsValue());
    refused("maxAbsValue", "0.0", () -> new RecordLimits(1, 64, 0.0, 1970, 2200));
    refused("maxAbsValue", "-1.0", () -> new RecordLimits(1, 64, -1.0, 1970, 2200));
    refused("maxAbsValue", "NaN", () -> new RecordLimits(1, 64, Double.NaN, 1970, 2200));
    refused("maxAbsValue", "Infinity", () -> new RecordLimits(1, 64, Double.POSITIVE_INFINITY, 1970, 2200));
    // years 1 <= min <= max <= 9999
    RecordLimits widest = new RecordLimits(1, 64, 1, 1, 9999);
    assertEquals(1, widest.minYear());
    assertEquals(9999, widest.maxYear());
    RecordLimits oneYear = new RecordLimits(1, 64, 1, 2026, 2026);
    assertEquals(2026, oneYear.minYear());
    refused("years", "0..2200", () -> new RecordLimits(1, 64, 1, 0, 2200));
    refused("years", "1970..10000", () -> new RecordLimits(1, 64, 1, 1970, 10_000));
    refused("years", "2027..2026", () -> new RecordLimits(1, 64, 1, 2027, 2026));
  }

  /** The accepted range's instants against java.time's proleptic calendar (java.time, LocalDate). */
  @Test
  void theAcceptedTimeRangeAgreesWithJavaTime() {
    int[][] ranges = {{1970, 2200}, {1, 9999}, {1600, 1600}, {1899, 2100}, {2000, 2000}};
    for (int[] r : ranges) {
      RecordLimits l = new RecordLimits(256, 65536, 1e12, r[0], r[1]);
      long min = LocalDate.of(r[0], 1, 1).atStartOfDay(ZoneOffset.UTC).toInstant().toEpochMilli();
      long end = LocalDate.of(r[1] + 1, 1, 1).atStartOfDay(ZoneOffset.UTC).toInstant().toEpochMilli();
      assertEquals(min, l.minTimeMillis(), "first instant of " + r[0]);
      assertEquals(end, l.endTimeMillis(), "first instant past " + r[1]);
    }
    assertEquals(0L, D.minTimeMillis(), "the default range starts at the epoch");
  }

  private static Map<String, FieldType> fields(Object... nameAndType) {
    Map<String, FieldType> m = new LinkedHashMap<>();
    for (int i = 0; i < nameAndType.length; i += 2) {
      m.put((String) nameAndType[i], (FieldType) nameAndType[i + 1]);
    }
    return m;
  }

  @Test
  void theSchemaKeepsDeclarationOrderAndCopies() {
    RecordSchema s = new RecordSchema(fields("hub", FieldType.TEXT, "kwh", FieldType.NUMBER,
        "at", FieldType.TIME, "fast", FieldType.FLAG));
    assertEquals(4, s.size());
    assertEquals(0, s.slot("hub"));
    assertEquals(3, s.slot("fast"));
    assertEquals(-1, s.slot("Hub"), "names are case-sensitive");
    assertEquals(-1, s.slot("missing"));
    assertEquals("at", s.name(2));
    assertEquals(FieldType.TIME, s.type(2));
    assertEquals(FieldType.NUMBER, s.type(1));
    assertEquals(List.of("hub", "kwh", "at", "fast"), s.names());
    assertEquals(List.of("hub", "kwh", "at", "fast"), List.copyOf(s.fields().keySet()));
    assertEquals(List.of(FieldType.TEXT, FieldType.NUMBER, FieldType.TIME, FieldType.FLAG), List.copyOf(s.fields().values()));
    assertThrows(UnsupportedOperationException.class, () -> s.names().add("x"));
    assertThrows(UnsupportedOperationException.class, () -> s.fields().put("x", FieldType.TEXT));
    assertEquals("{hub=TEXT, kwh=NUMBER, at=TIME, fast=FLAG}", s.toString());
    assertEquals(0, new RecordSchema(Map.of()).size());
  }

  @Test
  void schemasAreEqualWhenNamesTypesAndOrderAre() {
    RecordSchema a = new RecordSchema(fields("hub", FieldType.TEXT, "kwh", FieldType.NUMBER));
    RecordSchema same = new RecordSchema(fields("hub", FieldType.TEXT, "kwh", FieldType.NUMBER));
    assertEquals(a, same);
    assertEquals(a.hashCode(), same.hashCode());
    assertNotEquals(a, new RecordSchema(fields("kwh", FieldType.NUMBER, "hub", FieldType.TEXT)), "order differs");
    assertNotEquals(a, new RecordSchema(fields("hub", FieldType.TEXT, "kwh", FieldType.TEXT)), "type differs");
    assertNotEquals(a, new RecordSchema(fields("hub", FieldType.TEXT, "kWh", FieldType.NUMBER)), "name differs");
    assertFalse(a.equals("{hub=TEXT, kwh=NUMBER}"));
    // the hash mixes names and types (the types alone differ here)
    assertNotEquals(a.hashCode(), new RecordSchema(fields("hub", FieldType.NUMBER, "kwh", FieldType.TEXT)).hashCode());
  }

  @Test
  void aSchemaRefusesAnEmptyNameOrAMissingType() {
    refused("field name", "empty", () -> new RecordSchema(fields("", FieldType.TEXT)));
    refused("field kwh", "type", () -> new RecordSchema(fields("kwh", null)));
    Map<String, FieldType> nullName = new LinkedHashMap<>();
    nullName.put(null, FieldType.TEXT);
    refused("field name", "empty", () -> new RecordSchema(nullName));
  }

  @Test
  void fieldTypesAndTimeFormatsReadTheirConfigWords() {
    for (FieldType t : FieldType.values()) {
      assertEquals(t, FieldType.ofWord(t.word()));
    }
    assertEquals(FieldType.NUMBER, FieldType.ofWord("number"));
    assertNull(FieldType.ofWord("Number"));
    assertNull(FieldType.ofWord("double"));
    assertEquals("iso8601", TimeFormat.ISO8601.word());
    assertEquals("epoch_millis", TimeFormat.EPOCH_MILLIS.word());
    assertEquals("epoch_seconds", TimeFormat.EPOCH_SECONDS.word());
  }
}
