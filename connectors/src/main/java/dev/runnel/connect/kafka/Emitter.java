package dev.runnel.connect.kafka;

/**
 * Where a {@link PartitionProcessor} sends its outputs. Each call produces one record, inside the open
 * transaction, to {@code <name>.predictions}, {@code <name>.coefficients}, {@code <name>.rejects} or {@code <name>.settled}, on the
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

  /**
   * One settled forecast (to {@code <name>.settled}; only pipelines with {@code input.forecast} send
   * them). The default refuses, so an emitter that cannot publish them never drops one silently.
   */
  default void settled(byte[] key, byte[] value) {
    throw new UnsupportedOperationException("this emitter does not publish settled forecasts");
  }

  /**
   * One model share (to {@code <name>.shares}; only processors that {@linkplain
   * PartitionProcessor#sharesModel share their model} send them), inside the open transaction like
   * every output. The default refuses.
   */
  default void share(byte[] key, byte[] value) {
    throw new UnsupportedOperationException("this emitter does not publish model shares");
  }
}
