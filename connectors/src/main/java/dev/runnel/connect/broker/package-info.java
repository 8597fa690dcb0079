/**
 * The embedded broker: a real single-node Apache Kafka broker in KRaft mode, started as a child JVM
 * from the broker jars on the classpath, with its data in a local folder that survives restarts.
 * Public API: {@link dev.runnel.connect.broker.EmbeddedBroker}.
 */
package dev.runnel.connect.broker;
