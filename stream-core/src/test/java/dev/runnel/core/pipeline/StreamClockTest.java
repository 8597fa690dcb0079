package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/** The stream clock's policy, branch by branch, and a seeded fuzz against a plain restatement of it. */
class StreamClockTest {

  static final long HOUR = 3_600_000L;
  static final long DAY = 24 * HOUR;
  static final long T0 = 1_774_000_000_000L; // March 2026

  @Test void firstRecordSetsTheClockAndForgetsNothing() {
    StreamClock c = new StreamClock(DAY, 3, 1.0, HOUR);
    assertEquals(Long.MIN_VALUE, c.nowMillis());
    assertEquals(StreamClock.Verdict.ACCEPTED, c.accept(T0));
    assertEquals(T0, c.nowMillis());
    assertEquals(1.0, c.lambda());
  }

  @Test void stepWithinMaxAheadMovesTheClockAndForgetsByHalfLife() {
    StreamClock c = new StreamClock(DAY, 3, 1.0, HOUR);
    c.accept(T0);
    assertEquals(StreamClock.Verdict.ACCEPTED, c.accept(T0 + 2 * HOUR));
    assertEquals(0.25, c.lambda()); // 2^-2, exact
    assertEquals(StreamClock.Verdict.ACCEPTED, c.accept(T0 + 2 * HOUR + DAY)); // exactly max_ahead: still accepted
    assertEquals(T0 + 2 * HOUR + DAY, c.nowMillis());
    assertEquals(0x1p-24, c.lambda());
  }

  @Test void lateRecordIsAcceptedWithoutForgettingAndLeavesTheClock() {
    StreamClock c = new StreamClock(DAY, 3, 1.0, HOUR);
    for (int i = 0; i < 3; i++) c.accept(T0 + i * HOUR);
    assertEquals(StreamClock.Verdict.ACCEPTED, c.accept(T0 - 30 * DAY)); // far behind a confirmed clock: late
    assertEquals(1.0, c.lambda());
    assertEquals(T0 + 2 * HOUR, c.nowMillis());
  }

  @Test void perRecordFactorIsGivenWhateverTheTime() {
    StreamClock c = new StreamClock(DAY, 3, 0.99, 0);
    c.accept(T0);
    assertEquals(0.99, c.lambda());
    c.accept(T0 - HOUR);
    assertEquals(0.99, c.lambda());
  }

  @Test void loneJumpIsRejectedAndTheNextOrdinaryRecordClearsIt() {
    StreamClock c = new StreamClock(DAY, 3, 1.0, HOUR);
    for (int i = 0; i < 5; i++) c.accept(T0 + i * HOUR);
    byte[] before = bytes(c);
    assertEquals(StreamClock.Verdict.REJECTED, c.accept(T0 + 13L * 365 * DAY));
    assertTrue(c.lastDetail().contains("ahead of the stream clock") && c.lastDetail().contains("1 of 3"), c.lastDetail());
    assertEquals(T0 + 4 * HOUR, c.nowMillis());
    assertEquals(StreamClock.Verdict.ACCEPTED, c.accept(T0 + 5 * HOUR));
    StreamClock ref = new StreamClock(DAY, 3, 1.0, HOUR);
    for (int i = 0; i < 6; i++) ref.accept(T0 + i * HOUR);
    assertArrayEquals(bytes(ref), bytes(c), "the state is as if the lone record had never come");
    assertTrue(before.length > 0);
  }

  @Test void jumpConfirmedByAgreeingRecordsIsAcceptedOnTheLastOfThem() {
    StreamClock c = new StreamClock(DAY, 3, 1.0, HOUR);
    for (int i = 0; i < 5; i++) c.accept(T0 + i * HOUR);
    long back = T0 + 4 * HOUR + 7 * DAY; // a week of outage
    assertEquals(StreamClock.Verdict.REJECTED, c.accept(back));
    assertEquals(StreamClock.Verdict.REJECTED, c.accept(back + HOUR));
    assertEquals(StreamClock.Verdict.JUMPED, c.accept(back + 2 * HOUR));
    assertEquals(back + 2 * HOUR, c.nowMillis());
    assertTrue(c.forgetsAll(), "170 half-lives: everything before is forgotten");
    assertEquals(1.0, c.lambda(), "for the model restarted from its prior");
    assertEquals(1, c.jumps());
    assertEquals(StreamClock.Verdict.ACCEPTED, c.accept(back + 3 * HOUR));
    assertEquals(0.5, c.lambda());
  }

  @Test void runOfDisagreeingFutureTimesNeverConfirms() {
    StreamClock c = new StreamClock(DAY, 3, 1.0, HOUR);
    for (int i = 0; i < 5; i++) c.accept(T0 + i * HOUR);
    long[] wild = {T0 + 4000 * DAY, T0 + 5000 * DAY, T0 + 300 * DAY, T0 + 4000 * DAY + 2 * DAY};
    for (long t : wild) assertEquals(StreamClock.Verdict.REJECTED, c.accept(t));
    assertEquals(T0 + 4 * HOUR, c.nowMillis());
  }

  @Test void provisionalClockFromAWrongFirstRecordIsOverruledBackwards() {
    StreamClock c = new StreamClock(DAY, 3, 1.0, HOUR);
    long wrong = T0 + 13L * 365 * DAY; // a first record dated 2039
    c.accept(wrong);
    assertEquals(StreamClock.Verdict.REJECTED, c.accept(T0));
    assertTrue(c.lastDetail().contains("behind"), c.lastDetail());
    assertEquals(StreamClock.Verdict.REJECTED, c.accept(T0 + HOUR));
    assertEquals(StreamClock.Verdict.JUMPED, c.accept(T0 + 2 * HOUR));
    assertEquals(T0 + 2 * HOUR, c.nowMillis());
    assertEquals(1.0, c.lambda(), "moving back forgets nothing");
    // now confirmed: a far-behind record is late, not a jump
    assertEquals(StreamClock.Verdict.ACCEPTED, c.accept(T0 - 100 * DAY));
    assertEquals(T0 + 2 * HOUR, c.nowMillis());
  }

  @Test void forgettingNeverReachesZero() {
    StreamClock c = new StreamClock(Long.MAX_VALUE / 4, 1, 1.0, 1.0);
    c.accept(0);
    c.accept(63);
    assertEquals(0x1p-63, c.lambda());
    assertTrue(!c.forgetsAll());
    c.accept(63 + 64);
    assertTrue(c.forgetsAll());
    assertEquals(1.0, c.lambda());
    c.accept(63 + 64 + 1);
    assertTrue(!c.forgetsAll());
    assertEquals(0.5, c.lambda());
    c.accept(Long.MAX_VALUE / 8);
    assertTrue(c.forgetsAll());
  }

  @Test void settingsOutOfRangeNameTheKey() {
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> new StreamClock(0, 3, 1.0, 0));
    assertTrue(e.getMessage().contains("input.clock.max_ahead"), e.getMessage());
    e = assertThrows(IllegalArgumentException.class, () -> new StreamClock(DAY, 0, 1.0, 0));
    assertTrue(e.getMessage().contains("input.clock.confirm_records"), e.getMessage());
  }

  /**
   * Seeded fuzz around the policy's edges: steps of exactly max_ahead, one ms more or less, runs
   * that agree to the ms and fail to by one ms, far jumps both ways, late records. The clock must
   * agree at every record with {@link Reference}, a plain restatement of the documented policy
   * that keeps the disagreeing run as a list, and its factor must stay in (0, 1].
   */
  @Test void fuzzAroundTheEdgesAgreesWithAPlainRestatement() throws IOException {
    Random rnd = new Random(20261205L);
    long a = 6 * HOUR;
    for (int trial = 0; trial < 400; trial++) {
      int k = 1 + rnd.nextInt(4);
      StreamClock c = new StreamClock(a, k, 1.0, HOUR);
      Reference ref = new Reference(a, k);
      long t = T0;
      for (int i = 0; i < 200; i++) {
        long base = rnd.nextInt(3) == 0 && ref.now != Long.MIN_VALUE ? ref.now : t;
        long step;
        switch (rnd.nextInt(9)) {
          case 0: step = a; break;
          case 1: step = a + 1; break;
          case 2: step = a - 1; break;
          case 3: step = -a - 1; break;
          case 4: step = -a; break;
          case 5: step = (rnd.nextBoolean() ? 1 : -1) * (long) rnd.nextInt(1_000) * DAY; break;
          case 6: step = 0; break;
          default: step = rnd.nextInt((int) HOUR); break;
        }
        t = base + step;
        StreamClock.Verdict v = c.accept(t);
        StreamClock.Verdict expected = ref.accept(t);
        assertEquals(expected, v, "trial " + trial + " record " + i);
        assertEquals(ref.now, c.nowMillis(), "trial " + trial + " record " + i);
        if (v != StreamClock.Verdict.REJECTED) {
          assertTrue(c.lambda() > 0 && c.lambda() <= 1, "lambda " + c.lambda());
          assertTrue(c.lambda() > StreamClock.MIN_LAMBDA);
        }
      }
      StreamClock copy = new StreamClock(a, k, 1.0, HOUR);
      copy.readFrom(new DataInputStream(new ByteArrayInputStream(bytesOf(c))));
      assertArrayEquals(bytesOf(c), bytesOf(copy), "checkpoint round trip");
    }
  }

  /** The policy of docs/model.md written out directly (lists, no counters), for the fuzz test. */
  static final class Reference {
    final long a;
    final int k;
    long now = Long.MIN_VALUE;
    int accepted;
    final List<Long> run = new ArrayList<>();
    int runSide;

    Reference(long a, int k) { this.a = a; this.k = k; }

    StreamClock.Verdict accept(long t) {
      if (now == Long.MIN_VALUE) {
        now = t;
        accepted = 1;
        return StreamClock.Verdict.ACCEPTED;
      }
      boolean ahead = t - now > a;
      boolean behindProvisional = accepted < k && now - t > a;
      if (!ahead && !behindProvisional) {
        run.clear();
        now = Math.max(now, t);
        accepted++;
        return StreamClock.Verdict.ACCEPTED;
      }
      int side = ahead ? 1 : -1;
      boolean agrees = !run.isEmpty() && runSide == side && Math.abs(t - run.get(run.size() - 1)) <= a;
      if (!agrees) run.clear();
      runSide = side;
      run.add(t);
      if (run.size() < k) return StreamClock.Verdict.REJECTED;
      run.clear();
      now = t;
      accepted = Math.max(accepted, k);
      return StreamClock.Verdict.JUMPED;
    }
  }

  static byte[] bytes(StreamClock c) {
    try {
      return bytesOf(c);
    } catch (IOException e) {
      throw new AssertionError(e);
    }
  }

  static byte[] bytesOf(StreamClock c) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    c.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }
}
