package dev.runnel.core.drift;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.EOFException;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.nio.charset.StandardCharsets;
import org.junit.jupiter.api.Test;

/** Drift-monitor checkpoints cut short or tampered with are refused with an error that names what is wrong. */
class DriftCheckpointTest {

  /** A monitor with an error-level alarm and a weight alarm listed. */
  static DriftMonitor withAlarms() {
    DriftMonitor m = new DriftMonitor(DriftLifeCycleTest.errorSettings());
    for (int call = 1; call <= 10; call++) {
      m.observeError(0.5, 1.0, 1.0, call, call);
    }
    assertTrue(m.observeError(8.0, 1.0, 1.0, 11, 11));
    m.observeSnapshot(0, 100, 11, new String[] {"a"}, new double[] {0.0}, new double[] {1.0}, 1);
    m.observeSnapshot(1, 200, 12, new String[] {"a"}, new double[] {10.0}, new double[] {1.0}, 1);
    assertEquals(2, m.alarms().size(), m.alarms().toString());
    return m;
  }

  static byte[] bytes(DriftMonitor m) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    m.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  static DriftMonitor read(byte[] b) throws IOException {
    DriftMonitor m = new DriftMonitor(DriftLifeCycleTest.errorSettings());
    m.readFrom(new DataInputStream(new ByteArrayInputStream(b)));
    return m;
  }

  @Test
  void roundTrip() throws IOException {
    DriftMonitor m = withAlarms();
    byte[] b = bytes(m);
    DriftMonitor r = read(b);
    assertArrayEquals(b, bytes(r));
    assertEquals(m.alarms(), r.alarms());
  }

  @Test
  void cutShort_isRefusedAtEveryLength() throws IOException {
    byte[] b = bytes(withAlarms());
    for (int len = 0; len < b.length; len++) {
      byte[] cut = java.util.Arrays.copyOf(b, len);
      EOFException e = assertThrows(EOFException.class, () -> read(cut), "cut at " + len);
      assertEquals("drift checkpoint is truncated", e.getMessage());
    }
  }

  @Test
  void tamperedCountsKindsAndDirections_areRefusedByName() throws IOException {
    byte[] b = bytes(withAlarms());
    // weightFired (8), errorFired (8), refNoiseSd (8), sinceRestart (8), test present (1),
    // the test: count (8) and 7 doubles, then the history's size (4)
    refused(putLong(b, 0, -1), "weight alarms fired -1");
    refused(putLong(b, 8, -2), "error alarms fired -2");
    refused(putLong(b, 24, -3), "records since the error test restarted -3");
    refused(putLong(b, 33, -4), "error test values -4");
    refused(putInt(b, 33 + 64, -5), "history snapshots -5");
    refused(putInt(b, 33 + 64 + 4, -6), "weights in a baseline -6");
    refused(replace(b, "error_level", "error_lever"), "an error-level alarm of kind error_lever");
    refused(replace(b, "\u0000\u0006weight", "\u0000\u0006weighs"), "a weight alarm of kind weighs");
    refused(replace(b, "\u0000\u0002up", "\u0000\u0002uq"), "alarm direction \"uq\"");
  }

  static void refused(byte[] b, String why) {
    IOException e = assertThrows(IOException.class, () -> read(b), why);
    assertEquals("corrupt drift checkpoint: " + why, e.getMessage());
  }

  static byte[] putLong(byte[] b, int at, long v) {
    byte[] c = b.clone();
    ByteBuffer.wrap(c).putLong(at, v);
    return c;
  }

  static byte[] putInt(byte[] b, int at, int v) {
    byte[] c = b.clone();
    ByteBuffer.wrap(c).putInt(at, v);
    return c;
  }

  /** The first occurrence of {@code from}'s bytes replaced by {@code to}'s (same length). */
  static byte[] replace(byte[] b, String from, String to) {
    byte[] f = from.getBytes(StandardCharsets.ISO_8859_1);
    byte[] t = to.getBytes(StandardCharsets.ISO_8859_1);
    for (int i = 0; i + f.length <= b.length; i++) {
      if (java.util.Arrays.equals(b, i, i + f.length, f, 0, f.length)) {
        byte[] c = b.clone();
        System.arraycopy(t, 0, c, i, t.length);
        return c;
      }
    }
    throw new AssertionError("not in the checkpoint: " + from);
  }
}
