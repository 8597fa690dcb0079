package dev.runnel.connect.replay;

import java.time.Instant;

/**
 * Which part of a topic to replay, the same for every partition: from the beginning, an offset or
 * an event (Kafka) timestamp; to the end as it is when the replay starts, an offset (exclusive) or
 * a timestamp (exclusive).
 *
 * @param startOffset first offset to read, or null
 * @param startTime first Kafka timestamp to read (the first record at or after it), or null
 * @param endOffset offset to stop before, or null
 * @param endTime timestamp to stop before, or null
 */
public record TopicRange(Long startOffset, Instant startTime, Long endOffset, Instant endTime) {

  /** The whole topic. */
  public static final TopicRange ALL = new TopicRange(null, null, null, null);

  /**
   * @throws IllegalArgumentException if both a start offset and a start time (or both ends) are
   *     given, an offset is negative, or the end is before the start
   */
  public TopicRange {
    if (startOffset != null && startTime != null) {
      throw new IllegalArgumentException("give --start-offset or --start-time, not both");
    }
    if (endOffset != null && endTime != null) {
      throw new IllegalArgumentException("give --end-offset or --end-time, not both");
    }
    if (startOffset != null && startOffset < 0) {
      throw new IllegalArgumentException("--start-offset must not be negative, got " + startOffset);
    }
    if (endOffset != null && endOffset < 0) {
      throw new IllegalArgumentException("--end-offset must not be negative, got " + endOffset);
    }
    if (startOffset != null && endOffset != null && endOffset <= startOffset) {
      throw new IllegalArgumentException("--end-offset " + endOffset + " is not after --start-offset " + startOffset
          + "; the end is exclusive and must be greater than the start");
    }
    if (startTime != null && endTime != null && !endTime.isAfter(startTime)) {
      throw new IllegalArgumentException("--end-time " + endTime + " is not after --start-time " + startTime
          + "; the end is exclusive and must be later than the start");
    }
  }
}
