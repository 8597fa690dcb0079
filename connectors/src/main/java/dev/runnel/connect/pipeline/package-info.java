/** The bridge between the exactly-once Kafka runner and the stream-core pipeline step. */
package dev.runnel.connect.pipeline;
