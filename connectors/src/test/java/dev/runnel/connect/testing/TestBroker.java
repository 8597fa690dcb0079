package dev.runnel.connect.testing;

import java.io.IOException;

/**
 * The Kafka broker a test runs against, whichever kind it is: the embedded broker started from the
 * Kafka jars on the test classpath (the default, no Docker needed), or a broker in a container
 * started by Testcontainers from an image the user names ({@code -Pcontainers
 * -Drunnel.kafka.image=apache/kafka:3.9.1}). Tests receive it from {@link EmbeddedKafkaExtension}
 * and use nothing else of the broker, so every Kafka test runs against both without being written
 * twice.
 */
public interface TestBroker {

  /** The address clients connect to, {@code host:port}. Stays the same across {@link #kill()} and {@link #start()}. */
  String bootstrapServers();

  /** Stops the broker at once (SIGKILL), as a crash would; its data stays. */
  void kill();

  /** Starts the broker again after {@link #kill()}, on the same address, and waits until it answers. */
  void start() throws IOException;

  /** One line for messages: which broker this is (the image, or the embedded broker's version and folder). */
  String description();
}
