package dev.runnel.core.record;

/**
 * The allocation-free fast path of {@link JsonRecordDecoder}: reads a record that is plainly
 * well-formed and valid straight from its UTF-8 bytes into an {@link EventRecord}, and answers
 * "not sure" for everything else, which the decoder then hands to Jackson. One thread per instance.
 *
 * <p>Contract: {@link #read} returns true only for input that Jackson's parser (as the decoder
 * configures it) accepts and that the decoder's Jackson path decodes without a rejection, and then
 * leaves {@code out} exactly as that path would: the same slots present, the same numbers (bit for
 * bit), texts (char for char), flags and times. When it returns false, {@code out} is partly filled
 * and the caller must decode again with Jackson, which decides the outcome and its message. A
 * false answer is always safe; a true one must never differ from Jackson's.
 *
 * <p>Implementation notes: it accepts a strict subset of JSON (RFC 8259): whitespace is space, tab,
 * CR or LF; strings are well-formed UTF-8 (Unicode Table 3-7: no overlong forms, no surrogates, at
 * most U+10FFFF) without control characters, with the escapes {@code \" \\ \/ \b \f \n \r \t \\uXXXX}
 * where a surrogate escape in a declared text must be the high half of an escaped pair (a lone one
 * goes to Jackson);
 * each declared field at most once (a repeat goes to Jackson, which rejects it);
 * numbers follow the JSON grammar (no leading zeros, no leading plus, digits after a point and in
 * an exponent) and have at most {@value #MAX_NUMBER_CHARS} chars; field names have at most
 * {@value #MAX_NAME_BYTES} bytes and no escapes; skipped values nest at most {@value #MAX_DEPTH}
 * deep. Jackson's own limits (names 50,000 chars, numbers 1,000 chars, nesting 1,000, strings
 * 20,000,000 chars in 2.21) lie beyond these, so they never reject what this reader accepts.
 * Anything outside the subset (NaN, escaped names, a byte-order mark, a rejection of any kind)
 * goes to Jackson. Values: a number of at most 18 digits without exponent whose digits form an
 * integer of at most 2^53 is converted in the pass that scans it (one exact division, the bits of
 * {@link Double#parseDouble}); any other number goes through {@link JsonRecordDecoder#parseShortDecimal}
 * or {@link Double#parseDouble}, which Jackson's {@code getDoubleValue} equals for JSON number text
 * (all round correctly; Jackson's default does not enable its fast double parser). A time of the
 * fixed shape {@code YYYY-MM-DDTHH:MM:SS[.fraction](Z|±HH:MM)} is read from the bytes with the
 * checks and arithmetic of {@link EventTimes#parseIso8601}, and the last one's bytes and value are
 * kept for the next record; other times go through {@link EventTimes}.
 *
 * <p>Per record the work is one pass: the next field's name is guessed from the order met before
 * and confirmed by word comparisons (a miss falls back to the scan and the name table); values
 * are converted as they are scanned.
 *
 * <p>Measured (JMH {@code DecodeBenchmark.decode}, demo sample, 140 bytes per line, 2-CPU shared
 * machine, median of 3 alternating runs): a line in about 125 ns (245 ns before the one-pass
 * changes), allocating nothing. Tried and not kept, as they measured no better: scanning strings
 * eight bytes to a word. Earlier: a new Jackson parser per line took
 * about 430 ns and 640 bytes plus one {@code String} per text field. One Jackson non-blocking parser
 * reused across lines ({@code createNonBlockingByteArrayParser}) only tokenized a line in about
 * 400 ns against 450 ns for a new blocking parser, keeps every distinct field name it meets in its
 * symbol table (memory grows with arbitrary input) and counts error locations from its first
 * record, so it was not used.
 */
final class StrictJsonReader {

  /** Deepest nesting of a skipped (undeclared) value handled here. */
  static final int MAX_DEPTH = 64;
  /** Longest field name, in bytes, handled here. */
  static final int MAX_NAME_BYTES = 1024;
  /** Longest number, in chars, handled here. */
  static final int MAX_NUMBER_CHARS = 100;

  private static final int FAIL = -1;
  /** From {@link #readString}: the text has more chars than the limit it was given. */
  private static final int FULL = -2;

  private final FieldType[] types;
  private final int eventTimeSlot;
  private final TimeFormat eventTimeFormat;
  private final long minTime;
  private final long endTime;
  private final int maxTextLength;
  private final double maxAbsValue;

  /** Per slot its type as a small int ({@link #K_NUMBER} ...), for a cheap switch. */
  private final byte[] kinds;
  private static final byte K_NUMBER = 0;
  private static final byte K_TEXT = 1;
  private static final byte K_FLAG = 2;
  private static final byte K_TIME = 3;
  /** Per slot: whether the TIME slot takes ISO 8601 text (not the epoch event-time field). */
  private final boolean[] isoTime;

  /**
   * The declared slot expected next: at index 0 the first field of a record, at index s + 1 the
   * field after slot s, as met in the last record that had them; -1 when none. Only a guess that
   * saves the scan of a name: it is confirmed by comparing the bytes, and a wrong guess costs one
   * comparison before the general lookup. Only names that cannot hold a quote, a backslash or a
   * control char, and are shorter than {@link #MAX_NAME_BYTES}, are ever guessed, so a confirmed
   * guess is exactly the name the general scan would find.
   */
  private final int[] expected;
  /** Per slot whether its name may be guessed (see {@link #expected}). */
  private final boolean[] guessable;
  /**
   * Per slot the first and the last 8 bytes of its name as little-endian words (names of 8 bytes
   * or more), or the first and last 4 (names of 4 to 7 bytes), overlapping when the name is short:
   * a guessed name is confirmed with two word comparisons.
   */
  private final long[] nameHead;
  private final long[] nameTail;
  /** Per slot the length of its name in bytes. */
  private final int[] nameLength;

  private static final java.lang.invoke.VarHandle LONGS =
      java.lang.invoke.MethodHandles.byteArrayViewVarHandle(long[].class, java.nio.ByteOrder.LITTLE_ENDIAN);
  private static final java.lang.invoke.VarHandle INTS =
      java.lang.invoke.MethodHandles.byteArrayViewVarHandle(int[].class, java.nio.ByteOrder.LITTLE_ENDIAN);

  /** Open-addressing table of the declared names' UTF-8 bytes: slot + 1, 0 = empty. */
  private final int[] nameTable;
  private final int nameMask;
  private final byte[][] nameBytes;

  /** Scratch for number text and time text. */
  private final char[] scratch = new char[Math.max(MAX_NUMBER_CHARS, JsonRecordDecoder.MAX_TIME_CHARS)];
  /** Chars decoded by the last {@link #readString}. */
  private int stringLength;
  /** Per slot the number of the last record that held it (a repeat is a duplicate field). */
  private final int[] seenInRecord;
  /** Number of the record being read; {@link #seenInRecord} is cleared when it wraps. */
  private int recordStamp;
  /** Whether the event-time field is in epoch milliseconds (its times before 1973 go to Jackson). */
  private final boolean eventTimeMillis;

  private StrictJsonReader(RecordSchema schema, RecordLimits limits, int eventTimeSlot, TimeFormat eventTimeFormat, byte[][] names) {
    int n = schema.size();
    types = new FieldType[n];
    for (int s = 0; s < n; s++) types[s] = schema.type(s);
    this.eventTimeSlot = eventTimeSlot;
    this.eventTimeFormat = eventTimeFormat;
    this.minTime = limits.minTimeMillis();
    this.endTime = limits.endTimeMillis();
    this.maxTextLength = limits.maxTextLength();
    this.maxAbsValue = limits.maxAbsValue();
    this.nameBytes = names;
    this.eventTimeMillis = eventTimeSlot >= 0 && eventTimeFormat == TimeFormat.EPOCH_MILLIS;
    seenInRecord = new int[n];
    kinds = new byte[n];
    isoTime = new boolean[n];
    guessable = new boolean[n];
    expected = new int[n + 1];
    nameHead = new long[n];
    nameTail = new long[n];
    nameLength = new int[n];
    for (int s = 0; s < n; s++) {
      byte[] k = names[s];
      nameLength[s] = k.length;
      if (k.length >= 8) {
        nameHead[s] = (long) LONGS.get(k, 0);
        nameTail[s] = (long) LONGS.get(k, k.length - 8);
      } else if (k.length >= 4) {
        nameHead[s] = (int) INTS.get(k, 0);
        nameTail[s] = (int) INTS.get(k, k.length - 4);
      }
    }
    java.util.Arrays.fill(expected, -1);
    for (int s = 0; s < n; s++) {
      FieldType t = types[s];
      kinds[s] = t == FieldType.NUMBER ? K_NUMBER : t == FieldType.TEXT ? K_TEXT : t == FieldType.FLAG ? K_FLAG : K_TIME;
      isoTime[s] = !(s == eventTimeSlot && eventTimeFormat != TimeFormat.ISO8601);
      boolean plain = names[s].length < MAX_NAME_BYTES;
      for (byte x : names[s]) {
        int k = x & 0xff;
        if (k < 0x20 || k == '"' || k == '\\') plain = false;
      }
      guessable[s] = plain;
    }
    int size = 8;
    while (size < 4 * n) size <<= 1;
    nameTable = new int[size];
    nameMask = size - 1;
    for (int s = 0; s < n; s++) {
      byte[] k = names[s];
      int at = nameHash(k, 0, k.length) & nameMask;
      while (nameTable[at] != 0) at = (at + 1) & nameMask;
      nameTable[at] = s + 1;
    }
  }

  /**
   * A reader for the schema, or null when a declared name is not well-formed UTF-16 (an unpaired
   * surrogate), whose bytes could not be compared; the decoder then always uses Jackson.
   */
  static StrictJsonReader create(RecordSchema schema, RecordLimits limits, int eventTimeSlot, TimeFormat eventTimeFormat) {
    byte[][] names = new byte[schema.size()][];
    for (int s = 0; s < names.length; s++) {
      String name = schema.name(s);
      if (!wellFormed(name)) return null;
      names[s] = name.getBytes(java.nio.charset.StandardCharsets.UTF_8);
    }
    return new StrictJsonReader(schema, limits, eventTimeSlot, eventTimeFormat, names);
  }

  private static boolean wellFormed(String s) {
    for (int i = 0; i < s.length(); i++) {
      char c = s.charAt(i);
      if (Character.isHighSurrogate(c)) {
        if (i + 1 >= s.length() || !Character.isLowSurrogate(s.charAt(i + 1))) return false;
        i++;
      } else if (Character.isLowSurrogate(c)) {
        return false;
      }
    }
    return true;
  }

  /**
   * A hash of a name from its length and three of its bytes: O(1) whatever the name's length. The
   * table holds only the declared names, so a name chosen to collide costs at most a scan of that
   * small table.
   */
  private static int nameHash(byte[] b, int at, int n) {
    int h = n;
    if (n > 0) h = h * 31 + b[at] * 961 + b[at + (n >> 1)] * 31 + b[at + n - 1];
    h *= 0x9E3779B9;
    return h ^ (h >>> 16);
  }

  /** Byte classes in strings. */
  private static final byte PLAIN = 0;
  private static final byte QUOTE = 1;
  private static final byte BACKSLASH = 2;
  private static final byte CONTROL = 3;
  private static final byte WIDE = 4;
  /** The class of each byte value (index {@code b & 0xff}). */
  private static final byte[] CLASS = new byte[256];

  static {
    for (int c = 0; c < 256; c++) {
      CLASS[c] = c < 0x20 ? CONTROL : c == '"' ? QUOTE : c == '\\' ? BACKSLASH : c >= 0x80 ? WIDE : PLAIN;
    }
  }

  /**
   * Reads {@code b[off .. off+len)} into {@code out} (cleared first).
   *
   * @param b the record's bytes. Not modified.
   * @param out receives the fields. Modified.
   * @return true when decoded; false when Jackson must decide ({@code out} is then partly filled)
   */
  boolean read(byte[] b, int off, int len, EventRecord out) {
    out.clear();
    int stamp = ++recordStamp;
    if (stamp == 0) {
      java.util.Arrays.fill(seenInRecord, 0);
      stamp = recordStamp = 1;
    }
    int[] seen = seenInRecord;
    int end = off + len;
    int i = skipWs(b, off, end);
    if (i >= end || b[i] != '{') return false;
    i = skipWs(b, i + 1, end);
    if (i >= end) return false;
    if (b[i] == '}') {
      i++;
    } else {
      int[] guesses = expected;
      int after = 0; // index into guesses: 0 at the start, s + 1 after declared slot s
      while (true) {
        if (b[i] != '"') return false;
        int start = i + 1;
        int slot = guesses[after];
        int j;
        if (slot >= 0) {
          j = start + nameLength[slot];
          if (j >= end || b[j] != '"' || !sameName(slot, b, start)) slot = -1;
        } else {
          j = 0;
        }
        if (slot < 0) {
          // the name: plain bytes up to the closing quote
          j = start;
          int stop = Math.min(end, start + MAX_NAME_BYTES);
          while (true) {
            while (j < stop && CLASS[b[j] & 0xff] == PLAIN) j++;
            if (j >= stop) return false;
            int k = CLASS[b[j] & 0xff];
            if (k == QUOTE) break;
            if (k != WIDE) return false; // a control char, or an escape: Jackson decides
            j = utf8End(b, j, end);
            if (j < 0) return false;
          }
          slot = slotOf(b, start, j - start);
          if (slot >= 0 && guessable[slot]) guesses[after] = slot;
        }
        i = j + 1;
        if (i < end && b[i] == ':') {
          i++;
        } else {
          i = skipWs(b, i, end);
          if (i >= end || b[i] != ':') return false;
          i++;
        }
        if (i < end && b[i] > ' ') {
          // the common case: no whitespace before the value
        } else {
          i = skipWs(b, i, end);
          if (i >= end) return false;
        }
        if (slot < 0) {
          i = skipValue(b, i, end, 1);
        } else {
          if (seen[slot] == stamp) return false;
          seen[slot] = stamp;
          i = readValue(b, i, end, slot, out);
          after = slot + 1;
        }
        if (i < 0) return false;
        if (i >= end) return false;
        int c = b[i];
        if (c != ',' && c != '}') {
          i = skipWs(b, i, end);
          if (i >= end) return false;
          c = b[i];
        }
        if (c == '}') {
          i++;
          break;
        }
        if (c != ',') return false;
        i++;
        if (i < end && b[i] == '"') {
          // the common case: the next name follows at once
        } else {
          i = skipWs(b, i, end);
          if (i >= end) return false;
        }
      }
    }
    return i == end || skipWs(b, i, end) == end;
  }

  private int slotOf(byte[] b, int at, int n) {
    int k = nameHash(b, at, n) & nameMask;
    int[] table = nameTable;
    while (true) {
      int e = table[k];
      if (e == 0) return -1;
      byte[] name = nameBytes[e - 1];
      if (name.length == n && sameBytes(name, b, at, n)) return e - 1;
      k = (k + 1) & nameMask;
    }
  }

  /**
   * Whether {@code b[at .. at+n)} holds the name of {@code slot} ({@code n} its length), the
   * caller having checked that those bytes lie within the record.
   */
  private boolean sameName(int slot, byte[] b, int at) {
    int n = nameLength[slot];
    if (n >= 8) {
      return (long) LONGS.get(b, at) == nameHead[slot] && (long) LONGS.get(b, at + n - 8) == nameTail[slot]
          && (n <= 16 || sameBytes(nameBytes[slot], b, at, n));
    }
    if (n >= 4) {
      return (int) INTS.get(b, at) == (int) nameHead[slot] && (int) INTS.get(b, at + n - 4) == (int) nameTail[slot];
    }
    return sameBytes(nameBytes[slot], b, at, n);
  }

  private static boolean sameBytes(byte[] name, byte[] b, int at, int n) {
    for (int j = 0; j < n; j++) {
      if (name[j] != b[at + j]) return false;
    }
    return true;
  }

  private static int skipWs(byte[] b, int i, int end) {
    while (i < end) {
      int c = b[i];
      if (c != ' ' && c != '\n' && c != '\r' && c != '\t') return i;
      i++;
    }
    return i;
  }

  // ------------------------------------------------------------------ declared fields

  private int readValue(byte[] b, int i, int end, int slot, EventRecord out) {
    int c = b[i];
    if (c == 'n') {
      i = literal(b, i, end, NULL);
      if (i >= 0) out.setAbsent(slot);
      return i;
    }
    switch (kinds[slot]) {
      case K_NUMBER: {
        if (c != '-' && (c < '0' || c > '9')) return FAIL;
        int e = readDecimal(b, i, end);
        double v;
        if (e >= 0) {
          // finite; and |v| <= m (a division by 10^k >= 1, correctly rounded), so the check of the
          // magnitude waits for the division only when m itself exceeds the limit
          v = decimal;
          if (decimalDigits > maxAbsValue && Math.abs(v) > maxAbsValue && slot != eventTimeSlot) return FAIL;
        } else {
          e = numberEnd(b, i, end);
          if (e < 0) return FAIL;
          v = numberValue(b, i, e);
          if (Double.isNaN(v) || Double.isInfinite(v) || (Math.abs(v) > maxAbsValue && slot != eventTimeSlot)) return FAIL;
        }
        out.setNumber(slot, v);
        if (slot == eventTimeSlot) {
          long ms = EventTimes.fromEpochNumber(v, eventTimeFormat);
          if (!acceptedTime(ms) || (eventTimeMillis && ms < EventTimes.EPOCH_MILLIS_PLAUSIBLE_FROM)) return FAIL;
          out.setEventTimeMillis(ms);
        }
        return e;
      }
      case K_TEXT: {
        if (c != '"') return FAIL;
        // the slot's buffer grows with the texts met (doubling; the string is read again), not
        // with the record's size: the text has at most min(limit, bytes left) chars
        int most = Math.min(maxTextLength, end - i);
        char[] dst = out.textBuffer(slot, Math.min(most, 32));
        int e;
        while (true) {
          int room = Math.min(most, dst.length);
          e = readString(b, i + 1, end, dst, room);
          if (e != FULL || room >= most) break;
          dst = out.textBuffer(slot, (int) Math.min(most, 2L * dst.length));
        }
        if (e < 0) return FAIL;
        out.setTextLength(slot, stringLength);
        return e;
      }
      case K_FLAG: {
        if (c == 't') {
          i = literal(b, i, end, TRUE);
          if (i >= 0) out.setFlag(slot, true);
          return i;
        }
        if (c == 'f') {
          i = literal(b, i, end, FALSE);
          if (i >= 0) out.setFlag(slot, false);
          return i;
        }
        return FAIL;
      }
      default: {
        boolean epoch = !isoTime[slot];
        long ms;
        int e;
        if (c == '"') {
          ms = epoch ? EventTimes.INVALID : isoFromBytes(b, i + 1, end);
          if (ms != EventTimes.INVALID) {
            e = isoEnd;
          } else {
            e = readString(b, i + 1, end, scratch, JsonRecordDecoder.MAX_TIME_CHARS);
            if (e < 0) return FAIL;
            int n = stringLength;
            ms = epoch ? EventTimes.fromEpochText(scratch, 0, n, eventTimeFormat) : EventTimes.parseIso8601(scratch, 0, n);
          }
        } else if (epoch && (c == '-' || (c >= '0' && c <= '9'))) {
          e = numberEnd(b, i, end);
          if (e < 0) return FAIL;
          double v = numberValue(b, i, e);
          if (Double.isNaN(v) || Double.isInfinite(v)) return FAIL;
          ms = EventTimes.fromEpochNumber(v, eventTimeFormat);
        } else {
          return FAIL;
        }
        if (!acceptedTime(ms) || (epoch && eventTimeMillis && ms < EventTimes.EPOCH_MILLIS_PLAUSIBLE_FROM)) return FAIL;
        out.setTimeMillis(slot, ms);
        if (slot == eventTimeSlot) out.setEventTimeMillis(ms);
        return e;
      }
    }
  }

  /** The value read by the last successful {@link #readDecimal}, and its digits m as an integer (at most 2^53). */
  private double decimal;
  private long decimalDigits;
  /** The position after the closing quote of the last time read by {@link #isoFromBytes}. */
  private int isoEnd;

  private static final double[] POW10 = {
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
  };

  /**
   * Scans and converts in one pass a short JSON number {@code -?(0|[1-9][0-9]*)(\.[0-9]+)?} at
   * {@code i} with at most 18 digits whose digits form an integer m of at most 2^53 and with at
   * most 22 digits after the point: leaves its value in {@link #decimal} and returns its end; FAIL
   * for anything else (an exponent, more digits, a grammar error), which the caller then reads the
   * general way. Exact: m and 10^k (k ≤ 22) are exact in binary, so the one division, correctly
   * rounded, gives the correctly rounded value, the same bits as {@link Double#parseDouble}
   * (Clinger's fast path, common practice). What follows the number is checked by the caller.
   */
  private int readDecimal(byte[] b, int i, int end) {
    boolean negative = false;
    if (b[i] == '-') {
      negative = true;
      i++;
      if (i >= end) return FAIL;
    }
    int d = b[i] - '0';
    if (d < 0 || d > 9) return FAIL;
    long m = d;
    int first = i;
    i++;
    if (d != 0) {
      while (i < end) {
        d = b[i] - '0';
        if (d < 0 || d > 9) break;
        m = 10 * m + d;
        i++;
      }
    }
    int digits = i - first;
    int scale = 0;
    if (i < end && b[i] == '.') {
      i++;
      int f = i;
      while (i < end) {
        d = b[i] - '0';
        if (d < 0 || d > 9) break;
        m = 10 * m + d;
        i++;
      }
      scale = i - f;
      if (scale == 0) return FAIL;
      digits += scale;
    }
    if (digits > 18 || scale > 22 || m > (1L << 53)) return FAIL;
    if (i < end && (b[i] | 0x20) == 'e') return FAIL;
    double v = (double) m;
    if (scale > 0) v /= POW10[scale];
    decimal = negative ? -v : v;
    decimalDigits = m;
    return i;
  }

  /**
   * The epoch millis of a JSON string at {@code p} (after its opening quote) that is exactly
   * {@code YYYY-MM-DDTHH:MM:SS[.fraction](Z|+HH:MM|-HH:MM)} in plain bytes followed by the
   * closing quote, with every field in range (the shape {@link EventTimes#parseIso8601} reads
   * without {@code java.time}, and the same value); sets {@link #isoEnd}. {@link EventTimes#INVALID}
   * for any other string, which the caller then reads the general way.
   */
  private long isoFromBytes(byte[] b, int p, int end) {
    int seen = lastIsoLength;
    if (seen > 0 && end - p >= seen && sameAsLastIso(b, p, seen)) {
      isoEnd = p + seen;
      return lastIsoMillis;
    }
    long ms = parseIsoBytes(b, p, end);
    if (ms != EventTimes.INVALID) {
      int n = isoEnd - p;
      if (n <= lastIso.length) {
        System.arraycopy(b, p, lastIso, 0, n);
        lastIsoLength = n;
        lastIsoMillis = ms;
      }
    }
    return ms;
  }

  /**
   * The bytes (the text and its closing quote) of the last time {@link #parseIsoBytes} accepted,
   * and its value: records often come in runs that share a time, whose text is then compared in
   * words instead of parsed. The value depends on those bytes only.
   */
  private final byte[] lastIso = new byte[40];
  private int lastIsoLength;
  private long lastIsoMillis;

  private boolean sameAsLastIso(byte[] b, int p, int n) {
    byte[] last = lastIso;
    for (int k = 0; k < n - 8; k += 8) {
      if ((long) LONGS.get(b, p + k) != (long) LONGS.get(last, k)) return false;
    }
    return (long) LONGS.get(b, p + n - 8) == (long) LONGS.get(last, n - 8);
  }

  /** {@link #isoFromBytes} without the memory of the last time. */
  private long parseIsoBytes(byte[] b, int p, int end) {
    if (end - p < 21) return EventTimes.INVALID;
    if (b[p + 4] != '-' || b[p + 7] != '-' || (b[p + 10] | 0x20) != 't' || b[p + 13] != ':' || b[p + 16] != ':') {
      return EventTimes.INVALID;
    }
    int y0 = b[p] - '0';
    int y1 = b[p + 1] - '0';
    int y2 = b[p + 2] - '0';
    int y3 = b[p + 3] - '0';
    int mo0 = b[p + 5] - '0';
    int mo1 = b[p + 6] - '0';
    int d0 = b[p + 8] - '0';
    int d1 = b[p + 9] - '0';
    int h0 = b[p + 11] - '0';
    int h1 = b[p + 12] - '0';
    int mi0 = b[p + 14] - '0';
    int mi1 = b[p + 15] - '0';
    int s0 = b[p + 17] - '0';
    int s1 = b[p + 18] - '0';
    // one test for "all are digits": each is in 0..9 exactly when no value has a bit above 0..15
    // set and none exceeds 9
    if (((y0 | y1 | y2 | y3 | mo0 | mo1 | d0 | d1 | h0 | h1 | mi0 | mi1 | s0 | s1) & ~0xF) != 0) return EventTimes.INVALID;
    if (y0 > 9 || y1 > 9 || y2 > 9 || y3 > 9 || mo0 > 9 || mo1 > 9 || d0 > 9 || d1 > 9 || h0 > 9 || h1 > 9
        || mi0 > 9 || mi1 > 9 || s0 > 9 || s1 > 9) return EventTimes.INVALID;
    int year = ((y0 * 10 + y1) * 10 + y2) * 10 + y3;
    int month = mo0 * 10 + mo1;
    int day = d0 * 10 + d1;
    int hour = h0 * 10 + h1;
    int minute = mi0 * 10 + mi1;
    int second = s0 * 10 + s1;
    if (month < 1 || month > 12 || day < 1 || hour > 23 || minute > 59 || second > 59) return EventTimes.INVALID;
    if (day > 28 && day > EventTimes.daysInMonth(year, month)) return EventTimes.INVALID;
    int i = p + 19;
    int millis = 0;
    int z = b[i];
    if (z == '.' || z == ',') {
      i++;
      int start = i;
      while (i < end) {
        int d = b[i] - '0';
        if (d < 0 || d > 9) break;
        if (i - start < 3) millis = millis * 10 + d;
        i++;
      }
      int count = i - start;
      if (count == 0 || count > 9) return EventTimes.INVALID;
      for (int k = count; k < 3; k++) millis *= 10;
      if (i >= end) return EventTimes.INVALID;
      z = b[i];
    }
    int offsetSeconds;
    if (z == 'Z' || z == 'z') {
      if (i + 1 >= end || b[i + 1] != '"') return EventTimes.INVALID;
      isoEnd = i + 2;
      offsetSeconds = 0;
    } else if (z == '+' || z == '-') {
      if (end - i < 7 || b[i + 3] != ':' || b[i + 6] != '"') return EventTimes.INVALID;
      int oh0 = b[i + 1] - '0';
      int oh1 = b[i + 2] - '0';
      int om0 = b[i + 4] - '0';
      int om1 = b[i + 5] - '0';
      if (((oh0 | oh1 | om0 | om1) & ~0xF) != 0 || oh0 > 9 || oh1 > 9 || om0 > 9 || om1 > 9) return EventTimes.INVALID;
      int oh = oh0 * 10 + oh1;
      int om = om0 * 10 + om1;
      if (oh > 18 || om > 59 || (oh == 18 && om != 0)) return EventTimes.INVALID;
      offsetSeconds = (oh * 3600 + om * 60) * (z == '-' ? -1 : 1);
      isoEnd = i + 7;
    } else {
      return EventTimes.INVALID;
    }
    long days = daysOf(year, month, day);
    long secs = days * 86_400L + hour * 3600L + minute * 60L + second - offsetSeconds;
    return secs * 1000L + millis;
  }

  /** The last date converted by {@link #daysOf} (year * 512 + month * 32 + day; -1 = none) and its epoch day. */
  private int lastDate = -1;
  private long lastDays;

  /** {@link EventTimes#daysFromCivil} of a checked date, remembering the last one (records come in runs of one date). */
  private long daysOf(int year, int month, int day) {
    int key = (year << 9) | (month << 5) | day;
    if (key != lastDate) {
      lastDays = EventTimes.daysFromCivil(year, month, day);
      lastDate = key;
    }
    return lastDays;
  }

  private boolean acceptedTime(long ms) {
    return ms != EventTimes.INVALID && ms >= minTime && ms < endTime;
  }

  /** The value of the number text {@code b[i .. e)} (checked by {@link #numberEnd}). */
  private double numberValue(byte[] b, int i, int e) {
    int n = e - i;
    char[] s = scratch;
    for (int k = 0; k < n; k++) s[k] = (char) b[i + k];
    double v = JsonRecordDecoder.parseShortDecimal(s, 0, n);
    if (Double.isNaN(v)) {
      v = Double.parseDouble(new String(s, 0, n)); // long or exotic: correctly rounded (allocates)
    }
    return v;
  }

  // ------------------------------------------------------------------ grammar

  private static final byte[] TRUE = {'t', 'r', 'u', 'e'};
  private static final byte[] FALSE = {'f', 'a', 'l', 's', 'e'};
  private static final byte[] NULL = {'n', 'u', 'l', 'l'};

  /** The end of the literal {@code word} at {@code i}, or FAIL. The caller checks what follows. */
  private static int literal(byte[] b, int i, int end, byte[] word) {
    int n = word.length;
    if (end - i < n) return FAIL;
    for (int k = 0; k < n; k++) {
      if (b[i + k] != word[k]) return FAIL;
    }
    return i + n;
  }

  /**
   * The end of a JSON number {@code -?(0|[1-9][0-9]*)(\.[0-9]+)?([eE][+-]?[0-9]+)?} at {@code i},
   * or FAIL when it does not match or is longer than {@link #MAX_NUMBER_CHARS}. What follows is
   * checked by the caller (a separator or a closing bracket).
   */
  private static int numberEnd(byte[] b, int i, int end) {
    int start = i;
    if (i < end && b[i] == '-') i++;
    if (i >= end) return FAIL;
    if (b[i] == '0') {
      i++;
    } else if (b[i] >= '1' && b[i] <= '9') {
      i++;
      while (i < end && b[i] >= '0' && b[i] <= '9') i++;
    } else {
      return FAIL;
    }
    if (i < end && b[i] == '.') {
      i++;
      int d = i;
      while (i < end && b[i] >= '0' && b[i] <= '9') i++;
      if (i == d) return FAIL;
    }
    if (i < end && (b[i] == 'e' || b[i] == 'E')) {
      i++;
      if (i < end && (b[i] == '+' || b[i] == '-')) i++;
      int d = i;
      while (i < end && b[i] >= '0' && b[i] <= '9') i++;
      if (i == d) return FAIL;
    }
    if (i - start > MAX_NUMBER_CHARS) return FAIL;
    return i;
  }

  /**
   * The end of the well-formed UTF-8 sequence whose lead byte is at {@code i} (a byte of 0x80 or
   * above), or FAIL (Unicode Table 3-7, "Well-Formed UTF-8 Byte Sequences").
   */
  private static int utf8End(byte[] b, int i, int end) {
    int c = b[i] & 0xff;
    int n;
    int lo = 0x80;
    int hi = 0xBF;
    if (c >= 0xC2 && c <= 0xDF) {
      n = 1;
    } else if (c >= 0xE0 && c <= 0xEF) {
      n = 2;
      if (c == 0xE0) lo = 0xA0;
      if (c == 0xED) hi = 0x9F;
    } else if (c >= 0xF0 && c <= 0xF4) {
      n = 3;
      if (c == 0xF0) lo = 0x90;
      if (c == 0xF4) hi = 0x8F;
    } else {
      return FAIL;
    }
    if (end - i <= n) return FAIL;
    int c1 = b[i + 1] & 0xff;
    if (c1 < lo || c1 > hi) return FAIL;
    for (int k = 2; k <= n; k++) {
      int ck = b[i + k] & 0xff;
      if (ck < 0x80 || ck > 0xBF) return FAIL;
    }
    return i + 1 + n;
  }

  private static int hex(int c) {
    if (c >= '0' && c <= '9') return c - '0';
    if (c >= 'a' && c <= 'f') return c - 'a' + 10;
    if (c >= 'A' && c <= 'F') return c - 'A' + 10;
    return -1;
  }

  /**
   * Decodes the string whose content starts at {@code i} (after the opening quote) into
   * {@code dst}, as Jackson would (UTF-16 units; a four-byte sequence gives a surrogate pair).
   * Sets {@link #stringLength}.
   *
   * @param dst room for {@code limit} chars. Modified.
   * @return the position after the closing quote; FULL when the text has more than {@code limit}
   *     chars; FAIL when it is not a string this reader accepts
   */
  private int readString(byte[] b, int i, int end, char[] dst, int limit) {
    int n = 0;
    while (true) {
      // a run of plain ASCII, at most up to the limit
      int stop = Math.min(end, i + (limit - n));
      while (i < stop) {
        int c = b[i];
        if (CLASS[c & 0xff] != PLAIN) break;
        dst[n++] = (char) c;
        i++;
      }
      if (i >= end) return FAIL;
      int c = b[i];
      if (c >= 0x20 && c != '"' && c != '\\') {
        return FULL; // the plain run stopped at the limit
      } else if (c == '"') {
        stringLength = n;
        return i + 1;
      } else if (c == '\\') {
        if (i + 1 >= end) return FAIL;
        int e = b[i + 1];
        char ch;
        switch (e) {
          case '"': ch = '"'; break;
          case '\\': ch = '\\'; break;
          case '/': ch = '/'; break;
          case 'b': ch = '\b'; break;
          case 'f': ch = '\f'; break;
          case 'n': ch = '\n'; break;
          case 'r': ch = '\r'; break;
          case 't': ch = '\t'; break;
          case 'u': {
            if (end - i < 6) return FAIL;
            int v = 0;
            for (int k = 2; k < 6; k++) {
              int d = hex(b[i + k]);
              if (d < 0) return FAIL;
              v = (v << 4) | d;
            }
            if ((v & 0xF800) == 0xD800) {
              // a surrogate is text only as a high one escaped right before a low one; anything
              // else (a lone one) goes to Jackson, and the decoder rejects it
              if (v >= 0xDC00 || end - i < 12 || b[i + 6] != '\\' || b[i + 7] != 'u') return FAIL;
              int w = 0;
              for (int k = 8; k < 12; k++) {
                int d = hex(b[i + k]);
                if (d < 0) return FAIL;
                w = (w << 4) | d;
              }
              if (w < 0xDC00 || w > 0xDFFF) return FAIL;
              if (n + 2 > limit) return FULL;
              dst[n++] = (char) v;
              dst[n++] = (char) w;
              i += 12;
              continue;
            }
            ch = (char) v;
            i += 4;
            break;
          }
          default: return FAIL;
        }
        if (n >= limit) return FULL;
        dst[n++] = ch;
        i += 2;
      } else if (c < 0) {
        int k = utf8End(b, i, end);
        if (k < 0) return FAIL;
        int lead = b[i] & 0xff;
        int cp;
        switch (k - i) {
          case 2: cp = ((lead & 0x1F) << 6) | (b[i + 1] & 0x3F); break;
          case 3: cp = ((lead & 0x0F) << 12) | ((b[i + 1] & 0x3F) << 6) | (b[i + 2] & 0x3F); break;
          default: cp = ((lead & 0x07) << 18) | ((b[i + 1] & 0x3F) << 12) | ((b[i + 2] & 0x3F) << 6) | (b[i + 3] & 0x3F); break;
        }
        if (cp >= 0x10000) {
          if (n + 2 > limit) return FULL;
          dst[n++] = Character.highSurrogate(cp);
          dst[n++] = Character.lowSurrogate(cp);
        } else {
          if (n >= limit) return FULL;
          dst[n++] = (char) cp;
        }
        i = k;
      } else {
        return FAIL; // an unescaped control char
      }
    }
  }

  /** Like {@link #readString} without keeping the chars: the position after the closing quote, or FAIL. */
  private static int skipString(byte[] b, int i, int end) {
    while (true) {
      while (i < end && CLASS[b[i] & 0xff] == PLAIN) i++;
      if (i >= end) return FAIL;
      int c = b[i];
      if (c >= 0x20 && c != '"' && c != '\\') {
        i++;
      } else if (c == '"') {
        return i + 1;
      } else if (c == '\\') {
        if (i + 1 >= end) return FAIL;
        int e = b[i + 1];
        if (e == 'u') {
          if (end - i < 6) return FAIL;
          for (int k = 2; k < 6; k++) {
            if (hex(b[i + k]) < 0) return FAIL;
          }
          i += 6;
        } else if (e == '"' || e == '\\' || e == '/' || e == 'b' || e == 'f' || e == 'n' || e == 'r' || e == 't') {
          i += 2;
        } else {
          return FAIL;
        }
      } else if (c < 0) {
        i = utf8End(b, i, end);
        if (i < 0) return FAIL;
      } else {
        return FAIL;
      }
    }
  }

  /** Skips one value of an undeclared field (any JSON value), checking its syntax. */
  private static int skipValue(byte[] b, int i, int end, int depth) {
    int c = b[i];
    switch (c) {
      case '"': return skipString(b, i + 1, end);
      case 't': return literal(b, i, end, TRUE);
      case 'f': return literal(b, i, end, FALSE);
      case 'n': return literal(b, i, end, NULL);
      case '{': {
        if (depth >= MAX_DEPTH) return FAIL;
        i = skipWs(b, i + 1, end);
        if (i >= end) return FAIL;
        if (b[i] == '}') return i + 1;
        while (true) {
          if (b[i] != '"') return FAIL;
          i = skipString(b, i + 1, end);
          if (i < 0) return FAIL;
          i = skipWs(b, i, end);
          if (i >= end || b[i] != ':') return FAIL;
          i = skipWs(b, i + 1, end);
          if (i >= end) return FAIL;
          i = skipValue(b, i, end, depth + 1);
          if (i < 0) return FAIL;
          i = skipWs(b, i, end);
          if (i >= end) return FAIL;
          if (b[i] == '}') return i + 1;
          if (b[i] != ',') return FAIL;
          i = skipWs(b, i + 1, end);
          if (i >= end) return FAIL;
        }
      }
      case '[': {
        if (depth >= MAX_DEPTH) return FAIL;
        i = skipWs(b, i + 1, end);
        if (i >= end) return FAIL;
        if (b[i] == ']') return i + 1;
        while (true) {
          i = skipValue(b, i, end, depth + 1);
          if (i < 0) return FAIL;
          i = skipWs(b, i, end);
          if (i >= end) return FAIL;
          if (b[i] == ']') return i + 1;
          if (b[i] != ',') return FAIL;
          i = skipWs(b, i + 1, end);
          if (i >= end) return FAIL;
        }
      }
      default:
        if (c == '-' || (c >= '0' && c <= '9')) return numberEnd(b, i, end);
        return FAIL;
    }
  }
}
