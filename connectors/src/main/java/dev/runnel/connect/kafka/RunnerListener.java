package dev.runnel.connect.kafka;

/**
 * Told by an {@link ExactlyOnceRunner} how long its commits and restores take, for metrics. Called on the
 * runner's thread: return at once (record a number, nothing more). Both methods do nothing unless overridden.
 */
public interface RunnerListener {

  /** A listener that does nothing. */
  RunnerListener NONE = new RunnerListener() { };

  /** A transaction was committed; {@code nanos} from the first checkpoint sent to the commit's return. */
  default void committed(long nanos) { }

  /**
   * Newly assigned partitions were restored from their checkpoints; {@code nanos} from reading the state
   * topic to the last processor restored.
   */
  default void restored(int partitions, long nanos) { }
}
