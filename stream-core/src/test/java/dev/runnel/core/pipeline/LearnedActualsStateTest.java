package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import org.junit.jupiter.api.Test;

/**
 * What the memory of learned actuals keeps besides its keys (the survivors of mutation testing in
 * {@link LearnedActuals} that {@link LearnedActualsTest}'s reference does not see): the row kept for
 * {@code corrections: replace} in column ids and first-basis values, with its log-forgetting and
 * model generation, through a checkpoint; a checkpoint read into a memory that holds keys replaces
 * them; an empty memory, a full one, a key of empty text and a kept row with no non-zero entry read
 * back; one key more than {@code max_learned_actuals}, or a memory of the other policy (named in the
 * message), is refused. Expected values are worked by hand.
 */
class LearnedActualsStateTest {

  private static byte[] bytes(LearnedActuals m) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    m.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  private static void read(LearnedActuals m, byte[] bytes) throws IOException {
    m.readFrom(new DataInputStream(new ByteArrayInputStream(bytes)));
  }

  private static int find(LearnedActuals m, String key, long target) {
    char[] k = key.toCharArray();
    return m.find(k, k.length, target, Long.MIN_VALUE);
  }

  private static int add(LearnedActuals m, String key, long target, double v) {
    char[] k = key.toCharArray();
    return m.add(k, k.length, target, v, Long.MIN_VALUE);
  }

  @Test
  void aKeptRowIsInColumnIdsAndFirstBasesWithItsDecayAndGenerationThroughACheckpoint() throws IOException {
    ColumnBases bases = new ColumnBases(5);
    bases.forwardTo(dev.runnel.core.layout.LayoutListener.NONE);
    bases.columnRemoved(1); // ids now 0, 2, 3, 4
    bases.columnRebased(1, 2.0, 0.5); // the column with id 2: x = (x0 - 0.5) / 2, so x0 = 2 x + 0.5
    LearnedActuals m = new LearnedActuals(10, 1000, true);
    int e = add(m, "hub-1", 100, 7.5);
    m.keepRow(e, new double[] {1.0, 3.0, 0.0, -2.0, 99.0}, 4, bases, -0.75, 5); // the 5th entry is past the dimension
    int f = add(m, "hub-2", 100, 1.0);
    m.keepRow(f, new double[] {0.0, 0.0, 0.0, 0.0}, 4, bases, -1.5, 6); // no non-zero entry
    add(m, "hub-3", 200, 2.0); // no row kept at all

    LearnedActuals back = new LearnedActuals(10, 1000, true);
    read(back, bytes(m));
    for (LearnedActuals x : new LearnedActuals[] {m, back}) {
      int a = find(x, "hub-1", 100);
      assertEquals(7.5, x.value(a));
      assertEquals(3, x.rowLength(a));
      assertEquals(0, x.rowId(a, 0));
      assertEquals(1.0, x.rowValue(a, 0));
      assertEquals(2, x.rowId(a, 1));
      assertEquals(6.5, x.rowValue(a, 1), "2 * 3 + 0.5 in the first basis");
      assertEquals(4, x.rowId(a, 2));
      assertEquals(-2.0, x.rowValue(a, 2));
      assertEquals(-0.75, x.logDecay(a));
      assertEquals(5, x.generation(a));
      int b = find(x, "hub-2", 100);
      assertEquals(0, x.rowLength(b));
      assertEquals(-1.5, x.logDecay(b));
      assertEquals(6, x.generation(b));
      assertEquals(0, x.rowLength(find(x, "hub-3", 200)));
    }
    // a longer row later replaces a shorter one in place
    m.keepRow(f, new double[] {1, 2, 3, 4, 5, 6, 7, 8, 9, 10}, 4, bases, 0.0, 7);
    assertEquals(4, m.rowLength(f));
    assertEquals(2 * 2.0 + 0.5, m.rowValue(f, 1));
    assertEquals(7, m.generation(f));
  }

  @Test
  void aCheckpointReadIntoAMemoryThatHoldsKeysReplacesThem() throws IOException {
    LearnedActuals used = new LearnedActuals(2, 1000, false);
    add(used, "a", 1, 1.0);
    add(used, "b", 1, 2.0);
    add(used, "c", 1, 3.0); // forgets "a" early
    assertEquals(1, used.forgottenEarly());
    LearnedActuals written = new LearnedActuals(2, 1000, false);
    add(written, "z", 9, 4.0);
    byte[] checkpoint = bytes(written);

    read(used, checkpoint);
    assertEquals(1, used.size());
    assertEquals(0, used.forgottenEarly());
    assertEquals(-1, find(used, "b", 1));
    assertEquals(-1, find(used, "c", 1));
    assertEquals(4.0, used.value(find(used, "z", 9)));
    assertEquals(java.util.Arrays.toString(checkpoint), java.util.Arrays.toString(bytes(used)));
    // and the count bound still holds from there: two more keys forget "z"
    add(used, "y", 9, 5.0);
    add(used, "x", 9, 6.0);
    assertEquals(-1, find(used, "z", 9));
    assertEquals(1, used.forgottenEarly());
  }

  @Test
  void aFullMemoryAndAKeyOfEmptyTextReadBack_oneKeyMoreIsRefused() throws IOException {
    LearnedActuals full = new LearnedActuals(3, 1000, false);
    add(full, "", 5, 1.0);
    add(full, "q", 5, 2.0);
    add(full, "r", 5, 3.0);
    LearnedActuals back = new LearnedActuals(3, 1000, false);
    read(back, bytes(full));
    assertEquals(3, back.size());
    assertEquals(1.0, back.value(find(back, "", 5)));
    assertEquals(3.0, back.value(find(back, "r", 5)));

    LearnedActuals smaller = new LearnedActuals(2, 1000, false);
    IOException x = assertThrows(IOException.class, () -> read(smaller, bytes(full)));
    assertTrue(x.getMessage().contains("3 learned actuals") && x.getMessage().contains("max_learned_actuals (2)"), x.getMessage());

    LearnedActuals withRows = new LearnedActuals(3, 1000, true);
    IOException y = assertThrows(IOException.class, () -> read(withRows, bytes(full)));
    assertTrue(y.getMessage().startsWith("the learned actuals were written without corrections: replace"), y.getMessage());
    IOException z = assertThrows(IOException.class, () -> read(new LearnedActuals(3, 1000, false), bytes(withRows)));
    assertTrue(z.getMessage().startsWith("the learned actuals were written with corrections: replace"), z.getMessage());

    // an empty memory reads back empty, into a memory that held keys
    read(full, bytes(new LearnedActuals(3, 1000, false)));
    assertEquals(0, full.size());
    assertEquals(-1, find(full, "q", 5));
  }
}
