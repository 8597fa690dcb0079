package dev.runnel.connect.replay;

/** Receives one source record. The buffer is reused: copy what you keep. */
@FunctionalInterface
public interface RecordHandler {
  /**
   * @param buf holds the record's value bytes. Not modified.
   * @param off start of the value
   * @param len length of the value (0 for a record without a value)
   * @param timestampMillis the Kafka timestamp (0 for a plain file line)
   * @param partition source partition (0 for a plain file)
   * @param offset source offset (the line number for a plain file)
   */
  void record(byte[] buf, int off, int len, long timestampMillis, int partition, long offset);
}
