package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayOutputStream;
import java.io.DataOutputStream;
import java.io.EOFException;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.util.Arrays;
import java.util.Random;
import java.util.function.Consumer;
import org.junit.jupiter.api.Test;

/**
 * {@link ModelShare}'s values and binary form, against an encoder written here from the format
 * described in docs/model.md ("What a share holds": magic {@code RNS1}, version 1, the body's
 * length, the body, the CRC-32 of the body; the body's fields in the order of the class javadoc,
 * each as {@link DataOutputStream} writes it, the CRC-32 as {@link java.util.zip.CRC32} computes it).
 * Every field of the body is refused when out of range, with a valid checksum (so the value
 * check, not the checksum, must catch it), by name; the information is compared with
 * {@code S^T S} and {@code S^T u} multiplied out here.
 */
class ModelShareFormTest {

  /** One share's fields, as plain values; {@link #body()} writes them in the documented order. */
  static final class Fields {
    int source = 3;
    long sequence = 7;
    long time = 1_700_000_123_456L;
    int p = 3;
    int constant = 0;
    String[] names = {"constant", "price", "site=north"};
    double[] offsets = {0.0, 12.5, 0.0};
    double[] scales = {1.0, 2.25, 1.0};
    boolean[] fixed = {false, false, true};
    double[][] rows = {{4.0, 1.5, -0.5}, {Double.NaN, 3.0, 0.25}, {Double.NaN, Double.NaN, 0.75}};
    double[] targets = {2.0, -1.0, 0.5};
    double rss = 1.25;
    double n = 9.5;
    /** Bytes written after the share, inside the body. */
    byte[] extra = new byte[0];

    byte[] body() {
      try {
        ByteArrayOutputStream b = new ByteArrayOutputStream();
        DataOutputStream o = new DataOutputStream(b);
        o.writeInt(source);
        o.writeLong(sequence);
        o.writeLong(time);
        o.writeInt(p);
        o.writeInt(constant);
        for (int q = 0; q < names.length; q++) {
          o.writeUTF(names[q]);
          o.writeDouble(offsets[q]);
          o.writeDouble(scales[q]);
          o.writeBoolean(fixed[q]);
        }
        for (int i = 0; i < rows.length; i++) {
          for (int j = i; j < rows.length; j++) {
            o.writeDouble(rows[i][j]);
          }
          o.writeDouble(targets[i]);
        }
        o.writeDouble(rss);
        o.writeDouble(n);
        o.write(extra);
        o.flush();
        return b.toByteArray();
      } catch (IOException e) {
        throw new UncheckedIOException(e);
      }
    }

    byte[] bytes() {
      return frame(body());
    }

    ModelShare share() {
      return new ModelShare(source, sequence, time, names, offsets, scales, fixed, constant, rows, targets, rss, n);
    }
  }

  /** Magic, version 1, length, body, CRC-32 of the body (docs/model.md). */
  static byte[] frame(byte[] body) {
    try {
      java.util.zip.CRC32 crc = new java.util.zip.CRC32();
      crc.update(body);
      ByteArrayOutputStream b = new ByteArrayOutputStream();
      DataOutputStream o = new DataOutputStream(b);
      o.writeBytes("RNS1");
      o.writeInt(1);
      o.writeInt(body.length);
      o.write(body);
      o.writeInt((int) crc.getValue());
      o.flush();
      return b.toByteArray();
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  static Fields with(Consumer<Fields> change) {
    Fields f = new Fields();
    change.accept(f);
    return f;
  }

  /** The bytes are refused with an IOException whose message holds every one of {@code words}. */
  static void refused(Fields f, String... words) {
    IOException e = assertThrows(IOException.class, () -> ModelShare.fromBytes(f.bytes()));
    for (String w : words) {
      assertTrue(e.getMessage().contains(w), "expected \"" + w + "\" in: " + e.getMessage());
    }
  }

  /** The constructor refuses the fields with an IllegalArgumentException naming every one of {@code words}. */
  static void constructorRefuses(Fields f, String... words) {
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class, f::share);
    for (String w : words) {
      assertTrue(e.getMessage().contains(w), "expected \"" + w + "\" in: " + e.getMessage());
    }
  }

  @Test
  void theBinaryFormIsTheDocumentedOneAndReadsBackEveryField() throws IOException {
    Fields f = new Fields();
    byte[] want = f.bytes();
    assertArrayEquals(want, f.share().toBytes(), "toBytes differs from the documented layout");
    ModelShare s = ModelShare.fromBytes(want);
    assertEquals(3, s.source());
    assertEquals(7L, s.sequence());
    assertEquals(1_700_000_123_456L, s.eventTimeMillis());
    assertEquals(3, s.dimension());
    assertEquals(0, s.constant());
    for (int q = 0; q < 3; q++) {
      assertEquals(f.names[q], s.name(q));
      assertEquals(f.offsets[q], s.offset(q), 0.0);
      assertEquals(f.scales[q], s.scale(q), 0.0);
      assertEquals(f.fixed[q], s.fixed(q));
      assertEquals(f.targets[q], s.target(q), 0.0);
      for (int j = 0; j < 3; j++) {
        assertEquals(j < q ? 0.0 : f.rows[q][j], s.factor(q, j), 0.0, "factor (" + q + ", " + j + ")");
      }
    }
    assertEquals(1.25, s.residualSumOfSquares(), 0.0);
    assertEquals(9.5, s.sampleSize(), 0.0);
    assertArrayEquals(want, s.toBytes());
  }

  @Test
  void randomSharesRoundTripAndTheirInformationIsSTransposeS() throws IOException {
    Random rnd = new Random(21);
    for (int round = 0; round < 30; round++) {
      Fields f = new Fields();
      int p = round % 7;
      f.p = p;
      f.source = rnd.nextInt(5);
      f.sequence = 1 + rnd.nextInt(1000);
      f.time = rnd.nextLong();
      f.constant = p == 0 ? -1 : rnd.nextInt(p + 1) - 1;
      f.names = new String[p];
      f.offsets = new double[p];
      f.scales = new double[p];
      f.fixed = new boolean[p];
      f.rows = new double[p][p];
      f.targets = new double[p];
      for (int q = 0; q < p; q++) {
        f.names[q] = "c" + q + (rnd.nextBoolean() ? "é" : "");
        f.offsets[q] = rnd.nextGaussian() * 10;
        f.scales[q] = Math.exp(rnd.nextGaussian());
        f.fixed[q] = rnd.nextBoolean();
        f.targets[q] = rnd.nextGaussian();
        for (int j = 0; j < p; j++) {
          f.rows[q][j] = rnd.nextGaussian(); // below the diagonal: ignored
        }
      }
      f.rss = rnd.nextDouble();
      f.n = rnd.nextDouble() * 100;
      ModelShare s = f.share();
      // what the constructor keeps is exactly the upper triangle: the documented bytes
      Fields upper = new Fields();
      upper.p = p;
      upper.source = f.source;
      upper.sequence = f.sequence;
      upper.time = f.time;
      upper.constant = f.constant;
      upper.names = f.names;
      upper.offsets = f.offsets;
      upper.scales = f.scales;
      upper.fixed = f.fixed;
      upper.targets = f.targets;
      upper.rss = f.rss;
      upper.n = f.n;
      upper.rows = f.rows;
      byte[] bytes = upper.bytes();
      assertArrayEquals(bytes, s.toBytes(), "round " + round);
      ModelShare back = ModelShare.fromBytes(bytes);
      assertArrayEquals(bytes, back.toBytes(), "round " + round);
      // S^T S and S^T u, with S's lower triangle taken as 0 (multiplied out here)
      double[] info = back.information();
      double[] eta = back.informationVector();
      assertEquals(p * p, info.length);
      assertEquals(p, eta.length);
      for (int i = 0; i < p; i++) {
        double e = 0;
        for (int k = 0; k <= i; k++) {
          e += f.rows[k][i] * f.targets[k];
        }
        assertEquals(e, eta[i], 1e-12 * (1 + Math.abs(e)), "dEta " + i);
        for (int j = 0; j < p; j++) {
          double a = 0;
          for (int k = 0; k < p; k++) {
            double ski = k <= i ? f.rows[k][i] : 0.0;
            double skj = k <= j ? f.rows[k][j] : 0.0;
            a += ski * skj;
          }
          assertEquals(a, info[i * p + j], 1e-12 * (1 + Math.abs(a)), "dLambda (" + i + ", " + j + ")");
        }
      }
    }
  }

  @Test
  void namesOfAnyLengthGiveTheDocumentedBytes() throws IOException {
    // column names from 1 to 400 chars (some of 2 and 3 UTF-8 bytes each), 1 to 4 columns: the
    // bytes of the names, of the triangle and of the sums may each come past any first guess of
    // the size; every one is the documented encoding and reads back
    Random rnd = new Random(9);
    for (int p = 1; p <= 4; p++) {
      for (int len = 1; len <= 400; len += 1 + len / 8) {
        Fields f = new Fields();
        f.p = p;
        f.constant = -1;
        f.names = new String[p];
        f.offsets = new double[p];
        f.scales = new double[p];
        f.fixed = new boolean[p];
        f.rows = new double[p][p];
        f.targets = new double[p];
        for (int q = 0; q < p; q++) {
          StringBuilder b = new StringBuilder().append(q);
          while (b.length() < len) {
            b.append(rnd.nextInt(5) == 0 ? (rnd.nextBoolean() ? 'é' : '€') : (char) ('a' + rnd.nextInt(26)));
          }
          f.names[q] = b.toString();
          f.offsets[q] = rnd.nextGaussian();
          f.scales[q] = 1 + rnd.nextDouble();
          f.targets[q] = rnd.nextGaussian();
          for (int j = q; j < p; j++) {
            f.rows[q][j] = rnd.nextGaussian();
          }
        }
        byte[] want = f.bytes();
        assertArrayEquals(want, f.share().toBytes(), p + " columns, names of " + len);
        assertArrayEquals(want, ModelShare.fromBytes(want).toBytes(), p + " columns, names of " + len);
      }
    }
  }

  @Test
  void theConstructorCopiesItsArrays() {
    Fields f = new Fields();
    ModelShare s = f.share();
    byte[] before = s.toBytes();
    f.names[1] = "other";
    f.offsets[1] = 99;
    f.scales[1] = 99;
    f.fixed[1] = true;
    f.rows[0][1] = 99;
    f.targets[0] = 99;
    assertArrayEquals(before, s.toBytes(), "the share changed with its caller's arrays");
    double[] info = s.information();
    info[0] = 1e9;
    assertEquals(16.0, s.information()[0], 0.0, "information() hands out the share's own array");
  }

  @Test
  void everyFieldOutOfRangeIsRefusedByNameWithAValidChecksum() {
    refused(with(f -> f.source = -1), "corrupt", "source partition -1");
    refused(with(f -> f.sequence = 0), "corrupt", "sequence 0");
    refused(with(f -> f.sequence = -5), "corrupt", "sequence -5");
    refused(with(f -> f.constant = -2), "corrupt", "constant position -2");
    refused(with(f -> f.constant = 3), "corrupt", "constant position 3");
    refused(with(f -> f.names = new String[] {"constant", "price", "price"}), "corrupt", "column name price");
    refused(with(f -> f.names = new String[] {"constant", "", "x"}), "corrupt", "column name");
    refused(with(f -> f.offsets[1] = Double.NaN), "corrupt", "offset of column price NaN");
    refused(with(f -> f.offsets[2] = Double.NEGATIVE_INFINITY), "corrupt", "offset of column site=north");
    refused(with(f -> f.scales[1] = 0.0), "corrupt", "scale of column price 0.0");
    refused(with(f -> f.scales[1] = -2.0), "corrupt", "scale of column price -2.0");
    refused(with(f -> f.scales[1] = Double.POSITIVE_INFINITY), "corrupt", "scale of column price Infinity");
    refused(with(f -> f.scales[1] = Double.NaN), "corrupt", "scale of column price NaN");
    refused(with(f -> f.targets[2] = Double.NaN), "corrupt", "target of row 2");
    refused(with(f -> f.targets[0] = Double.POSITIVE_INFINITY), "corrupt", "target of row 0");
    for (int i = 0; i < 3; i++) {
      for (int j = i; j < 3; j++) {
        final int fi = i;
        final int fj = j;
        refused(with(f -> f.rows[fi][fj] = Double.NaN), "corrupt", "factor entry (" + i + ", " + j + ")");
        refused(with(f -> f.rows[fi][fj] = Double.NEGATIVE_INFINITY), "factor entry (" + i + ", " + j + ")");
      }
    }
    refused(with(f -> f.rss = -1e-300), "corrupt", "residual sum of squares");
    refused(with(f -> f.rss = Double.POSITIVE_INFINITY), "residual sum of squares");
    refused(with(f -> f.rss = Double.NaN), "residual sum of squares");
    refused(with(f -> f.n = -1.0), "corrupt", "sample size -1.0");
    refused(with(f -> f.n = Double.POSITIVE_INFINITY), "sample size");
    refused(with(f -> f.n = Double.NaN), "sample size");
  }

  @Test
  void theEndsOfEachRangeAreRead() throws IOException {
    ModelShare s = ModelShare.fromBytes(with(f -> {
      f.source = 0;
      f.sequence = 1;
      f.constant = -1;
      f.rss = 0.0;
      f.n = 0.0;
      f.scales[1] = Double.MIN_VALUE;
      f.offsets[1] = -Double.MAX_VALUE;
      f.time = Long.MIN_VALUE;
    }).bytes());
    assertEquals(0, s.source());
    assertEquals(1, s.sequence());
    assertEquals(-1, s.constant());
    assertEquals(0.0, s.residualSumOfSquares(), 0.0);
    assertEquals(0.0, s.sampleSize(), 0.0);
    assertEquals(Double.MIN_VALUE, s.scale(1), 0.0);
    assertEquals(Long.MIN_VALUE, s.eventTimeMillis());
    assertEquals(2, ModelShare.fromBytes(with(f -> f.constant = 2).bytes()).constant());
    // no columns at all
    ModelShare empty = ModelShare.fromBytes(with(f -> {
      f.p = 0;
      f.constant = -1;
      f.names = new String[0];
      f.offsets = new double[0];
      f.scales = new double[0];
      f.fixed = new boolean[0];
      f.rows = new double[0][0];
      f.targets = new double[0];
    }).bytes());
    assertEquals(0, empty.dimension());
    assertEquals(0, empty.information().length);
  }

  @Test
  void aColumnCountTheBodyCannotHoldIsRefusedBeforeAnythingIsAllocated() {
    // p is checked against the body's length: a triangle of p(p+1)/2 doubles must fit in it
    refused(with(f -> f.p = -1), "corrupt model share", "-1 columns");
    refused(with(f -> f.p = 1 << 15 | 1), "corrupt model share", (1 << 15 | 1) + " columns");
    refused(with(f -> f.p = Integer.MAX_VALUE), "corrupt model share", Integer.MAX_VALUE + " columns");
    refused(with(f -> f.p = 40), "corrupt model share", "40 columns in a body of");
    // the share's body is 196 bytes (28 of fields, 80 of column names and bases, 88 of doubles):
    // 7 columns need a triangle of 28 doubles, 224 bytes; 6 need 168, which fits the length
    assertEquals(196, new Fields().body().length);
    refused(with(f -> f.p = 7), "corrupt model share", "7 columns in a body of 196 bytes");
    refused(with(f -> f.p = 6), "model share is truncated");
    // a count that fits the length but not the share that follows: the body ends too soon
    refused(with(f -> f.p = 4), "model share is truncated", "body ends before the share does");
  }

  @Test
  void aBodyLongerOrShorterThanItsShareIsRefused() throws IOException {
    Fields longer = with(f -> f.extra = new byte[] {0, 0, 0});
    IOException e = assertThrows(IOException.class, () -> ModelShare.fromBytes(longer.bytes()));
    assertTrue(e.getMessage().contains("3 bytes left in the body"), e.getMessage());
    byte[] body = new Fields().body();
    for (int cut = 0; cut < body.length; cut++) {
      byte[] shortBody = Arrays.copyOf(body, cut);
      IOException t = assertThrows(IOException.class, () -> ModelShare.fromBytes(frame(shortBody)), "cut " + cut);
      assertTrue(t instanceof EOFException || t.getMessage().contains("corrupt"), cut + ": " + t.getMessage());
      assertTrue(t.getMessage().contains("truncated") || t.getMessage().contains("columns in a body"),
          cut + ": " + t.getMessage());
    }
  }

  @Test
  void aBodyCutRightAfterWhereItsTriangleWouldEndIsTruncated() {
    // 3 columns: a triangle of 6 doubles, 48 bytes; a body of exactly 48 bytes passes the column
    // count's bound and ends inside the column names
    byte[] cut = Arrays.copyOf(new Fields().body(), 48);
    IOException e = assertThrows(IOException.class, () -> ModelShare.fromBytes(frame(cut)));
    assertTrue(e.getMessage().contains("model share is truncated"), e.getMessage());
    byte[] shorter = Arrays.copyOf(cut, 47);
    IOException c = assertThrows(IOException.class, () -> ModelShare.fromBytes(frame(shorter)));
    assertTrue(c.getMessage().contains("3 columns in a body of 47 bytes"), c.getMessage());
  }

  @Test
  void theHeaderIsCheckedFieldByField() {
    byte[] good = new Fields().bytes();
    byte[] negative = good.clone();
    negative[8] = (byte) 0xff; // body length -...
    IOException e = assertThrows(IOException.class, () -> ModelShare.fromBytes(negative));
    assertTrue(e.getMessage().contains("body length -"), e.getMessage());
    assertFalse(e instanceof EOFException);
    byte[] twelve = Arrays.copyOf(good, 12);
    IOException t = assertThrows(IOException.class, () -> ModelShare.fromBytes(twelve));
    assertTrue(t.getMessage().contains("truncated: 12 bytes, its header says " + good.length), t.getMessage());
    byte[] eleven = Arrays.copyOf(good, 11);
    IOException h = assertThrows(IOException.class, () -> ModelShare.fromBytes(eleven));
    assertTrue(h.getMessage().contains("11 bytes, the header alone is 12"), h.getMessage());
    byte[] oneMore = Arrays.copyOf(good, good.length + 1);
    IOException m = assertThrows(IOException.class, () -> ModelShare.fromBytes(oneMore));
    assertTrue(m.getMessage().contains("1 bytes after its end (" + good.length + " expected)"), m.getMessage());
    for (int at = good.length - 4; at < good.length; at++) {
      byte[] crc = good.clone();
      crc[at] ^= 1;
      IOException c = assertThrows(IOException.class, () -> ModelShare.fromBytes(crc), "byte " + at);
      assertTrue(c.getMessage().contains("checksum"), c.getMessage());
    }
    byte[] v0 = good.clone();
    v0[7] = 0;
    assertTrue(assertThrows(IOException.class, () -> ModelShare.fromBytes(v0)).getMessage().contains("version 0"));
    byte[] v2 = good.clone();
    v2[7] = 2;
    assertTrue(assertThrows(IOException.class, () -> ModelShare.fromBytes(v2)).getMessage().contains("version 2"));
  }

  @Test
  void theConstructorRefusesEachValueByName() {
    constructorRefuses(with(f -> f.source = -1), "source partition -1");
    constructorRefuses(with(f -> f.sequence = 0), "sequence 0");
    constructorRefuses(with(f -> f.constant = 3), "constant position 3");
    constructorRefuses(with(f -> f.constant = -2), "constant position -2");
    constructorRefuses(with(f -> f.offsets = new double[2]), "array lengths");
    constructorRefuses(with(f -> f.scales = new double[4]), "array lengths");
    constructorRefuses(with(f -> f.fixed = new boolean[2]), "array lengths");
    constructorRefuses(with(f -> f.targets = new double[2]), "array lengths");
    constructorRefuses(with(f -> f.rows = new double[2][3]), "array lengths");
    constructorRefuses(with(f -> f.rows[1] = new double[2]), "length of row 1");
    constructorRefuses(with(f -> f.names[2] = null), "column name null");
    constructorRefuses(with(f -> f.rss = -0.5), "residual sum of squares -0.5");
    constructorRefuses(with(f -> f.n = Double.NEGATIVE_INFINITY), "sample size");
    constructorRefuses(with(f -> f.rows[2][2] = Double.POSITIVE_INFINITY), "factor entry (2, 2)");
    constructorRefuses(with(f -> f.scales[0] = -0.0), "scale of column constant");
    // the column limit is checked before the arrays: 2^15 columns pass it, one more does not
    String[] many = new String[(1 << 15) + 1];
    Arrays.fill(many, "c");
    constructorRefuses(with(f -> f.names = many), "column count 32769");
    String[] most = Arrays.copyOf(many, 1 << 15);
    constructorRefuses(with(f -> f.names = most), "array lengths for columns 32768");
    // an entry below the diagonal is ignored, whatever it holds
    Fields below = with(f -> f.rows[2][0] = Double.NaN);
    assertEquals(0.0, below.share().factor(2, 0), 0.0);
  }
}
