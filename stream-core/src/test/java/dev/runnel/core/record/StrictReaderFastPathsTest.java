package dev.runnel.core.record;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.nio.charset.StandardCharsets;
import java.time.OffsetDateTime;
import java.time.format.DateTimeParseException;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Random;
import org.junit.jupiter.api.Tag;
import org.junit.jupiter.api.Test;

/**
 * The strict reader's one-pass paths against outside references: numbers read in the same pass as
 * they are scanned against {@link Double#parseDouble} (the JDK's correctly rounded parser), bit for
 * bit; ISO 8601 times read from bytes (and remembered between records) against
 * {@link OffsetDateTime#parse}; guessed field names against records whose field order changes.
 * Each input is also checked against the decoder's Jackson path (the reference of the fast path),
 * with one reader and one record reused across all inputs.
 */
class StrictReaderFastPathsTest {

  private static RecordSchema schema() {
    Map<String, FieldType> m = new LinkedHashMap<>();
    m.put("kind", FieldType.TEXT);
    m.put("x", FieldType.NUMBER);
    m.put("at", FieldType.TIME);
    m.put("temperature_c", FieldType.NUMBER);
    m.put("a_rather_long_field_name_of_40_bytes_xyz", FieldType.NUMBER);
    m.put("ab", FieldType.FLAG);
    return new RecordSchema(m);
  }

  private static final RecordLimits LIMITS = new RecordLimits(64, 4096, 1.0e300, 1970, 2200);

  private final RecordSchema schema = schema();
  private final DecoderAgreementTest.Pair pair = new DecoderAgreementTest.Pair(schema, LIMITS, "at", TimeFormat.ISO8601);
  private final StrictJsonReader reader = StrictJsonReader.create(schema, LIMITS, schema.slot("at"), TimeFormat.ISO8601);
  private final EventRecord out = new EventRecord(schema);

  private boolean read(String json) {
    byte[] b = json.getBytes(StandardCharsets.UTF_8);
    pair.check(b);
    return reader.read(b, 0, b.length, out);
  }

  /** Decimal text of the shapes the one-pass path takes and of those next to its limits. */
  private static String randomDecimal(Random r) {
    StringBuilder s = new StringBuilder();
    if (r.nextBoolean()) s.append('-');
    switch (r.nextInt(5)) {
      case 0: { // short, like sensor readings
        s.append(r.nextInt(1000)).append('.').append(r.nextInt(1000));
        break;
      }
      case 1: { // up to 20 digits in all, the point anywhere
        int digits = 1 + r.nextInt(20);
        int point = r.nextInt(digits + 1);
        for (int d = 0; d < digits; d++) {
          if (d == point && d > 0) s.append('.');
          s.append((char) ('0' + (d == 0 && point != 1 ? 1 + r.nextInt(9) : r.nextInt(10))));
        }
        break;
      }
      case 2: { // around 2^53 = 9007199254740992, as an integer or with a point
        long m = (1L << 53) + r.nextInt(2001) - 1000;
        String t = Long.toString(m);
        int point = r.nextInt(t.length());
        s.append(point == 0 ? t : t.substring(0, point) + "." + t.substring(point));
        break;
      }
      case 3: { // 0.000...ddd: many fraction digits, leading zeros
        s.append("0.");
        int zeros = r.nextInt(20);
        for (int z = 0; z < zeros; z++) s.append('0');
        s.append(1 + r.nextInt(999_999));
        break;
      }
      default: { // shortest representation of a random double, as Java writes it
        double v = Double.longBitsToDouble(r.nextLong());
        if (!Double.isFinite(v)) v = r.nextDouble();
        s.setLength(0);
        s.append(Double.toString(v).toLowerCase(Locale.ROOT).replace("e", r.nextBoolean() ? "e" : "E"));
        break;
      }
    }
    return s.toString();
  }

  @Tag("slow")
  @Test void numbersReadInOnePass_haveTheBitsOfDoubleParseDouble() {
    checkNumbers(20260412L, 200_000);
  }

  /** The same check on 10,000 other random numbers, short enough for every mutant of the reader. */
  @Test void numbersReadInOnePass_haveTheBitsOfDoubleParseDouble_short() {
    checkNumbers(20261205L, 10_000);
  }

  private void checkNumbers(long seed, int count) {
    Random r = new Random(seed);
    List<String> texts = new ArrayList<>(List.of("0", "-0", "0.0", "-0.0", "1", "-1", "9", "10", "0.1", "0.162", "3.4", "35.4",
        "9007199254740992", "9007199254740993", "9007199254740991", "-9007199254740992", "900719925474099.3",
        "0.9007199254740993", "123456789012345678", "1234567890123456789", "0.0000000000000000000001", "0.00000000000000000000001",
        "999999999999999999", "0.30000000000000004", "1.7976931348623157", "4.9", "2.2250738585072014", "100000000000000000",
        "1e5", "1E-5", "0.5e1", "-0e0", "1.5E+2"));
    for (int k = 0; k < count; k++) texts.add(randomDecimal(r));
    String[] around = {"{\"x\":%s}", "{\"x\":%s,\"kind\":\"a\"}", "{\"kind\":\"a\",\"x\":%s }", "{\"x\": %s\n}"};
    int slot = schema.slot("x");
    int read = 0;
    for (int k = 0; k < texts.size(); k++) {
      String t = texts.get(k);
      assertTrue(t.matches("-?(0|[1-9][0-9]*)(\\.[0-9]+)?([eE][+-]?[0-9]+)?"), t); // JSON number grammar, RFC 8259 section 6
      double expected = Double.parseDouble(t); // the JDK's correctly rounded parser as reference
      boolean ok = read(String.format(Locale.ROOT, around[k & 3], t));
      assertEquals(Double.isFinite(expected) && Math.abs(expected) <= LIMITS.maxAbsValue(), ok, t);
      if (ok) {
        read++;
        assertEquals(Double.doubleToRawLongBits(expected), Double.doubleToRawLongBits(out.number(slot)), t);
      }
    }
    assertTrue(read > count * 19 / 20, read + " numbers read");
  }

  @Test void magnitudeLimit_isCheckedOnTheValue_notOnTheDigits() {
    RecordLimits limits = new RecordLimits(64, 4096, 1.0e6, 1970, 2200);
    DecoderAgreementTest.Pair p = new DecoderAgreementTest.Pair(schema, limits, "at", TimeFormat.ISO8601);
    StrictJsonReader strict = StrictJsonReader.create(schema, limits, schema.slot("at"), TimeFormat.ISO8601);
    // {text, within the limit of 1e6}: the digits as an integer exceed the limit in all but the first
    String[][] cases = {{"999999", "true"}, {"999999.99", "true"}, {"1000000.0", "true"}, {"-1000000.000", "true"},
      {"1000000.5", "false"}, {"-1000000.00000001", "false"}, {"1000001", "false"}, {"0.0000001", "true"}};
    for (String[] c : cases) {
      byte[] b = ("{\"x\":" + c[0] + "}").getBytes(StandardCharsets.UTF_8);
      RejectReason r = p.check(b);
      assertEquals(Boolean.parseBoolean(c[1]) ? null : RejectReason.OUT_OF_RANGE, r, c[0]);
      assertEquals(r == null, strict.read(b, 0, b.length, out), c[0]);
    }
  }

  @Test void numbersThatAreNotJson_areLeftToJackson() {
    for (String t : new String[] {"01", "-01", "00.5", "1.", "-", "-.5", ".5", "+1", "1.2.3", "0x1", "1e", "1e+", "--1", "1-", "0-1"}) {
      assertTrue(!read("{\"x\":" + t + "}"), t);
    }
  }

  private static String randomTime(Random r) {
    int year = 1969 + r.nextInt(240);
    int month = r.nextInt(14); // 0 and 13 are out of range
    int day = r.nextInt(33);
    String date = String.format(Locale.ROOT, "%04d-%02d-%02d", year, month, day);
    String time = String.format(Locale.ROOT, "%02d:%02d:%02d", r.nextInt(25), r.nextInt(61), r.nextInt(61));
    String fraction = "";
    switch (r.nextInt(4)) {
      case 0: fraction = (r.nextBoolean() ? "." : ",") + "123456789012".substring(0, r.nextInt(12)); break;
      case 1: fraction = "." + r.nextInt(1000); break;
      default: break;
    }
    String zone;
    switch (r.nextInt(5)) {
      case 0: zone = r.nextBoolean() ? "Z" : "z"; break;
      case 1: zone = String.format(Locale.ROOT, "%s%02d:%02d", r.nextBoolean() ? "+" : "-", r.nextInt(20), r.nextInt(61)); break;
      case 2: zone = "+0200"; break;
      default: zone = String.format(Locale.ROOT, "%s%02d:%02d", r.nextBoolean() ? "+" : "-", r.nextInt(15), 15 * r.nextInt(4)); break;
    }
    return date + (r.nextInt(10) == 0 ? "t" : "T") + time + fraction + zone;
  }

  /**
   * Epoch millis by java.time (the reference), or null when it does not parse or lies outside the
   * limits. ISO 8601 allows a comma as the decimal sign of the seconds, which the decoder takes
   * and {@code OffsetDateTime.parse} does not, so it is given a point there.
   */
  private static Long reference(String text) {
    try {
      String t = text.length() > 19 && text.charAt(19) == ',' ? text.substring(0, 19) + "." + text.substring(20) : text;
      long ms = OffsetDateTime.parse(t).toInstant().toEpochMilli();
      return ms >= LIMITS.minTimeMillis() && ms < LIMITS.endTimeMillis() ? ms : null;
    } catch (DateTimeParseException e) {
      return null;
    }
  }

  private static final java.util.regex.Pattern FIXED_SHAPE =
      java.util.regex.Pattern.compile("\\d{4}-\\d\\d-\\d\\d[Tt]\\d\\d:\\d\\d:\\d\\d([.,]\\d{1,9})?([Zz]|[+-]\\d\\d:\\d\\d)");

  /** 60,000 random times (about 7 s): left out of mutation runs, which run the short one below. */
  @Tag("slow")
  @Test void timesReadFromBytes_agreeWithJavaTime_alsoInRunsAndAfterNearMisses() {
    checkRandomTimes(7, 60_000);
  }

  /** The same check on 3,000 other random times, short enough for every mutant of the reader. */
  @Test void timesReadFromBytes_agreeWithJavaTime_short() {
    checkRandomTimes(8, 3_000);
  }

  private void checkRandomTimes(long seed, int times) {
    Random r = new Random(seed);
    int slot = schema.slot("at");
    int read = 0;
    for (int k = 0; k < times; k++) {
      String t = randomTime(r);
      // a run of the same time, then the same time changed in one char, cut, or lengthened
      List<String> run = new ArrayList<>();
      int repeat = 1 + r.nextInt(3);
      for (int q = 0; q < repeat; q++) run.add(t);
      char[] c = t.toCharArray();
      c[r.nextInt(c.length)] = "0123456789-:+TZ.x".charAt(r.nextInt(17));
      run.add(new String(c));
      run.add(t.substring(0, r.nextInt(t.length())));
      run.add(t + "0");
      run.add(t);
      for (String s : run) {
        boolean ok = read("{\"at\":\"" + s + "\",\"x\":1}");
        Long expected = reference(s);
        if (expected != null && FIXED_SHAPE.matcher(s).matches()) {
          // the shape the decoder reads without java.time (EventTimes' class doc), in range
          assertTrue(ok, s);
        }
        if (ok) {
          read++;
          assertEquals(expected, (Long) out.timeMillis(slot), s);
          assertEquals(expected, (Long) out.eventTimeMillis(), s);
        }
      }
    }
    assertTrue(read > times, read + " times read");
  }

  @Tag("slow")
  @Test void guessedNames_followChangingFieldOrders() {
    checkGuessedNames(3, 30_000);
  }

  /** The same check on 3,000 other random records, short enough for every mutant of the reader. */
  @Test void guessedNames_followChangingFieldOrders_short() {
    checkGuessedNames(4, 3_000);
  }

  private void checkGuessedNames(long seed, int records) {
    Random r = new Random(seed);
    String longName = "a_rather_long_field_name_of_40_bytes_xyz";
    String[] declared = {"kind", "x", "at", "temperature_c", longName, "ab"};
    String[] values = {"\"actual\"", "1.5", "\"2026-03-25T00:00:00+01:00\"", "-3.25", "7", "true"};
    // names next to the declared ones: prefixes, extensions, one byte changed at the start, middle or end
    String[] near = {"kin", "kinds", "kine", "jind", "xx", "", "a", "abc", "ac", "bb", "temperature_", "temperature_cc", "temperatureXc",
      "uemperature_c", "temperature_d", longName.substring(0, 39), longName + "z", longName.replace("_40_", "_41_"),
      longName.replace("long", "lonG"), "X" + longName.substring(1), "h\u00e9"};
    int read = 0;
    for (int k = 0; k < records; k++) {
      List<String> fields = new ArrayList<>();
      int order = r.nextInt(4);
      for (int f = 0; f < declared.length; f++) {
        if (order == 0 || r.nextInt(5) != 0) fields.add("\"" + declared[f] + "\":" + values[f]);
      }
      if (order >= 2) java.util.Collections.shuffle(fields, r);
      if (order == 3 || r.nextInt(4) == 0) {
        int extra = 1 + r.nextInt(3);
        for (int q = 0; q < extra; q++) {
          fields.add(r.nextInt(fields.size() + 1), "\"" + near[r.nextInt(near.length)] + "\":" + (r.nextBoolean() ? "9" : "\"s\""));
        }
      }
      String json = "{" + String.join(r.nextInt(8) == 0 ? " , " : ",", fields) + "}";
      if (read(json)) read++;
    }
    assertTrue(read > records * 2 / 3, read + " records read by the reader itself");
  }
}
