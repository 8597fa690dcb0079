package dev.runnel.core.evaluate;

import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.StreamClock;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.JsonRecordDecoder;
import java.util.Arrays;
import java.util.PriorityQueue;

/**
 * The look-ahead of one backtest lane (one configuration, one partition) with horizons: it holds
 * the source records back for a bounded span of event time and, for every actual and horizon h,
 * merges a simulated forecast request issued at {@code T − h} (T the actual's target time) into the
 * records it hands on, just before the first record whose event time is after the issue time. The
 * step thus forecasts from the state after exactly the records, in source order, whose event time
 * is at or before the issue time (a request never follows a learned record with a later time). One
 * writer thread; deterministic.
 *
 * <p>The request is the actual's own record without its target: its other fields (weather,
 * price, ...) are those of the actual, as if they had been known perfectly ahead.
 *
 * <p>Holding back: a record is handed on once its event time is at least {@code lookahead} behind
 * the latest accepted event time read ({@code lookahead} = the largest horizon, plus
 * {@code input.forecast.max_actual_delay} when configured, how late an actual may come after its
 * target time). Records that cannot move the model (no target, undecodable, a time the clock would
 * not accept) are handed on as soon as they reach the front. A request that would have to go
 * before a record already learned from is not simulated and is counted ({@link #beyondLookahead}).
 */
final class SimulatedForecasts {

  /** The lane that runs the step. */
  interface Receiver {
    /**
     * Runs one source record (or logs it as set aside) through the step, in source order.
     *
     * @return whether the step learned from it (it carried its target and was not rejected)
     */
    boolean release(byte[] buf, int len, long fallback, long offset, boolean setAside);

    /** Runs one simulated request; the step's record holds the actual's fields. */
    void request(int horizon, long issueMillis, long targetMillis, long originOffset);
  }

  private static final long NONE = Long.MIN_VALUE;

  private final long[] horizons;
  private final long lookahead;
  private final Receiver receiver;
  private final PipelineStep step;
  private final JsonRecordDecoder decoder;
  private final EventRecord peek;
  private final boolean eventTimeField;
  private final int targetSlot;
  private final int targetTimeSlot;
  /** A copy of the step's clock policy, fed with the actuals as they are read (the step's runs behind). */
  private final StreamClock clock;

  // the ring of held records, in source order
  private byte[][] data = new byte[64][];
  private int[] lens = new int[64];
  private long[] fallbacks = new long[64];
  private long[] offsets = new long[64];
  /** The event time that orders the record against requests, or NONE (handed on at the front). */
  private long[] order = new long[64];
  /** The record's event time when known (for what the step learned), else NONE. */
  private long[] times = new long[64];
  private boolean[] aside = new boolean[64];
  private int head;
  private int size;
  private long headSeq;

  private final PriorityQueue<Request> queue = new PriorityQueue<>();
  private long requestsMade;
  private long watermark = NONE;
  private long learnedMax = NONE;
  private int maxHeld;

  final long[] notBeforeActual;
  final long[] beyondLookahead;

  private record Request(long issue, long target, int horizon, long seq, long originOffset, long order)
      implements Comparable<Request> {
    @Override
    public int compareTo(Request o) {
      int c = Long.compare(issue, o.issue);
      return c != 0 ? c : Long.compare(order, o.order);
    }
  }

  /**
   * @param horizonsMillis the horizons, each positive. Not modified.
   * @param step the lane's step (its record is filled for each request). Not modified here.
   */
  SimulatedForecasts(long[] horizonsMillis, PipelineConfig config, PipelineStep step, Receiver receiver) {
    this.horizons = horizonsMillis.clone();
    this.receiver = receiver;
    this.step = step;
    long max = 0;
    for (long h : horizons) {
      max = Math.max(max, h);
    }
    PipelineConfig.Input in = config.input();
    PipelineConfig.Forecast fc = in.forecast();
    this.lookahead = max + (fc.enabled() ? fc.maxActualDelayMillis() : 0);
    this.eventTimeField = in.eventTime().isPresent();
    this.decoder = eventTimeField
        ? new JsonRecordDecoder(in.schema(), in.limits(), in.eventTime().get().field(), in.eventTime().get().format())
        : new JsonRecordDecoder(in.schema(), in.limits());
    this.peek = new EventRecord(in.schema());
    this.targetSlot = config.targetSlot();
    this.targetTimeSlot = fc.enabled() ? in.schema().slot(fc.targetTimeField()) : -1;
    PipelineConfig.Clock c = in.clock();
    PipelineConfig.Model m = config.model();
    this.clock = new StreamClock(c.maxAheadMillis(), c.confirmRecords(), m.forgettingFactor(), m.forgettingHalfLifeMillis());
    this.notBeforeActual = new long[horizons.length];
    this.beyondLookahead = new long[horizons.length];
  }

  /** The span of event time records are held back for. */
  long lookaheadMillis() {
    return lookahead;
  }

  /** The most records held at once so far. */
  int maxHeld() {
    return maxHeld;
  }

  /** Takes one source record (bytes copied), queues its requests and hands on what is due. */
  void offer(byte[] buf, int off, int len, long fallback, long offset) {
    long e = NONE;
    long raw = NONE;
    if (decoder.decode(buf, off, len, peek) == null && (!eventTimeField || peek.hasEventTime())) {
      raw = eventTimeField ? peek.eventTimeMillis() : fallback;
      if (peek.present(targetSlot) && step.featurizer().check(peek) == null
          && clock.accept(raw) != StreamClock.Verdict.REJECTED) {
        e = raw;
        watermark = watermark == NONE ? e : Math.max(watermark, e);
        long target = targetTimeSlot >= 0 && peek.present(targetTimeSlot) ? peek.timeMillis(targetTimeSlot) : e;
        long seq = headSeq + size;
        for (int h = 0; h < horizons.length; h++) {
          long issue = target - horizons[h];
          if (issue >= e) {
            notBeforeActual[h]++;
          } else if (learnedMax != NONE && learnedMax > issue) {
            beyondLookahead[h]++;
          } else {
            queue.add(new Request(issue, target, h, seq, offset, requestsMade++));
          }
        }
      }
    }
    append(buf, off, len, fallback, offset, e, raw, false);
    drain(false);
  }

  /** A record set aside (its step threw on it before): kept in order, logged when its turn comes. */
  void offerSetAside(long fallback, long offset) {
    append(null, 0, 0, fallback, offset, NONE, NONE, true);
    drain(false);
  }

  /** Hands on everything held (the end of the source). */
  void finish() {
    drain(true);
    while (!queue.isEmpty()) {
      issue(queue.poll()); // none in practice: every request precedes its actual
    }
  }

  private void append(byte[] buf, int off, int len, long fallback, long offset, long e, long raw, boolean setAside) {
    if (size == lens.length) {
      grow();
    }
    int i = (head + size) % lens.length;
    if (buf != null) {
      if (data[i] == null || data[i].length < len) {
        data[i] = new byte[Math.max(len, 64)];
      }
      System.arraycopy(buf, off, data[i], 0, len);
    }
    lens[i] = len;
    fallbacks[i] = fallback;
    offsets[i] = offset;
    order[i] = e;
    times[i] = raw;
    aside[i] = setAside;
    size++;
    maxHeld = Math.max(maxHeld, size);
  }

  private void grow() {
    int n = lens.length * 2;
    byte[][] d = new byte[n][];
    int[] l = new int[n];
    long[] fb = new long[n];
    long[] of = new long[n];
    long[] or = new long[n];
    long[] tm = new long[n];
    boolean[] as = new boolean[n];
    for (int k = 0; k < size; k++) {
      int i = (head + k) % lens.length;
      d[k] = data[i];
      l[k] = lens[i];
      fb[k] = fallbacks[i];
      of[k] = offsets[i];
      or[k] = order[i];
      tm[k] = times[i];
      as[k] = aside[i];
    }
    data = d;
    lens = l;
    fallbacks = fb;
    offsets = of;
    order = or;
    times = tm;
    aside = as;
    head = 0;
  }

  private void drain(boolean all) {
    while (size > 0) {
      long e = order[head];
      if (!all && e != NONE && e > watermark - lookahead) {
        return;
      }
      if (e != NONE) {
        // requests issued before this record's time go first: the record is not known at their issue time
        while (!queue.isEmpty() && queue.peek().issue() < e) {
          issue(queue.poll());
        }
      }
      int i = head;
      boolean learned = receiver.release(data[i], lens[i], fallbacks[i], offsets[i], aside[i]);
      if (learned && times[i] != NONE) {
        learnedMax = learnedMax == NONE ? times[i] : Math.max(learnedMax, times[i]);
      }
      head = (head + 1) % lens.length;
      size--;
      headSeq++;
    }
  }

  private void issue(Request r) {
    int i = (int) ((head + (r.seq() - headSeq)) % lens.length);
    if (decoder.decode(data[i], 0, lens[i], step.record()) != null) {
      return; // cannot happen: the same bytes decoded when read
    }
    receiver.request(r.horizon(), r.issue(), r.target(), r.originOffset());
  }
}
