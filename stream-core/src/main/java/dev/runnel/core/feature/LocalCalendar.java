package dev.runnel.core.feature;

import dev.runnel.core.record.EventTimes;
import java.time.Instant;
import java.time.ZoneId;
import java.time.zone.ZoneOffsetTransition;
import java.time.zone.ZoneRules;

/**
 * Local calendar positions of instants in one time zone, by the zone's rules (java.time), with the
 * current UTC offset cached between transitions: a stream moving forward in time allocates only
 * when it crosses a transition. The last {@value #HISTORY} spans between transitions are kept too,
 * so a stream that steps back and forth across a few transitions (late records, a replay that
 * starts over) allocates only the first time it meets each span. Not thread-safe (the cache is
 * mutable; results depend only on the instant).
 */
public final class LocalCalendar {

  /** Spans between transitions remembered besides the current one. */
  static final int HISTORY = 8;

  private final ZoneRules rules;
  private long validFrom = Long.MAX_VALUE;
  private long validUntil = Long.MIN_VALUE;
  private long offsetMillis;
  private final long[] spanFrom = new long[HISTORY];
  private final long[] spanUntil = new long[HISTORY];
  private final long[] spanOffset = new long[HISTORY];
  private int spans;
  private int nextSpan;

  /** @param zone the zone whose rules decide the local time */
  public LocalCalendar(ZoneId zone) { this.rules = zone.getRules(); }

  /** Local wall-clock millis (epoch millis shifted by the zone's offset at that instant). */
  public long localMillis(long epochMillis) {
    if (epochMillis < validFrom || epochMillis >= validUntil) lookUp(epochMillis);
    return epochMillis + offsetMillis;
  }

  /** Makes the span holding {@code t} current: from the history, else from the zone's rules. */
  private void lookUp(long t) {
    for (int k = 0; k < spans; k++) {
      if (t >= spanFrom[k] && t < spanUntil[k]) {
        validFrom = spanFrom[k];
        validUntil = spanUntil[k];
        offsetMillis = spanOffset[k];
        return;
      }
    }
    refresh(t);
    spanFrom[nextSpan] = validFrom;
    spanUntil[nextSpan] = validUntil;
    spanOffset[nextSpan] = offsetMillis;
    nextSpan = (nextSpan + 1) % HISTORY;
    if (spans < HISTORY) spans++;
  }

  private void refresh(long t) {
    Instant i = Instant.ofEpochMilli(t);
    offsetMillis = rules.getOffset(i).getTotalSeconds() * 1000L;
    if (rules.isFixedOffset()) {
      validFrom = Long.MIN_VALUE;
      validUntil = Long.MAX_VALUE;
      return;
    }
    ZoneOffsetTransition next = rules.nextTransition(i);
    validUntil = next == null ? Long.MAX_VALUE : next.getInstant().toEpochMilli();
    ZoneOffsetTransition prev = t == Long.MAX_VALUE ? null : rules.previousTransition(Instant.ofEpochMilli(t + 1));
    validFrom = prev == null ? Long.MIN_VALUE : prev.getInstant().toEpochMilli();
    if (validFrom > t) validFrom = t;
    if (validUntil <= t) validUntil = t + 1;
  }

  /** Local time of day as a fraction of 24 h, in [0, 1). */
  public double dayFraction(long epochMillis) {
    return Math.floorMod(localMillis(epochMillis), EventTimes.MILLIS_PER_DAY) / (double) EventTimes.MILLIS_PER_DAY;
  }

  /** Local date as days since 1970-01-01. */
  public long localEpochDay(long epochMillis) {
    return Math.floorDiv(localMillis(epochMillis), EventTimes.MILLIS_PER_DAY);
  }

  /** Local ISO day of week: Monday = 1 ... Sunday = 7. */
  public int isoDayOfWeek(long epochMillis) { return EventTimes.isoDayOfWeek(localEpochDay(epochMillis)); }

  /** Local day of year, 1-based. */
  public int dayOfYear(long epochMillis) {
    long day = localEpochDay(epochMillis);
    long year = EventTimes.yearOfEpochDay(day);
    return (int) (day - EventTimes.daysFromCivil(year, 1, 1)) + 1;
  }

  /** Days in the local year of the instant: 365 or 366. */
  public int daysInYear(long epochMillis) {
    return EventTimes.isLeapYear(EventTimes.yearOfEpochDay(localEpochDay(epochMillis))) ? 366 : 365;
  }
}
