package dev.runnel.connect.kafka;

/**
 * Per-input-partition processing; one instance per assigned partition, used by one thread.
 *
 * <p>Contract with {@link ExactlyOnceRunner}:
 * <ul>
 *   <li>{@link #restore} is called exactly once, before any {@link #process} call, with the checkpoint
 *       committed together with the offset processing resumes from (or null: the partition has no
 *       checkpoint yet and processing starts at the group's reset position).</li>
 *   <li>{@link #process} is called for each record in offset order. Outputs go through the {@link Emitter}
 *       and become visible (to read_committed readers) only when the runner commits.</li>
 *   <li>{@link #checkpoint} is called inside the open transaction at each commit, for partitions that
 *       processed at least one record since the previous commit. Its bytes must let {@link #restore}
 *       rebuild a processor that continues with the same outputs bit for bit.</li>
 *   <li>When a transaction is aborted, or the partition moves to another instance, this instance is
 *       dropped and never called again; a new one is created and restored from the last committed
 *       checkpoint.</li>
 * </ul>
 */
public interface PartitionProcessor {
  /** Called once after assignment with the partition's latest committed checkpoint, or null for a fresh start. Not modified. */
  void restore(byte[] checkpointOrNull);

  /**
   * Process one input record; emit outputs through out. Must never throw for bad input (emit a reject instead).
   * @param key record key, may be null. Not modified; valid only during the call.
   * @param value record value, may be null. Not modified; valid only during the call.
   */
  void process(long offset, long timestampMillis, byte[] key, byte[] value, Emitter out);

  /** The whole state as bytes, called inside the transaction at each commit (only for partitions touched since the last commit). */
  byte[] checkpoint();
}
