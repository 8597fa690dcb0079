package dev.runnel.connect.kafka;

/**
 * A snapshot of an {@link ExactlyOnceRunner}'s counters. Counts include work of transactions that were later
 * aborted and replayed, so {@code recordsIn} can exceed the number of distinct input offsets.
 *
 * @param recordsIn input records processed
 * @param outputsOut output records sent (predictions, snapshots, rejects; not checkpoints)
 * @param rejects reject records sent
 * @param commits transactions committed
 * @param aborts transactions aborted (each followed by a rewind to the last commit)
 * @param lastCommitEpochMillis wall-clock time of the last commit, 0 before the first
 * @param lag records behind the end of the assigned input partitions at the last commit, -1 if unknown
 * @param processingFailures records whose processing threw and that were set aside as {@code processing_failed}
 *     rejects (each also caused one abort)
 * @param brokerAwaySinceEpochMillis wall-clock time the runner last had a connection before the cluster became
 *     unreachable (reported after 5 s without one), 0 while it is reachable
 */
public record RunnerCounters(long recordsIn, long outputsOut, long rejects, long commits, long aborts,
    long lastCommitEpochMillis, long lag, long processingFailures, long brokerAwaySinceEpochMillis) {

  /** In words, for log lines: "12,000 records in, 12,040 outputs out (30 rejects), 6 commits, 0 aborts, 0 records behind". */
  @Override
  public String toString() {
    return String.format(java.util.Locale.ROOT, "%,d records in, %,d outputs out (%,d rejects, %,d set aside), %,d commits, %,d aborts, %s",
        recordsIn, outputsOut, rejects, processingFailures, commits, aborts, lag < 0 ? "lag unknown" : String.format(java.util.Locale.ROOT,
            "%,d records behind", lag));
  }
}
