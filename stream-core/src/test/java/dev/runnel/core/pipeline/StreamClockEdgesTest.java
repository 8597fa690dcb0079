package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.time.Duration;
import java.time.Instant;
import org.junit.jupiter.api.Test;

/**
 * The stream clock at the exact edges {@link StreamClockTest} leaves open (survivors of mutation
 * testing in {@link StreamClock}): records of a jump run exactly {@code max_ahead} apart still agree;
 * a reject's detail names the distance (as {@link Duration#toString}), the side, and for a
 * provisional clock overruled backwards that it was set by the first records only; a legacy
 * restore forgets a run in progress.
 */
class StreamClockEdgesTest {

  private static final long HOUR = StreamClockTest.HOUR;
  private static final long DAY = StreamClockTest.DAY;
  private static final long T0 = StreamClockTest.T0;

  @Test
  void runRecordsExactlyMaxAheadApartAgreeAndOneMillisecondMoreBreaksTheRun() {
    StreamClock c = new StreamClock(DAY, 3, 1.0, HOUR);
    c.accept(T0);
    long a = T0 + 10 * DAY;
    assertEquals(StreamClock.Verdict.REJECTED, c.accept(a));
    assertEquals(StreamClock.Verdict.REJECTED, c.accept(a + DAY)); // exactly max_ahead after the last of the run
    assertTrue(c.lastDetail().contains("2 of 3"), c.lastDetail());
    assertEquals(StreamClock.Verdict.JUMPED, c.accept(a + 2 * DAY));
    assertEquals(a + 2 * DAY, c.nowMillis());

    StreamClock d = new StreamClock(DAY, 3, 1.0, HOUR);
    d.accept(T0);
    assertEquals(StreamClock.Verdict.REJECTED, d.accept(a));
    assertEquals(StreamClock.Verdict.REJECTED, d.accept(a + DAY + 1)); // one ms more: a new run
    assertTrue(d.lastDetail().contains("1 of 3"), d.lastDetail());
  }

  @Test
  void aRejectsDetailNamesTheDistanceTheSideAndWhoSetTheClock() {
    StreamClock c = new StreamClock(DAY, 2, 1.0, HOUR);
    c.accept(T0);
    c.accept(T0 + HOUR);
    long ahead = T0 + HOUR + 3 * DAY + 5 * HOUR;
    assertEquals(StreamClock.Verdict.REJECTED, c.accept(ahead));
    String detail = c.lastDetail();
    assertTrue(detail.startsWith("event time " + Instant.ofEpochMilli(ahead) + " is " + Duration.ofHours(77)
        + " ahead of the stream clock " + Instant.ofEpochMilli(T0 + HOUR) + ", more than input.clock.max_ahead; 1 of 2"), detail);
    assertFalse(detail.contains("first records"), detail);

    StreamClock p = new StreamClock(DAY, 3, 1.0, HOUR);
    long wrong = T0 + 400 * DAY; // a wrong first record: the clock is provisional
    p.accept(wrong);
    assertEquals(StreamClock.Verdict.REJECTED, p.accept(T0));
    detail = p.lastDetail();
    assertTrue(detail.startsWith("event time " + Instant.ofEpochMilli(T0) + " is " + Duration.ofDays(400)
        + " behind the stream clock " + Instant.ofEpochMilli(wrong) + " (set by the first records only), more than"), detail);
  }

  @Test
  void aLegacyRestoreForgetsARunInProgress() {
    StreamClock c = new StreamClock(DAY, 3, 1.0, HOUR);
    c.accept(T0);
    long far = T0 + 10 * DAY;
    c.accept(far);
    c.accept(far + HOUR); // 2 of 3: one more would confirm the jump
    c.restoreLegacy(T0 + HOUR, 10);
    assertEquals(T0 + HOUR, c.nowMillis());
    assertFalse(c.provisional());
    assertEquals(StreamClock.Verdict.REJECTED, c.accept(far + 2 * HOUR), "the run started again");
    assertTrue(c.lastDetail().contains("1 of 3"), c.lastDetail());
    assertEquals(0, c.jumps());
  }

  /** The run's bookkeeping and support as the checkpoint holds them: support, count, side, last time. */
  private static long[] state(StreamClock c) throws java.io.IOException {
    java.io.ByteArrayOutputStream b = new java.io.ByteArrayOutputStream();
    c.writeTo(new java.io.DataOutputStream(b));
    java.nio.ByteBuffer x = java.nio.ByteBuffer.wrap(b.toByteArray());
    return new long[] {x.getInt(8), x.getInt(12), x.getInt(16), x.getLong(20)};
  }

  @Test
  void aConfirmedJumpLeavesNoRunBehindAndSupportStopsAtConfirmRecords() throws java.io.IOException {
    StreamClock c = new StreamClock(DAY, 3, 1.0, HOUR);
    for (int i = 0; i < 6; i++) {
      c.accept(T0 + i * HOUR);
    }
    assertEquals(3, state(c)[0], "support is capped at confirm_records");
    long far = T0 + 10 * DAY;
    c.accept(far);
    c.accept(far + HOUR);
    assertEquals(2, state(c)[1]);
    assertEquals(StreamClock.Verdict.JUMPED, c.accept(far + 2 * HOUR));
    assertEquals(0, state(c)[1], "no run left");
    assertEquals(0, state(c)[2]);
    assertEquals(0, state(c)[3]);
  }

  @Test
  void theSmallestSettingsAreAcceptedAndAFactorOfZeroIsNot() {
    StreamClock c = new StreamClock(1, 1, 1.0, 0);
    c.accept(T0);
    assertEquals(StreamClock.Verdict.ACCEPTED, c.accept(T0 + 1), "1 ms ahead with max_ahead of 1 ms");
    assertEquals(StreamClock.Verdict.JUMPED, c.accept(T0 + 3), "2 ms ahead: a jump, confirmed by itself");
    assertEquals(1.0, c.lambda());
    IllegalArgumentException e = org.junit.jupiter.api.Assertions.assertThrows(IllegalArgumentException.class,
        () -> new StreamClock(DAY, 3, 0.0, 0));
    assertTrue(e.getMessage().startsWith("model.forgetting.factor must be in (0, 1], got 0.0"), e.getMessage());
    org.junit.jupiter.api.Assertions.assertThrows(IllegalArgumentException.class, () -> new StreamClock(DAY, 3, 1.0000000000000002, 0));
  }

  @Test
  void aStepOfExactlySixtyFourHalfLivesForgetsAll() {
    StreamClock c = new StreamClock(1000 * DAY, 1, 1.0, HOUR);
    c.accept(T0);
    c.accept(T0 + 64 * HOUR - 1);
    assertFalse(c.forgetsAll(), "just under 64 half-lives");
    c.accept(T0 + 64 * HOUR - 1 + 64 * HOUR);
    assertTrue(c.forgetsAll(), "exactly 64 half-lives");
    assertEquals(1.0, c.lambda());
  }
}
