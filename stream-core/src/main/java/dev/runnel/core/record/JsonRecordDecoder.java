package dev.runnel.core.record;

import com.fasterxml.jackson.core.JsonFactory;
import com.fasterxml.jackson.core.JsonParser;
import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.core.JsonToken;
import com.fasterxml.jackson.core.json.JsonReadFeature;
import java.io.IOException;

/**
 * Decodes one JSON object per call into a reusable {@link EventRecord}: a valid record of the
 * common shape is read straight from its bytes without allocating ({@link StrictJsonReader});
 * anything else, including every rejected record, by Jackson's streaming parser (no tree, no
 * boxing), which is the reference for both. One thread per instance.
 *
 * <p>Outcomes: {@link #decode} returns {@code null} when the record was decoded, or the
 * {@link RejectReason} of the first problem found; {@link #lastDetail()} then says what it was,
 * e.g. {@code field temperature_c: expected a number, got a string}. Undeclared fields are skipped
 * whatever they hold (a repeated undeclared name too). A declared field that is JSON {@code null}
 * is left absent, like a missing one: the caller decides what is required. A declared field that
 * occurs twice, even as {@code null}, is {@code DUPLICATE_FIELD}: which value was meant is unknown,
 * and "the last wins" would let a later copy of the target overrule the first.
 *
 * <p>Checks, in the order met: record size ({@code RECORD_TOO_LARGE}); JSON syntax, a root that is
 * not an object, anything after the object ({@code MALFORMED_JSON}); per declared field, when its
 * name is met, a second occurrence ({@code DUPLICATE_FIELD}); then the JSON
 * type ({@code WRONG_TYPE}, also for objects and arrays); NaN, Infinity and numbers that overflow
 * a double ({@code NOT_FINITE}); magnitude above {@code max_abs_value} ({@code OUT_OF_RANGE}; not
 * for the event-time field, which its time range bounds instead);
 * strings longer than {@code max_text_length} ({@code TOO_LONG}); text holding an unpaired UTF-16
 * surrogate, escaped ({@code "\ud800"}) or encoded ({@code NOT_UNICODE}); time text that does not
 * parse or is longer than {@link #MAX_TIME_CHARS}
 * ({@code BAD_TIME}); an epoch event time that looks written in the other unit
 * ({@code WRONG_TIME_UNIT}, see {@link EventTimes#looksLikeOtherUnit}); a time outside
 * [{@code min_year}, {@code max_year}] in UTC ({@code ABSURD_TIME}).
 *
 * <p>TIME fields take ISO 8601 text, except the event-time field when its format is an epoch
 * format: it then takes a number or numeric text. A NUMBER field configured as event time keeps
 * its number and also sets the record's event time.
 */
public final class JsonRecordDecoder {

  /** Longest text accepted for a time value; longer text is BAD_TIME whatever max_text_length says. */
  public static final int MAX_TIME_CHARS = 64;

  private final RecordSchema schema;
  private final RecordLimits limits;
  private final int eventTimeSlot;
  private final TimeFormat eventTimeFormat;
  private final long minTime;
  private final long endTime;
  private final JsonFactory factory;
  /** The allocation-free reader of plainly valid records; null when the schema's names rule it out. */
  private final StrictJsonReader strict;
  private String detail = "";
  /** Per slot the number of the last record whose Jackson decoding met the slot's name (duplicates). */
  private final int[] seenInRecord;
  /** Number of the record being decoded by Jackson; {@link #seenInRecord} is cleared when it wraps. */
  private int recordStamp;

  /**
   * @param schema declared fields. Not modified.
   * @param limits rejection bounds
   * @param eventTimeField name of the event-time field, or {@code null} when the caller supplies
   *     the time
   * @param eventTimeFormat format of that field; ignored when {@code eventTimeField} is null
   * @throws IllegalArgumentException if the event-time field is not declared, or its type does not
   *     fit the format (TIME for any format, NUMBER only for epoch formats)
   */
  public JsonRecordDecoder(RecordSchema schema, RecordLimits limits, String eventTimeField, TimeFormat eventTimeFormat) {
    this.schema = schema;
    this.limits = limits;
    if (eventTimeField == null) {
      eventTimeSlot = -1;
      this.eventTimeFormat = TimeFormat.ISO8601;
    } else {
      eventTimeSlot = schema.slot(eventTimeField);
      if (eventTimeSlot < 0) throw new IllegalArgumentException("event time field " + eventTimeField + " is not declared");
      FieldType t = schema.type(eventTimeSlot);
      if (t != FieldType.TIME && !(t == FieldType.NUMBER && eventTimeFormat != TimeFormat.ISO8601)) {
        throw new IllegalArgumentException("event time field " + eventTimeField + " is " + t.word() + "; use a time field, or a number field with an epoch format");
      }
      this.eventTimeFormat = eventTimeFormat;
    }
    this.minTime = limits.minTimeMillis();
    this.endTime = limits.endTimeMillis();
    this.factory = JsonFactory.builder().enable(JsonReadFeature.ALLOW_NON_NUMERIC_NUMBERS).build();
    this.strict = StrictJsonReader.create(schema, limits, eventTimeSlot, this.eventTimeFormat);
    this.seenInRecord = new int[schema.size()];
  }

  /** A decoder without an event-time field. */
  public JsonRecordDecoder(RecordSchema schema, RecordLimits limits) { this(schema, limits, null, null); }

  /** What the last rejected record was rejected for; empty after a success. */
  public String lastDetail() { return detail; }

  /**
   * Decodes {@code buf[off .. off+len)} into {@code out}, which is cleared first. Allocates
   * nothing for a valid record of the common shape (see {@link StrictJsonReader}); any other input
   * is decoded by Jackson's parser, which decides the outcome and its detail.
   *
   * @param buf the record's bytes, UTF-8 JSON. Not modified.
   * @param out receives the fields. Modified.
   * @return null on success, else why the record is rejected ({@code out} is then partly filled)
   */
  public RejectReason decode(byte[] buf, int off, int len, EventRecord out) {
    if (len <= limits.maxRecordBytes() && strict != null && strict.read(buf, off, len, out)) {
      detail = "";
      return null;
    }
    return decodeWithJackson(buf, off, len, out);
  }

  /**
   * The outcome for a record of {@code recordBytes} bytes that its source did not hold whole (a
   * line read only in part): {@code RECORD_TOO_LARGE}, with the same detail as {@link #decode}
   * gives for a record of that size.
   *
   * @param recordBytes the record's whole size, above {@code max_record_bytes}
   */
  public RejectReason tooLarge(long recordBytes) {
    detail = "record is " + recordBytes + " bytes; the limit is " + limits.maxRecordBytes();
    return RejectReason.RECORD_TOO_LARGE;
  }

  /**
   * Decodes with a new Jackson parser for the record: the reference for {@link #decode}, which
   * gives the same outcome, detail and fields for every input (package-private for tests).
   */
  RejectReason decodeWithJackson(byte[] buf, int off, int len, EventRecord out) {
    out.clear();
    detail = "";
    if (++recordStamp == 0) {
      java.util.Arrays.fill(seenInRecord, 0);
      recordStamp = 1;
    }
    if (len > limits.maxRecordBytes()) return tooLarge(len);
    try (JsonParser p = factory.createParser(buf, off, len)) {
      JsonToken t = p.nextToken();
      if (t != JsonToken.START_OBJECT) {
        detail = t == null ? "empty input" : "expected a JSON object, got " + describe(t);
        return RejectReason.MALFORMED_JSON;
      }
      while (true) {
        t = p.nextToken();
        if (t == JsonToken.END_OBJECT) break;
        if (t != JsonToken.FIELD_NAME) {
          detail = "expected a field name, got " + describe(t);
          return RejectReason.MALFORMED_JSON;
        }
        int slot = schema.slot(p.currentName());
        t = p.nextToken();
        if (t == null) {
          detail = "input ends inside the object";
          return RejectReason.MALFORMED_JSON;
        }
        if (slot < 0) {
          p.skipChildren();
          continue;
        }
        if (seenInRecord[slot] == recordStamp) {
          detail = "field " + schema.name(slot) + " occurs more than once; a record must give each field once";
          return RejectReason.DUPLICATE_FIELD;
        }
        seenInRecord[slot] = recordStamp;
        if (t == JsonToken.VALUE_NULL) {
          out.setAbsent(slot);
          continue;
        }
        RejectReason r = readValue(p, t, slot, out);
        if (r != null) return r;
      }
      JsonToken after = p.nextToken();
      if (after != null) {
        detail = "trailing data: " + describe(after) + " after the end of the object";
        return RejectReason.MALFORMED_JSON;
      }
      return null;
    } catch (JsonProcessingException e) {
      detail = oneLine(e.getOriginalMessage()) + locationOf(e);
      return RejectReason.MALFORMED_JSON;
    } catch (IOException e) {
      detail = oneLine(e.getMessage());
      return RejectReason.MALFORMED_JSON;
    }
  }

  private RejectReason readValue(JsonParser p, JsonToken t, int slot, EventRecord out) throws IOException {
    FieldType type = schema.type(slot);
    switch (type) {
      case NUMBER: {
        if (t != JsonToken.VALUE_NUMBER_INT && t != JsonToken.VALUE_NUMBER_FLOAT) return wrongType(p, t, slot, "a number");
        double v = parseShortDecimal(p.getTextCharacters(), p.getTextOffset(), p.getTextLength());
        if (Double.isNaN(v)) {
          v = p.getDoubleValue(); // long, exotic or non-finite text: Jackson's parser (allocates)
        }
        if (Double.isNaN(v) || Double.isInfinite(v)) {
          detail = "field " + schema.name(slot) + ": " + p.getText() + " is not a finite number";
          return RejectReason.NOT_FINITE;
        }
        if (Math.abs(v) > limits.maxAbsValue() && slot != eventTimeSlot) {
          detail = "field " + schema.name(slot) + ": " + v + " exceeds the limit of " + limits.maxAbsValue() + " in magnitude";
          return RejectReason.OUT_OF_RANGE;
        }
        out.setNumber(slot, v);
        if (slot == eventTimeSlot) {
          return setEventTime(slot, EventTimes.fromEpochNumber(v, eventTimeFormat), out, false);
        }
        return null;
      }
      case TEXT: {
        if (t != JsonToken.VALUE_STRING) return wrongType(p, t, slot, "a string");
        int n = p.getTextLength();
        if (n > limits.maxTextLength()) {
          detail = "field " + schema.name(slot) + ": text of " + n + " chars exceeds the limit of " + limits.maxTextLength();
          return RejectReason.TOO_LONG;
        }
        int bad = unpairedSurrogateAt(p.getTextCharacters(), p.getTextOffset(), n);
        if (bad >= 0) {
          detail = "field " + schema.name(slot) + ": text holds an unpaired surrogate U+"
              + Integer.toHexString(p.getTextCharacters()[p.getTextOffset() + bad]).toUpperCase(java.util.Locale.ROOT)
              + " at char " + bad + "; it is not Unicode text";
          return RejectReason.NOT_UNICODE;
        }
        out.setText(slot, p.getText());
        return null;
      }
      case FLAG: {
        if (t != JsonToken.VALUE_TRUE && t != JsonToken.VALUE_FALSE) return wrongType(p, t, slot, "true or false");
        out.setFlag(slot, t == JsonToken.VALUE_TRUE);
        return null;
      }
      case TIME: default: {
        boolean epoch = slot == eventTimeSlot && eventTimeFormat != TimeFormat.ISO8601;
        long ms;
        if (t == JsonToken.VALUE_STRING) {
          int n = p.getTextLength();
          if (n > MAX_TIME_CHARS) {
            detail = "field " + schema.name(slot) + ": text of " + n + " chars is too long for a time";
            return RejectReason.BAD_TIME;
          }
          char[] c = p.getTextCharacters();
          int o = p.getTextOffset();
          ms = epoch ? EventTimes.fromEpochText(c, o, n, eventTimeFormat) : EventTimes.parseIso8601(c, o, n);
        } else if (epoch && (t == JsonToken.VALUE_NUMBER_INT || t == JsonToken.VALUE_NUMBER_FLOAT)) {
          double v = p.getDoubleValue();
          if (Double.isNaN(v) || Double.isInfinite(v)) {
            detail = "field " + schema.name(slot) + ": " + p.getText() + " is not a finite number";
            return RejectReason.NOT_FINITE;
          }
          ms = EventTimes.fromEpochNumber(v, eventTimeFormat);
        } else {
          return wrongType(p, t, slot, epoch ? "a number or numeric string (" + eventTimeFormat.word() + ")" : "an ISO 8601 time string");
        }
        if (ms == EventTimes.INVALID) {
          detail = "field " + schema.name(slot) + ": " + abbreviate(p.getText()) + " is not a time in " + (epoch ? eventTimeFormat.word() : "ISO 8601 with an offset, e.g. 2026-03-29T02:30:00+02:00");
          return RejectReason.BAD_TIME;
        }
        return setEventTime(slot, ms, out, true);
      }
    }
  }

  private static final double[] POW10 = {
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
  };

  /**
   * The double nearest to a short decimal {@code [-]digits[.digits][(e|E)[+-]digits]} with at most
   * 15 digits and a resulting power of ten within 10^±22, without allocating; NaN for anything
   * else (the caller then uses the general parser). Exact: the digits form an integer below 2^53
   * and 10^k (k ≤ 22) is exact in binary, so one multiplication or division, correctly rounded,
   * gives the correctly rounded result, the same bits as {@link Double#parseDouble} (Clinger's fast
   * path, common practice).
   */
  static double parseShortDecimal(char[] c, int off, int len) {
    int i = off;
    int end = off + len;
    if (len <= 0 || len > 40) return Double.NaN;
    boolean negative = c[i] == '-';
    if (negative) i++;
    long m = 0;
    int digits = 0;
    int scale = 0;
    boolean any = false;
    for (; i < end && c[i] >= '0' && c[i] <= '9'; i++) {
      m = 10 * m + (c[i] - '0');
      digits++;
      any = true;
    }
    if (i < end && c[i] == '.') {
      i++;
      for (; i < end && c[i] >= '0' && c[i] <= '9'; i++) {
        m = 10 * m + (c[i] - '0');
        digits++;
        scale--;
        any = true;
      }
    }
    if (!any || digits > 15) return Double.NaN;
    if (i < end && (c[i] == 'e' || c[i] == 'E')) {
      i++;
      boolean eneg = false;
      if (i < end && (c[i] == '+' || c[i] == '-')) {
        eneg = c[i] == '-';
        i++;
      }
      int e = 0;
      boolean edig = false;
      for (; i < end && c[i] >= '0' && c[i] <= '9' && e < 1000; i++) {
        e = 10 * e + (c[i] - '0');
        edig = true;
      }
      if (!edig) return Double.NaN;
      scale += eneg ? -e : e;
    }
    if (i != end || scale < -22 || scale > 22) return Double.NaN;
    double v = (double) m;
    v = scale >= 0 ? v * POW10[scale] : v / POW10[-scale];
    return negative ? -v : v;
  }

  private RejectReason setEventTime(int slot, long ms, EventRecord out, boolean store) {
    if (ms == EventTimes.INVALID) {
      detail = "field " + schema.name(slot) + ": " + out.number(slot) + " is not a time in " + eventTimeFormat.word();
      return RejectReason.BAD_TIME;
    }
    if (slot == eventTimeSlot && eventTimeFormat != TimeFormat.ISO8601
        && EventTimes.looksLikeOtherUnit(ms, eventTimeFormat, minTime, endTime)) {
      boolean millis = eventTimeFormat == TimeFormat.EPOCH_MILLIS;
      detail = "field " + schema.name(slot) + ": read as " + eventTimeFormat.word() + " it is "
          + java.time.Instant.ofEpochMilli(ms) + (millis ? ", before 1973" : ", after max_year " + limits.maxYear())
          + "; it looks like epoch " + (millis ? "seconds" : "milliseconds") + ": if the feed writes "
          + (millis ? "seconds" : "milliseconds") + ", set input.event_time.format to " + (millis ? "epoch_seconds" : "epoch_millis");
      return RejectReason.WRONG_TIME_UNIT;
    }
    if (ms < minTime || ms >= endTime) {
      detail = "field " + schema.name(slot) + ": " + java.time.Instant.ofEpochMilli(ms) + " is outside the years "
          + limits.minYear() + " to " + limits.maxYear();
      return RejectReason.ABSURD_TIME;
    }
    if (store) out.setTimeMillis(slot, ms);
    if (slot == eventTimeSlot) out.setEventTimeMillis(ms);
    return null;
  }

  /**
   * The index (from {@code off}) of the first UTF-16 surrogate in {@code c[off .. off+n)} that is
   * not half of a high-low pair, or -1 when the text is well-formed. @param c not modified.
   */
  static int unpairedSurrogateAt(char[] c, int off, int n) {
    int end = off + n;
    for (int i = off; i < end; i++) {
      char ch = c[i];
      if (ch < Character.MIN_SURROGATE || ch > Character.MAX_SURROGATE) continue;
      if (Character.isHighSurrogate(ch) && i + 1 < end && Character.isLowSurrogate(c[i + 1])) {
        i++;
        continue;
      }
      return i - off;
    }
    return -1;
  }

  private RejectReason wrongType(JsonParser p, JsonToken t, int slot, String expected) {
    detail = "field " + schema.name(slot) + ": expected " + expected + ", got " + describe(t);
    return RejectReason.WRONG_TYPE;
  }

  private static String describe(JsonToken t) {
    switch (t) {
      case START_OBJECT: return "an object";
      case START_ARRAY: return "an array";
      case VALUE_STRING: return "a string";
      case VALUE_NUMBER_INT: case VALUE_NUMBER_FLOAT: return "a number";
      case VALUE_TRUE: case VALUE_FALSE: return "a boolean";
      case VALUE_NULL: return "null";
      case END_OBJECT: return "'}'";
      case END_ARRAY: return "']'";
      case FIELD_NAME: return "a field name";
      default: return t.toString();
    }
  }

  private static String locationOf(JsonProcessingException e) {
    if (e.getLocation() == null) return "";
    long off = e.getLocation().getByteOffset();
    return off >= 0 ? " (at byte " + off + ")" : "";
  }

  private static String oneLine(String s) {
    if (s == null) return "unreadable input";
    int nl = s.indexOf('\n');
    return abbreviate(nl >= 0 ? s.substring(0, nl) : s);
  }

  private static String abbreviate(String s) {
    return s.length() <= 80 ? s : s.substring(0, 77) + "...";
  }
}
