package dev.runnel.connect.kafka;

import org.apache.kafka.common.TopicPartition;

/** Creates {@link SumProcessor}s; loadable by class name in {@link RunnerMain}. */
public final class SumProcessorFactory implements ProcessorFactory {
  public SumProcessorFactory() {}

  @Override public PartitionProcessor create(TopicPartition tp) { return new SumProcessor(tp.partition()); }
}
