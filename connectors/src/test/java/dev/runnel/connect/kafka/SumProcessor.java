package dev.runnel.connect.kafka;

import java.nio.charset.StandardCharsets;

/**
 * Deterministic test processor: state is the running sum and count of the values (decimal integers).
 * One prediction per numeric record, value {@code {"partition":p,"offset":o,"sum_before":s}}; a value that is not
 * a number goes to rejects; a snapshot {@code {"partition":p,"count":c,"sum":s}} every 1000 accepted records.
 * Checkpoint: {@code "<sum>,<count>"} in ASCII.
 */
public final class SumProcessor implements PartitionProcessor {
  public static final int SNAPSHOT_EVERY = 1000;
  /**
   * Records between pauses of 1 ms, from the system property {@code runnel.test.recordsPerMilli}
   * (unset: no pause). The crash test runs its child runner at about that many records per
   * millisecond so that its kills land mid-stream: unthrottled, a runner on an idle machine finished
   * the whole input before the last kill.
   */
  private static final int RECORDS_PER_PAUSE = Integer.getInteger("runnel.test.recordsPerMilli", 0);
  private final int partition;
  private long sum;
  private long count;
  private boolean restored;

  public SumProcessor(int partition) { this.partition = partition; }

  @Override public void restore(byte[] checkpointOrNull) {
    if (restored) throw new IllegalStateException("restore called twice");
    restored = true;
    if (checkpointOrNull == null) return;
    String[] parts = new String(checkpointOrNull, StandardCharsets.US_ASCII).split(",");
    sum = Long.parseLong(parts[0]);
    count = Long.parseLong(parts[1]);
  }

  @Override public void process(long offset, long timestampMillis, byte[] key, byte[] value, Emitter out) {
    if (!restored) throw new IllegalStateException("process before restore");
    long v;
    try {
      v = Long.parseLong(new String(value, StandardCharsets.UTF_8));
    } catch (RuntimeException e) {
      out.reject(key, ("{\"partition\":" + partition + ",\"offset\":" + offset + ",\"reason\":\"not_a_number\"}").getBytes(StandardCharsets.UTF_8));
      return;
    }
    if (RECORDS_PER_PAUSE > 0 && count % RECORDS_PER_PAUSE == 0) {
      try {
        Thread.sleep(1);
      } catch (InterruptedException e) {
        Thread.currentThread().interrupt();
      }
    }
    out.prediction(key, ("{\"partition\":" + partition + ",\"offset\":" + offset + ",\"sum_before\":" + sum + "}").getBytes(StandardCharsets.UTF_8));
    sum += v;
    count++;
    if (count % SNAPSHOT_EVERY == 0) {
      out.snapshot(key, ("{\"partition\":" + partition + ",\"count\":" + count + ",\"sum\":" + sum + "}").getBytes(StandardCharsets.UTF_8));
    }
  }

  @Override public byte[] checkpoint() { return (sum + "," + count).getBytes(StandardCharsets.US_ASCII); }
}
