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
 *   <li>When {@link #process} throws (a defect, not bad input: bad input is a reject), the record is set
 *       aside: the runner aborts the open transaction, restores fresh processors from the last committed
 *       checkpoints and replays; at the set-aside offset it calls {@link #processingFailed} instead of
 *       {@link #process}. So {@link #process} must be deterministic: the same records after the same
 *       {@link #restore} give the same state.</li>
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

  /**
   * Emits the reject for a record whose {@link #process} threw, in its place; must not change the state.
   * The default writes a small JSON object with reason {@code processing_failed}, the message
   * and the offset; processors with their own reject format override it.
   *
   * @param message what was thrown (class and message), never null
   * @param key record key, may be null. Not modified.
   * @param value record value, may be null. Not modified.
   */
  default void processingFailed(long offset, long timestampMillis, byte[] key, byte[] value, String message, Emitter out) {
    StringBuilder b = new StringBuilder(96 + message.length());
    b.append("{\"reason\":\"processing_failed\",\"detail\":\"");
    for (int i = 0; i < message.length(); i++) {
      char c = message.charAt(i);
      if (c == '"' || c == '\\') {
        b.append('\\').append(c);
      } else if (c < 0x20 || c == 0x7f || Character.isSurrogate(c)) {
        b.append(String.format(java.util.Locale.ROOT, "\\u%04x", (int) c));
      } else {
        b.append(c);
      }
    }
    b.append("\",\"offset\":").append(offset).append('}');
    out.reject(key, b.toString().getBytes(java.nio.charset.StandardCharsets.UTF_8));
  }

  /**
   * Headers the runner puts on every output record this processor emits (predictions, snapshots,
   * rejects, settled; not the state records), asked once per processor. The default: none.
   *
   * @return new array; the runner keeps it and never changes it
   */
  default org.apache.kafka.common.header.Header[] outputHeaders() {
    return NO_HEADERS;
  }

  /** The output topics, for {@link #outputHeaders(OutputTopic)}. */
  enum OutputTopic { PREDICTIONS, COEFFICIENTS, REJECTS, SETTLED }

  /**
   * Headers the runner puts on the records this processor emits to one output topic (an encoding
   * may differ per topic: docs/formats.md), asked once per processor and topic. The default:
   * {@link #outputHeaders()} on every topic.
   *
   * @return new array; the runner keeps it and never changes it
   */
  default org.apache.kafka.common.header.Header[] outputHeaders(OutputTopic topic) {
    return outputHeaders();
  }

  /**
   * Whether this processor shares its model with the other partitions' ({@code model.scope: global}):
   * it sends shares through {@link Emitter#share}, and the runner hands it every record of
   * {@code <name>.shares} (read_committed) through {@link #foldShare}. Asked after {@link #restore}.
   * The default: no.
   */
  default boolean sharesModel() {
    return false;
  }

  /**
   * The offset of {@code <name>.shares} partition {@code sharePartition} this processor reads next,
   * as restored from its checkpoint (0 for none). Asked after {@link #restore}.
   */
  default long shareOffset(int sharePartition) {
    return 0L;
  }

  /**
   * One committed record of {@code <name>.shares}, in offset order per share partition, starting at
   * {@link #shareOffset}. The processor folds it in (or skips it: its own, or folded before) and
   * then reads from {@code offset + 1}, which its next checkpoint carries; or it returns false,
   * changing nothing, to be handed the same record again later (it cannot fold yet).
   *
   * @param value the share's bytes. Not modified.
   * @return whether the record was taken
   * @throws RuntimeException when the record cannot be folded at all (not a share, a share lost
   *     before it, another pipeline's); the runner stops with the message
   */
  default boolean foldShare(int sharePartition, long offset, byte[] value) {
    return true;
  }

  /** No output headers. */
  org.apache.kafka.common.header.Header[] NO_HEADERS = new org.apache.kafka.common.header.Header[0];

  /** The whole state as bytes, called inside the transaction at each commit (only for partitions touched since the last commit). */
  byte[] checkpoint();
}
