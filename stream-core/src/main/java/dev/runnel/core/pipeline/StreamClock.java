package dev.runnel.core.pipeline;

import java.io.DataInput;
import java.io.DataOutput;
import java.io.IOException;

/**
 * The stream's one clock, owned by the {@link PipelineStep}: it decides which training records
 * may move event time, gives the forgetting factor for each accepted record, and is the time
 * that vocabulary expiry, snapshot periods and snapshot stamps read. Checkpointed once, with the
 * step. One writer thread; deterministic (no wall clock).
 *
 * <p>The policy (docs/model.md, "The stream clock"), for a training record at time {@code t} and
 * clock {@code now}, with {@code A = input.clock.max_ahead} and {@code K = input.clock.confirm_records}:
 * <ol>
 *   <li>The first training record sets the clock.</li>
 *   <li>{@code t} within {@code A} ahead of {@code now}: accepted; the clock moves to {@code t}
 *       and forgets {@code 2^(-(t - now)/h)} (or the per-record factor).</li>
 *   <li>{@code t} at or behind {@code now} (late, out of order): accepted; the clock stays and
 *       nothing is forgotten ({@code λ = 1}; the per-record factor when forgetting is per record).</li>
 *   <li>{@code t} more than {@code A} ahead: a <em>jump</em>. The record is rejected
 *       ({@code time_jump}) unless it is the {@code K}-th of {@code K} consecutive training records
 *       that all lie more than {@code A} ahead and each within {@code A} of the one before: then
 *       the jump is real (an outage in the feed), the record is accepted and the clock moves.
 *       Any accepted record near the clock breaks a run. A lone bad time therefore changes nothing
 *       but the run's bookkeeping, which the next ordinary record clears.</li>
 *   <li>While the clock is <em>provisional</em> (fewer than {@code K} accepted training records
 *       since the start), a record more than {@code A} <em>behind</em> it is treated as a jump too,
 *       so a wrong first record (dated 2039) is overruled by {@code K} agreeing ordinary ones and
 *       the clock moves back to them.</li>
 * </ol>
 * Forgetting by event time never reaches zero: a step of {@value #MAX_HALVINGS} half-lives or more
 * ({@link #forgetsAll()}) leaves the data before it weighing less than one part in 2^64, below a
 * double's resolution, so the step restarts the model from its prior over the current columns
 * instead of decaying it (the factor is then 1); every other factor is {@code 2^(-Δt/h)} in
 * ({@link #MIN_LAMBDA}, 1].
 *
 * <p>The horizon work extends this one clock (forecasts issued ahead, actuals arriving late or
 * twice): records behind the clock are where late actuals land, and the jump rule is the only way
 * event time moves forward.
 */
public final class StreamClock {

  /** Most half-lives forgotten in one step. */
  public static final int MAX_HALVINGS = 64;

  /** Every factor by event time is above this ({@code 2^-64}); a step that would forget more forgets all. */
  public static final double MIN_LAMBDA = 0x1p-64;

  /** What {@link #accept} decided. */
  public enum Verdict {
    /** Accepted; the clock moved forward or stayed (late record). */
    ACCEPTED,
    /** Accepted as the record that confirmed a jump; the clock moved to it. */
    JUMPED,
    /** Rejected: too far from the clock, not (yet) confirmed. */
    REJECTED
  }

  private final long maxAheadMillis;
  private final int confirmRecords;
  private final double factor;
  private final double halfLifeMillis;

  private long nowMillis = Long.MIN_VALUE;
  /** Accepted training records since the start, capped at {@link #confirmRecords}. */
  private int support;
  /** The run of consecutive records that disagree with the clock: count, side (+1 ahead, -1 behind), last time. */
  private int runCount;
  private int runSide;
  private long runLastMillis;
  private long jumps;
  /** The forgetting factor for the record accepted last. */
  private double lambda = 1.0;
  /** Whether the record accepted last forgets all the data before it. */
  private boolean forgetsAll;
  private String detail = "";

  /**
   * @param maxAheadMillis how far ahead of the clock a record may be without a confirmed jump, at least 1
   * @param confirmRecords consecutive agreeing records that confirm a jump, at least 1
   * @param factor per-record forgetting factor in (0, 1], used when {@code halfLifeMillis} is not positive
   * @param halfLifeMillis event-time half-life in milliseconds, or 0 for the per-record factor
   * @throws IllegalArgumentException for values out of range
   */
  public StreamClock(long maxAheadMillis, int confirmRecords, double factor, double halfLifeMillis) {
    if (maxAheadMillis < 1) {
      throw new IllegalArgumentException("input.clock.max_ahead must be at least 1 ms, got " + maxAheadMillis + " ms");
    }
    if (confirmRecords < 1) {
      throw new IllegalArgumentException("input.clock.confirm_records must be at least 1, got " + confirmRecords);
    }
    if (!(factor > 0 && factor <= 1)) {
      throw new IllegalArgumentException("model.forgetting.factor must be in (0, 1], got " + factor);
    }
    this.maxAheadMillis = maxAheadMillis;
    this.confirmRecords = confirmRecords;
    this.factor = factor;
    this.halfLifeMillis = halfLifeMillis;
  }

  /**
   * Decides on a training record at {@code t}. On acceptance the clock and {@link #lambda()} are
   * set for it; on rejection only the run's bookkeeping changes and {@link #lastDetail()} says why.
   */
  public Verdict accept(long t) {
    if (nowMillis == Long.MIN_VALUE) {
      nowMillis = t;
      support = 1;
      lambda = halfLifeMillis > 0 ? 1.0 : factor;
      forgetsAll = false;
      clearRun();
      return Verdict.ACCEPTED;
    }
    long d = t - nowMillis;
    boolean provisional = support < confirmRecords;
    if (d > maxAheadMillis || (provisional && d < -maxAheadMillis)) {
      int side = d > 0 ? 1 : -1;
      if (runCount > 0 && runSide == side && Math.abs(t - runLastMillis) <= maxAheadMillis) {
        runCount++;
      } else {
        runCount = 1;
        runSide = side;
      }
      runLastMillis = t;
      if (runCount < confirmRecords) {
        detail = "event time " + java.time.Instant.ofEpochMilli(t) + " is " + span(Math.abs(d))
            + (side > 0 ? " ahead of" : " behind") + " the stream clock " + java.time.Instant.ofEpochMilli(nowMillis)
            + (side > 0 ? "" : " (set by the first records only)")
            + ", more than input.clock.max_ahead; " + runCount + " of " + confirmRecords
            + " consecutive records needed to accept a jump";
        return Verdict.REJECTED;
      }
      lambda = lambdaFor(d);
      nowMillis = t; // ahead: the outage was real; behind: a provisional clock overruled
      support = confirmRecords;
      clearRun();
      jumps++;
      return Verdict.JUMPED;
    }
    clearRun();
    lambda = lambdaFor(d);
    if (d > 0) {
      nowMillis = t;
    }
    if (support < confirmRecords) {
      support++;
    }
    return Verdict.ACCEPTED;
  }

  /** Forgets the run entirely, so the state is as if its records had never come. */
  private void clearRun() {
    runCount = 0;
    runSide = 0;
    runLastMillis = 0;
  }

  /** The forgetting factor for a step of {@code d} ms (none backwards), floored at {@link #MIN_LAMBDA}. */
  private double lambdaFor(long d) {
    forgetsAll = false;
    if (halfLifeMillis <= 0) {
      return factor;
    }
    if (d <= 0) {
      return 1.0;
    }
    double halvings = d / halfLifeMillis;
    if (halvings >= MAX_HALVINGS) {
      forgetsAll = true;
      return 1.0;
    }
    return StrictMath.pow(2.0, -halvings);
  }

  private static String span(long ms) {
    return java.time.Duration.ofMillis(ms).toString();
  }

  /** The clock: the largest accepted training time (or where a confirmed jump set it); {@code Long.MIN_VALUE} before any. */
  public long nowMillis() { return nowMillis; }

  /** The forgetting factor for the record accepted last. */
  public double lambda() { return lambda; }

  /**
   * Whether the record accepted last comes {@value #MAX_HALVINGS} half-lives or more after the
   * clock: the data before it is forgotten entirely and the model restarts from its prior
   * ({@link #lambda()} is then 1, for the fresh model).
   */
  public boolean forgetsAll() { return forgetsAll; }

  /** Jumps accepted since the state began. */
  public long jumps() { return jumps; }

  /**
   * Whether the clock is still provisional: fewer than {@code input.clock.confirm_records} training
   * records accepted since the start, so a record far behind it may yet overrule it (rule 5).
   */
  public boolean provisional() { return nowMillis != Long.MIN_VALUE && support < confirmRecords; }

  /** Why the last record was rejected. */
  public String lastDetail() { return detail; }

  /** Writes the clock's state. @param out modified */
  void writeTo(DataOutput out) throws IOException {
    out.writeLong(nowMillis);
    out.writeInt(support);
    out.writeInt(runCount);
    out.writeInt(runSide);
    out.writeLong(runLastMillis);
    out.writeLong(jumps);
  }

  /** Reads what {@link #writeTo} wrote. */
  void readFrom(DataInput in) throws IOException {
    nowMillis = in.readLong();
    support = in.readInt();
    runCount = in.readInt();
    runSide = in.readInt();
    runLastMillis = in.readLong();
    jumps = in.readLong();
  }

  /** The state a checkpoint of version 2 implies: its time, confirmed when it had enough records, no run. */
  void restoreLegacy(long nowMillis, long trainedRecords) {
    this.nowMillis = nowMillis;
    this.support = (int) Math.min(confirmRecords, trainedRecords);
    clearRun();
    this.jumps = 0;
  }
}
