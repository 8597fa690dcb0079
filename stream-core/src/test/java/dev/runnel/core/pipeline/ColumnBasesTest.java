package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.layout.LayoutListener;
import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * The column ids and first-basis maps kept for {@code corrections: replace}, against hand values:
 * every layout event reaches the model first and unchanged; ids survive index shifts and growth
 * past the first allocation; a re-basing with {@code scale}, {@code shift} maps an entry as
 * {@code x -> (x - shift) / scale} (LayoutListener's contract), composed over several re-basings;
 * the checkpoint round trip, and a checkpoint with a basis that is not positive and finite, or of
 * another dimension, refused with the values named.
 */
class ColumnBasesTest {

  /** Records the events it is passed, as text. */
  private static final class Events implements LayoutListener {
    final List<String> seen = new ArrayList<>();

    @Override public void columnAdded(int index, String name) { seen.add("add " + index + " " + name); }

    @Override public void columnAdded(int index, String name, boolean neverRebased) {
      seen.add("add " + index + " " + name + " " + neverRebased);
    }

    @Override public void columnRemoved(int index) { seen.add("remove " + index); }

    @Override public void columnRebased(int column, double scale, double shift) {
      seen.add("rebase " + column + " " + scale + " " + shift);
    }
  }

  private static ColumnBases bases(int dimension, Events events) {
    ColumnBases b = new ColumnBases(dimension);
    b.forwardTo(events);
    return b;
  }

  @Test
  void everyEventReachesTheModelUnchangedAndInOrder() {
    Events ev = new Events();
    ColumnBases b = bases(2, ev);
    b.columnAdded(2, "hub=A", true);
    b.columnAdded(3, "load");
    b.columnRebased(3, 2.0, 0.5);
    b.columnRemoved(2);
    assertEquals(List.of("add 2 hub=A true", "add 3 load false", "rebase 3 2.0 0.5", "remove 2"), ev.seen);
    assertEquals(3, b.dimension());
  }

  @Test
  void idsOutliveIndexShiftsAndGrowthAndARemovedIdIsNotFound() {
    ColumnBases b = bases(3, new Events());
    for (int j = 0; j < 3; j++) {
      assertEquals(j, b.id(j));
      assertEquals(j, b.indexOf(j));
    }
    for (int j = 3; j < 20; j++) { // past the first allocation of 8
      b.columnAdded(j, "c" + j);
    }
    assertEquals(20, b.dimension());
    b.columnRemoved(1);
    b.columnRemoved(5); // the column with id 6
    assertEquals(18, b.dimension());
    assertEquals(-1, b.indexOf(1));
    assertEquals(-1, b.indexOf(6));
    assertEquals(0, b.indexOf(0));
    assertEquals(1, b.indexOf(2));
    assertEquals(4, b.indexOf(5));
    assertEquals(5, b.indexOf(7));
    assertEquals(17, b.indexOf(19));
    assertEquals(19, b.id(17));
    b.columnAdded(18, "new");
    assertEquals(20, b.id(18), "a new column never reuses an id");
    assertEquals(18, b.indexOf(20));
    assertEquals(-1, b.indexOf(21));
  }

  @Test
  void reBasingsComposeAsTheContractSays() {
    ColumnBases b = bases(3, new Events());
    // x' = (x - shift) / scale, so an entry 3 in the first basis is (3 - 0.5) / 2 = 1.25 after the first
    b.columnRebased(2, 2.0, 0.5);
    assertEquals(1.25, b.toToday(2, 3.0));
    assertEquals(3.0, b.toFirstBasis(2, 1.25));
    // then (1.25 - (-1)) / 4 = 0.5625
    b.columnRebased(2, 4.0, -1.0);
    assertEquals(0.5625, b.toToday(2, 3.0));
    assertEquals(3.0, b.toFirstBasis(2, 0.5625));
    assertEquals(0.0625, b.toToday(2, -1.0)); // ((-1 - 0.5)/2 + 1)/4
    // the other columns are untouched
    assertEquals(3.0, b.toToday(1, 3.0));
    assertEquals(3.0, b.toFirstBasis(1, 3.0));
    // a removal before it moves the basis down with the column
    b.columnRemoved(1);
    assertEquals(0.5625, b.toToday(1, 3.0));
    assertEquals(2, b.id(1));
    // a column added later starts in the identity basis
    b.columnAdded(2, "later");
    assertEquals(-4.5, b.toToday(2, -4.5));
    assertEquals(-4.5, b.toFirstBasis(2, -4.5));
  }

  private static byte[] bytes(ColumnBases b) throws IOException {
    ByteArrayOutputStream out = new ByteArrayOutputStream();
    b.writeTo(new DataOutputStream(out));
    return out.toByteArray();
  }

  @Test
  void aCheckpointReadsBackAndContinuesWithTheNextId() throws IOException {
    ColumnBases b = bases(2, new Events());
    for (int j = 2; j < 11; j++) {
      b.columnAdded(j, "c" + j);
    }
    b.columnRemoved(3);
    b.columnRebased(9, 0.5, 3.0);
    byte[] saved = bytes(b);

    ColumnBases back = bases(4, new Events()); // a state of another size, replaced
    back.readFrom(new DataInputStream(new ByteArrayInputStream(saved)), 10);
    assertEquals(10, back.dimension());
    for (int j = 0; j < 10; j++) {
      assertEquals(b.id(j), back.id(j));
      assertEquals(b.toToday(j, 1.5), back.toToday(j, 1.5));
    }
    assertEquals((1.5 - 3.0) / 0.5, back.toToday(9, 1.5));
    back.columnAdded(10, "next"); // grows past the arrays read
    assertEquals(11, back.id(10), "ids continue after the checkpoint's");
    back.columnAdded(11, "next2");
    assertEquals(12, back.id(11));
    assertEquals(10, back.indexOf(11));
  }

  @Test
  void aCheckpointOfAnotherDimensionOrWithABadBasisIsRefused() throws IOException {
    ColumnBases b = bases(3, new Events());
    b.columnRebased(1, 2.0, 1.0); // column 1: a = 0.5, b = -0.5
    byte[] saved = bytes(b);
    IOException e = assertThrows(IOException.class,
        () -> bases(2, new Events()).readFrom(new DataInputStream(new ByteArrayInputStream(saved)), 2));
    assertTrue(e.getMessage().contains("3 columns, the layout 2"), e.getMessage());

    // layout: p, nextId, then per column id (int), a (double), b (double); column 1's a is at 8 + 20 + 4
    int aAt = 8 + 20 + 4;
    int bAt = aAt + 8;
    for (double bad : new double[] {0.0, -0.5, Double.POSITIVE_INFINITY, Double.NaN}) {
      byte[] t = withDouble(saved, aAt, bad);
      IOException x = assertThrows(IOException.class,
          () -> bases(3, new Events()).readFrom(new DataInputStream(new ByteArrayInputStream(t)), 3), "scale " + bad);
      assertTrue(x.getMessage().contains("column basis 1: scale " + bad), x.getMessage());
    }
    for (double bad : new double[] {Double.NaN, Double.POSITIVE_INFINITY, Double.NEGATIVE_INFINITY}) {
      byte[] t = withDouble(saved, bAt, bad);
      IOException x = assertThrows(IOException.class,
          () -> bases(3, new Events()).readFrom(new DataInputStream(new ByteArrayInputStream(t)), 3), "shift " + bad);
      assertTrue(x.getMessage().contains("shift " + bad), x.getMessage());
    }
    // the smallest positive scale and a large finite shift are accepted
    ColumnBases ok = bases(3, new Events());
    ok.readFrom(new DataInputStream(new ByteArrayInputStream(withDouble(withDouble(saved, aAt, Double.MIN_VALUE), bAt, -Double.MAX_VALUE))), 3);
    assertEquals(-Double.MAX_VALUE, ok.toToday(1, 0.0));
  }

  private static byte[] withDouble(byte[] bytes, int at, double v) {
    byte[] t = bytes.clone();
    long bits = Double.doubleToRawLongBits(v);
    for (int i = 0; i < 8; i++) {
      t[at + i] = (byte) (bits >>> (56 - 8 * i));
    }
    return t;
  }

  @Test
  void aRemovalFromAFullArrayAndOfTheLastColumnLeavesNoStaleId() {
    ColumnBases b = bases(8, new Events()); // the arrays hold exactly 8
    b.columnRebased(7, 4.0, 1.0);
    b.columnRemoved(3);
    assertEquals(7, b.dimension());
    for (int j = 0; j < 7; j++) {
      assertEquals(j < 3 ? j : j + 1, b.id(j));
    }
    assertEquals((2.0 - 1.0) / 4.0, b.toToday(6, 2.0), "the basis moved down with its column");
    b.columnRemoved(6); // the last column, id 7
    assertEquals(-1, b.indexOf(7), "a removed last column is not found");
    assertEquals(-1, b.indexOf(3));
    assertEquals(5, b.indexOf(6));
  }
}
