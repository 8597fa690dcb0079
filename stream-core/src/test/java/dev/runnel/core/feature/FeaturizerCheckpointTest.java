package dev.runnel.core.feature;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RecordSchema;
import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.EOFException;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.util.Arrays;
import org.junit.jupiter.api.Test;

/**
 * Featurizer checkpoints (with vocabularies, scalers and cross cells) cut short, tampered with in
 * their structure, or with any byte changed: refused with an {@link IOException} or an
 * {@link IllegalArgumentException} that says what is wrong, never another exception, and when
 * accepted, a state that writes and reads back consistently.
 */
class FeaturizerCheckpointTest {

  static final dev.runnel.core.config.PipelineConfig CONFIG = TestConfigs.parse(FeaturizerTest.YAML);

  static Featurizer fresh() {
    return new Featurizer(CONFIG);
  }

  static byte[] sample() throws IOException {
    Featurizer a = fresh();
    RecordSchema s = a.config().input().schema();
    FeaturizerTest.Stream stream = new FeaturizerTest.Stream(s, 5L);
    EventRecord r = new EventRecord(s);
    double[] row = new double[a.maxDimension()];
    for (int n = 0; n < 400; n++) {
      long t = stream.next(r);
      assertNull(a.check(r, true), a.lastDetail());
      a.learnAndEncode(r, t, t, row);
    }
    return bytes(a);
  }

  static byte[] bytes(Featurizer f) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    f.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  static Featurizer read(byte[] b) throws IOException {
    Featurizer f = fresh();
    f.readFrom(new DataInputStream(new ByteArrayInputStream(b)));
    return f;
  }

  @Test
  void cutShort_isRefusedAtEveryLength() throws IOException {
    byte[] b = sample();
    assertArrayEquals(b, bytes(read(b)), "the whole state reads back");
    for (int len = 0; len < b.length; len++) {
      byte[] cut = Arrays.copyOf(b, len);
      EOFException e = assertThrows(EOFException.class, () -> read(cut), "cut at " + len + " of " + b.length);
      assertEquals("feature checkpoint is truncated", e.getMessage());
    }
  }

  @Test
  void theLastFieldsTampered_areRefusedByName() throws IOException {
    byte[] b = sample();
    int dim = ByteBuffer.wrap(b).getInt(b.length - 4);
    byte[] c = b.clone();
    ByteBuffer.wrap(c).putInt(b.length - 4, dim + 1);
    IOException e = assertThrows(IOException.class, () -> read(c));
    assertEquals("corrupt checkpoint: dimension " + (dim + 1) + ", rebuilt " + dim, e.getMessage());
    byte[] v = b.clone();
    ByteBuffer.wrap(v).putInt(0, 99);
    IllegalArgumentException a = assertThrows(IllegalArgumentException.class, () -> read(v));
    assertTrue(a.getMessage().contains("checkpoint format 99 is not supported"), a.getMessage());
  }

  /** Every byte set to 0x00, 0xFF and with its lowest and highest bit flipped. */
  @Test
  void anyByteChanged_isRefusedCleanly_orReadsBackConsistently() throws IOException {
    byte[] b = sample();
    int refused = 0;
    int accepted = 0;
    for (int i = 0; i < b.length; i++) {
      for (int variant = 0; variant < 4; variant++) {
        byte[] c = b.clone();
        c[i] = switch (variant) {
          case 0 -> 0;
          case 1 -> (byte) 0xFF;
          case 2 -> (byte) (b[i] ^ 0x01);
          default -> (byte) (b[i] ^ 0x80);
        };
        if (c[i] == b[i]) {
          continue;
        }
        Featurizer f;
        try {
          f = read(c);
        } catch (IOException | IllegalArgumentException e) {
          assertTrue(e.getMessage() != null && !e.getMessage().isEmpty(), "byte " + i + ": an error without a message");
          refused++;
          continue;
        } catch (RuntimeException e) {
          throw new AssertionError("byte " + i + " variant " + variant + ": " + e, e);
        }
        accepted++;
        byte[] back = bytes(f);
        assertArrayEquals(back, bytes(read(back)), "byte " + i + ": an accepted state reads back as written");
      }
    }
    assertTrue(refused > 1000 && accepted > 1000, refused + " refused, " + accepted + " accepted");
  }
}
