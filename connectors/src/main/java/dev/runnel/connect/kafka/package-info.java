/**
 * The exactly-once Kafka runner: consume, process per input partition, produce outputs and a state
 * checkpoint per touched partition, and commit offsets, outputs and checkpoints in one Kafka transaction.
 * Public API: {@link dev.runnel.connect.kafka.ExactlyOnceRunner}, {@link dev.runnel.connect.kafka.RunnerSettings},
 * {@link dev.runnel.connect.kafka.PartitionProcessor}, {@link dev.runnel.connect.kafka.Emitter},
 * {@link dev.runnel.connect.kafka.ProcessorFactory}, {@link dev.runnel.connect.kafka.TopicSetup}.
 */
package dev.runnel.connect.kafka;
