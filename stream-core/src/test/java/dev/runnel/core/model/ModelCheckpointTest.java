package dev.runnel.core.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.EOFException;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.util.Arrays;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Model checkpoints cut short or tampered with are refused with an error that names the field and
 * the bad value; older format versions are still read. Offsets follow the format in docs/model.md
 * ("Checkpoint format").
 */
class ModelCheckpointTest {

  // offsets for p = 4: magic, version, settings (8 + 1 + 1 + 8 + 8), p, scale, the triangle (10
  // doubles), 4 x (z, theta, prior, log-decay), 6 scalars and 2 counts, ready, front, the order
  static final int P = 34;
  static final int SCALE = 38;
  static final int R = 46;
  static final int COLS = R + 10 * 8;
  static final int TAIL = COLS + 16 * 8;
  static final int FRONT = TAIL + 8 * 7 + 1;
  static final int ORDER = FRONT + 4;

  /** p = 4 with a one-hot level in the leading block, forgetting, the guard and re-basings. */
  static RlsModel sample() {
    RlsModel m = new RlsModel(3, ModelSettings.defaults());
    Random rnd = new Random(7);
    double[] x = new double[4];
    for (int i = 0; i < 50; i++) {
      if (i == 20) {
        m.columnAdded(3, "level", true);
      }
      if (i % 7 == 0) {
        m.columnRebased(1 + i % 2, 1.5, 0.25);
      }
      x[0] = 1;
      x[1] = rnd.nextGaussian();
      x[2] = rnd.nextGaussian();
      x[3] = i >= 20 && i % 2 == 0 ? 1 : 0;
      assertTrue(m.update(x, 1 + x[1] - x[2] + x[3] + 0.1 * rnd.nextGaussian(), 0.97));
    }
    return m;
  }

  static byte[] bytes(RlsModel m) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    m.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  static RlsModel read(byte[] b) throws IOException {
    return RlsModel.readFrom(new DataInputStream(new ByteArrayInputStream(b)));
  }

  static final double[] PROBE = {1, 0.5, -2, 1};

  @Test
  void theOffsetsAreRight_andARoundTripKeepsEveryBit() throws IOException {
    RlsModel m = sample();
    byte[] b = bytes(m);
    assertEquals(ORDER + 16, b.length);
    assertEquals(4, ByteBuffer.wrap(b).getInt(P));
    assertEquals(1, ByteBuffer.wrap(b).getInt(FRONT), "one column in the leading block");
    RlsModel r = read(b);
    assertArrayEquals(b, bytes(r));
    assertEquals(m.predict(PROBE), r.predict(PROBE));
  }

  @Test
  void cutShort_isRefusedAtEveryLength() throws IOException {
    byte[] b = bytes(sample());
    for (int len = 0; len < b.length; len++) {
      byte[] cut = Arrays.copyOf(b, len);
      EOFException e = assertThrows(EOFException.class, () -> read(cut), "cut at " + len);
      assertEquals("model checkpoint is truncated", e.getMessage());
    }
  }

  @Test
  void tamperedFields_areRefusedByNameAndValue() throws IOException {
    byte[] b = bytes(sample());
    refused(putInt(b, 0, 0x12345678), "not a model checkpoint: magic 0x12345678");
    refused(putInt(b, 4, 0), "model checkpoint format version 0 is not supported (this build reads 3)");
    refused(putInt(b, 4, 4), "model checkpoint format version 4 is not supported (this build reads 3)");
    refused(putDouble(b, 8, -1), "corrupt model checkpoint: priorVariance (model.prior_variance): -1.0");
    refused(putInt(b, P, 0), "corrupt model checkpoint: dimension 0");
    refused(putInt(b, P, (1 << 15) + 1), "corrupt model checkpoint: dimension 32769");
    refused(putDouble(b, SCALE, 0.0), "corrupt model checkpoint: factor scale 0.0");
    refused(putDouble(b, SCALE, Double.POSITIVE_INFINITY), "corrupt model checkpoint: factor scale Infinity");
    refused(putDouble(b, R, -1.0), "corrupt model checkpoint: pivot 0 -1.0");
    refused(putDouble(b, R, 0.0), "corrupt model checkpoint: pivot 0 0.0");
    refused(putDouble(b, R + 4 * 8, Double.NaN), "corrupt model checkpoint: pivot 1 NaN");
    refused(putDouble(b, R + 8, Double.NaN), "corrupt model checkpoint: factor entry (0, 1) NaN");
    refused(putDouble(b, COLS, Double.POSITIVE_INFINITY), "corrupt model checkpoint: z_0 Infinity");
    refused(putDouble(b, COLS + 32 + 16, -1.0), "corrupt model checkpoint: prior information of column 1 -1.0");
    refused(putDouble(b, COLS + 32 + 24, Double.NaN), "corrupt model checkpoint: log-decay at the refresh of column 1 NaN");
    refused(putDouble(b, TAIL, Double.NEGATIVE_INFINITY), "corrupt model checkpoint: log-decay -Infinity");
    refused(putLong(b, TAIL + 8, -1), "corrupt model checkpoint: refresh counter -1");
    refused(putDouble(b, TAIL + 16, -1e-3), "corrupt model checkpoint: rho^2 -0.001");
    refused(putDouble(b, TAIL + 24, Double.NaN), "corrupt model checkpoint: effective sample size NaN");
    refused(putDouble(b, TAIL + 32, -2.0), "corrupt model checkpoint: noise sum -2.0");
    refused(putDouble(b, TAIL + 40, Double.POSITIVE_INFINITY), "corrupt model checkpoint: noise weight Infinity");
    refused(putLong(b, TAIL + 48, -5), "corrupt model checkpoint: update count -5");
    refused(putInt(b, FRONT, 5), "corrupt model checkpoint: leading block of 5 columns in 4");
    refused(putInt(b, FRONT, -1), "corrupt model checkpoint: leading block of -1 columns in 4");
    int first = ByteBuffer.wrap(b).getInt(ORDER);
    refused(putInt(b, ORDER + 4, first), "corrupt model checkpoint: column order entry " + first + " at position 1");
    refused(putInt(b, ORDER, 4), "corrupt model checkpoint: column order entry 4 at position 0");
    refused(putInt(b, ORDER, -1), "corrupt model checkpoint: column order entry -1 at position 0");
  }

  @Test
  void aPendingRebasing_theSmallestDimension_andAnAllLevelLayout_roundTrip() throws IOException {
    RlsModel m = sample();
    RlsModel untouched = sample();
    m.columnRebased(2, 2.0, 0.5); // pending until the state is written
    RlsModel r = read(bytes(m));
    // the same record in the new basis: entry 2 becomes (x_2 - 0.5) / 2
    double[] rebased = {1, 0.5, (-2 - 0.5) / 2.0, 1};
    double want = untouched.predict(PROBE);
    assertEquals(want, r.predict(rebased), 1e-12 * Math.abs(want));
    RlsModel one = new RlsModel(1, ModelSettings.defaults());
    one.update(new double[] {1}, 2.0, 0.9);
    assertArrayEquals(bytes(one), bytes(read(bytes(one))), "p = 1, the constant alone");
    RlsModel levels = new RlsModel(0, ModelSettings.defaults().withConstantTerm(false));
    levels.columnAdded(0, "a", true);
    levels.columnAdded(1, "b", true);
    levels.update(new double[] {1, 0}, 2.0, 0.9);
    byte[] b = bytes(levels);
    assertEquals(2, ByteBuffer.wrap(b).getInt(b.length - 12), "every column in the leading block");
    assertArrayEquals(b, bytes(read(b)));
  }

  @Test
  void aDiffuseModelWithAnUnidentifiedColumn_isReadBack() throws IOException {
    RlsModel m = new RlsModel(2, ModelSettings.defaults().withPriorVariance(ModelSettings.DIFFUSE));
    m.update(new double[] {1, 0}, 1.0, 1.0);
    assertFalse(m.ready());
    byte[] b = bytes(m);
    RlsModel r = read(b);
    assertFalse(r.ready());
    assertArrayEquals(b, bytes(r));
  }

  /** A version-2 state has no column order (the layout's); version 1 has no factor scale either (1). */
  @Test
  void olderVersions_areReadInTheLayoutsOrder() throws IOException {
    RlsModel m = new RlsModel(3, ModelSettings.defaults());
    Random rnd = new Random(3);
    for (int i = 0; i < 30; i++) {
      double[] x = {1, rnd.nextGaussian(), rnd.nextGaussian()};
      m.update(x, x[1] - 2 * x[2], 1.0);
    }
    byte[] b = bytes(m);
    int tail = b.length - 4 - 3 * 4; // front and the order
    byte[] v2 = putInt(Arrays.copyOf(b, tail), 4, 2);
    double[] probe = {1, 0.3, 0.7};
    RlsModel r2 = read(v2);
    assertEquals(m.predict(probe), r2.predict(probe));
    assertArrayEquals(b, bytes(r2), "written back as version 3, the same state");
    assertEquals(1.0, ByteBuffer.wrap(b).getDouble(SCALE), "no forgetting: scale 1");
    byte[] v1 = new byte[tail - 8];
    System.arraycopy(v2, 0, v1, 0, SCALE);
    System.arraycopy(v2, SCALE + 8, v1, SCALE, tail - SCALE - 8);
    ByteBuffer.wrap(v1).putInt(4, 1);
    RlsModel r1 = read(v1);
    assertEquals(m.predict(probe), r1.predict(probe));
    assertArrayEquals(b, bytes(r1));
  }

  static void refused(byte[] b, String message) {
    IOException e = assertThrows(IOException.class, () -> read(b), message);
    assertTrue(e.getMessage().startsWith(message), "wanted \"" + message + "\", got \"" + e.getMessage() + "\"");
  }

  static byte[] putInt(byte[] b, int at, int v) {
    byte[] c = b.clone();
    ByteBuffer.wrap(c).putInt(at, v);
    return c;
  }

  static byte[] putLong(byte[] b, int at, long v) {
    byte[] c = b.clone();
    ByteBuffer.wrap(c).putLong(at, v);
    return c;
  }

  static byte[] putDouble(byte[] b, int at, double v) {
    byte[] c = b.clone();
    ByteBuffer.wrap(c).putDouble(at, v);
    return c;
  }
}
