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
    out.prediction(key, ("{\"partition\":" + partition + ",\"offset\":" + offset + ",\"sum_before\":" + sum + "}").getBytes(StandardCharsets.UTF_8));
    sum += v;
    count++;
    if (count % SNAPSHOT_EVERY == 0) {
      out.snapshot(key, ("{\"partition\":" + partition + ",\"count\":" + count + ",\"sum\":" + sum + "}").getBytes(StandardCharsets.UTF_8));
    }
  }

  @Override public byte[] checkpoint() { return (sum + "," + count).getBytes(StandardCharsets.US_ASCII); }
}
