package dev.runnel.connect.kafka;

/**
 * Where a {@link PartitionProcessor} sends its outputs. Each call produces one record, inside the open
 * transaction, to {@code <name>.predictions}, {@code <name>.coefficients} or {@code <name>.rejects}, on the
 * partition with the input partition's number (modulo the output topic's partition count).
 * The arrays are handed to the producer: the caller must not change them after the call.
 */
public interface Emitter {
  /** One prediction record. */
  void prediction(byte[] key, byte[] value);
  /** One coefficient snapshot record (to {@code <name>.coefficients}). */
  void snapshot(byte[] key, byte[] value);
  /** One rejected input record, with its reason inside {@code value}. */
  void reject(byte[] key, byte[] value);
}
