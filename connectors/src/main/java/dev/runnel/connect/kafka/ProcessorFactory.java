package dev.runnel.connect.kafka;

/**
 * Creates the processor of one input partition. Called on assignment and after an aborted transaction;
 * the returned instance is then {@linkplain PartitionProcessor#restore restored}. Must have a public
 * no-argument constructor when loaded by class name (see {@link RunnerMain}).
 */
public interface ProcessorFactory {
  PartitionProcessor create(org.apache.kafka.common.TopicPartition tp);
}
