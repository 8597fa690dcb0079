package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import org.junit.jupiter.api.Test;

/**
 * What the pending-forecast store hands back and reports, field by field, against values worked by
 * hand from its javadoc: {@code add}'s answer at the age bound's exact edge, every field of a taken
 * forecast (its source partition and offset are how a settled forecast names its request), and a
 * checkpoint read into a store that already holds other forecasts (they must not survive it).
 */
class PendingForecastsDetailsTest {

  private static final char[] HUB = "hub-3".toCharArray();
  private static final char[] OTHER = "hub-4".toCharArray();

  @Test
  void addAnswersWhetherItRememberedAtTheAgeBoundsEdge() {
    PendingForecasts store = new PendingForecasts(10, 1_000);
    // target 5_000, clock 6_000: exactly the bound behind, kept ("more than" the bound drops)
    assertTrue(store.add(HUB, HUB.length, 5_000, 4_000, 1.0, 0.5, 1.5, 2, 7, 6_000), "exactly at the bound: remembered");
    assertEquals(1, store.size());
    assertEquals(1, store.remembered());
    // target 4_999 at the same clock: 1 ms past the bound, dropped and counted
    assertFalse(store.add(HUB, HUB.length, 4_999, 4_000, 1.0, 0.5, 1.5, 2, 8, 6_000), "1 ms past the bound: dropped");
    assertEquals(1, store.size());
    assertEquals(1, store.remembered());
    assertEquals(1, store.droppedExpired());
    // no clock yet (Long.MIN_VALUE): nothing is old
    PendingForecasts fresh = new PendingForecasts(10, 1);
    assertTrue(fresh.add(HUB, HUB.length, Long.MIN_VALUE + 1, 0, 1.0, 0.5, 1.5, 0, 0, Long.MIN_VALUE));
    // full: the first-issued one is dropped and the new one is still remembered
    PendingForecasts one = new PendingForecasts(1, 1_000);
    assertTrue(one.add(HUB, HUB.length, 5_000, 1, 1.0, 0.5, 1.5, 0, 0, 5_000));
    assertTrue(one.add(OTHER, OTHER.length, 5_000, 2, 2.0, 1.5, 2.5, 0, 1, 5_000), "full: remembered after a drop");
    assertEquals(1, one.droppedFull());
    assertEquals(0, one.take(HUB, HUB.length, 5_000, 5_000), "the first-issued one was dropped");
    assertEquals(1, one.take(OTHER, OTHER.length, 5_000, 5_000));
  }

  @Test
  void aTakenForecastCarriesEveryFieldItWasIssuedWith() {
    PendingForecasts store = new PendingForecasts(10, 1_000_000);
    store.add(HUB, HUB.length, 9_000, 1_000, 10.25, 8.5, 12.0, 3, 41, 1_000);
    store.add(OTHER, OTHER.length, 9_000, 1_500, -4.0, -6.0, -2.0, 1, 42, 1_500);
    store.add(HUB, HUB.length, 9_000, 2_000, 11.5, 9.0, 14.0, 5, 1_234_567_890_123L, 2_000);
    assertEquals(2, store.take(HUB, HUB.length, 9_000, 9_000));
    assertEquals(1_000, store.takenIssueMillis(0));
    assertEquals(10.25, store.takenForecast(0));
    assertEquals(8.5, store.takenLow(0));
    assertEquals(12.0, store.takenHigh(0));
    assertEquals(3, store.takenPartition(0));
    assertEquals(41, store.takenOffset(0));
    assertEquals(2_000, store.takenIssueMillis(1));
    assertEquals(11.5, store.takenForecast(1));
    assertEquals(9.0, store.takenLow(1));
    assertEquals(14.0, store.takenHigh(1));
    assertEquals(5, store.takenPartition(1));
    assertEquals(1_234_567_890_123L, store.takenOffset(1));
    assertEquals(2, store.settled());
    assertEquals(1, store.size(), "hub-4's forecast is still pending");
  }

  @Test
  void takingAfterTheAgeBoundDropsInsteadOfSettling() {
    PendingForecasts store = new PendingForecasts(10, 1_000);
    store.add(OTHER, OTHER.length, 100_000, 0, 1.0, 0.0, 2.0, 0, 0, 0); // keeps the front young
    store.add(HUB, HUB.length, 5_000, 0, 1.0, 0.0, 2.0, 0, 1, 0);
    // exactly at the bound: settled
    PendingForecasts edge = new PendingForecasts(10, 1_000);
    edge.add(HUB, HUB.length, 5_000, 0, 1.0, 0.0, 2.0, 0, 1, 0);
    assertEquals(1, edge.take(HUB, HUB.length, 5_000, 6_000), "exactly the bound late: settled");
    assertEquals(1, edge.settled());
    // 1 ms later than the bound: dropped, counted, nothing settled; the key's slot is freed
    assertEquals(0, store.take(HUB, HUB.length, 5_000, 6_001));
    assertEquals(0, store.settled());
    assertEquals(1, store.droppedExpired());
    assertEquals(1, store.size());
    assertEquals(1, store.keySlotsInUse());
  }

  @Test
  void aCheckpointReadReplacesWhatTheStoreHeld() throws IOException {
    PendingForecasts source = new PendingForecasts(10, 1_000_000);
    source.add(HUB, HUB.length, 9_000, 1_000, 10.0, 9.0, 11.0, 2, 20, 1_000);
    ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    source.writeTo(new DataOutputStream(bytes));

    PendingForecasts target = new PendingForecasts(10, 1_000_000);
    target.add(OTHER, OTHER.length, 9_000, 500, 99.0, 98.0, 100.0, 7, 70, 500);
    target.add(HUB, HUB.length, 9_000, 600, 77.0, 76.0, 78.0, 7, 71, 600);
    target.take(OTHER, OTHER.length, 1, 600); // nothing pending for that key: nothing taken
    target.readFrom(new DataInputStream(new ByteArrayInputStream(bytes.toByteArray())));
    assertEquals(1, target.size(), "only the checkpoint's forecast is pending");
    assertEquals(1, target.remembered());
    assertEquals(0, target.take(OTHER, OTHER.length, 9_000, 9_000), "the store's own forecast is gone");
    assertEquals(1, target.take(HUB, HUB.length, 9_000, 9_000));
    assertEquals(10.0, target.takenForecast(0), "the checkpoint's forecast, not the store's own");
    assertEquals(20, target.takenOffset(0));
    assertEquals(0, target.keySlotsInUse());
  }

  private static byte[] checkpoint(PendingForecasts store) throws IOException {
    ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    store.writeTo(new DataOutputStream(bytes));
    return bytes.toByteArray();
  }

  /**
   * A checkpoint holding exactly the count bound's number of forecasts, none, or one with an empty
   * entity text reads back (the refusal is for more than the bound, or a negative count or length).
   */
  @Test
  void checkpointsAtTheirLimitsReadBack() throws IOException {
    PendingForecasts full = new PendingForecasts(3, 1_000_000);
    for (int i = 0; i < 3; i++) {
      full.add(HUB, HUB.length, 9_000 + i, i, i, i - 1, i + 1, 0, i, 0);
    }
    PendingForecasts back = new PendingForecasts(3, 1_000_000);
    back.readFrom(new DataInputStream(new ByteArrayInputStream(checkpoint(full))));
    assertEquals(3, back.size(), "exactly max_pending forecasts: accepted");
    assertEquals(1, back.take(HUB, HUB.length, 9_002, 9_002));
    assertEquals(2, back.takenOffset(0));
    PendingForecasts smaller = new PendingForecasts(2, 1_000_000);
    IOException e = org.junit.jupiter.api.Assertions.assertThrows(IOException.class,
        () -> smaller.readFrom(new DataInputStream(new ByteArrayInputStream(checkpoint(full)))));
    assertTrue(e.getMessage().contains("3 pending") && e.getMessage().contains("max_pending (2)"), e.getMessage());

    PendingForecasts empty = new PendingForecasts(3, 1_000_000);
    PendingForecasts emptyBack = new PendingForecasts(3, 1_000_000);
    emptyBack.readFrom(new DataInputStream(new ByteArrayInputStream(checkpoint(empty))));
    assertEquals(0, emptyBack.size(), "no forecast pending: accepted");

    PendingForecasts blank = new PendingForecasts(3, 1_000_000);
    blank.add(new char[0], 0, 9_000, 1, 5.0, 4.0, 6.0, 0, 3, 0);
    PendingForecasts blankBack = new PendingForecasts(3, 1_000_000);
    blankBack.readFrom(new DataInputStream(new ByteArrayInputStream(checkpoint(blank))));
    assertEquals(1, blankBack.take(new char[0], 0, 9_000, 9_000), "an empty entity text: accepted");
    assertEquals(5.0, blankBack.takenForecast(0));
  }
}
