package dev.runnel.connect.testing;

import dev.runnel.connect.broker.EmbeddedBroker;
import java.io.IOException;
import java.net.InetSocketAddress;
import java.net.ServerSocket;
import java.net.Socket;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import org.testcontainers.DockerClientFactory;
import org.testcontainers.kafka.KafkaContainer;
import org.testcontainers.utility.DockerImageName;

/**
 * A Kafka broker in a container, started by Testcontainers' Kafka module from an image the user
 * names (an {@code apache/kafka} image at any version), for running the same Kafka tests against a
 * production broker version. Compiled only with the Maven profile {@code containers}; reached by
 * {@link EmbeddedKafkaExtension} through reflection, so the default build needs neither Docker nor
 * Testcontainers.
 *
 * <p>The broker gets the same settings the tests rely on as the embedded broker
 * ({@link EmbeddedBroker#SINGLE_NODE_SETTINGS}: transactions with replication 1, fast group joins),
 * as the image's {@code KAFKA_*} environment variables. The client port is bound to a fixed host
 * port so that {@link #kill()} and {@link #start()} (a crash and a restart of the same container,
 * its data kept) leave the address the clients know unchanged.
 */
public final class ContainerBroker implements TestBroker, AutoCloseable {
  private static final int KAFKA_PORT = 9092;

  private final String image;
  private final KafkaContainer container;
  private final int hostPort;

  private ContainerBroker(String image, KafkaContainer container, int hostPort) {
    this.image = image;
    this.container = container;
    this.hostPort = hostPort;
  }

  /** Null when a Docker engine answers, else a short reason. */
  public static String dockerUnavailableReason() {
    try {
      return DockerClientFactory.instance().isDockerAvailable() ? null : "Testcontainers found no Docker environment";
    } catch (RuntimeException e) {
      return e.getMessage();
    }
  }

  /** Starts a broker from the image and waits until it is ready. */
  public static ContainerBroker start(String image) throws IOException {
    int port = freePort();
    KafkaContainer c = new KafkaContainer(DockerImageName.parse(image).asCompatibleSubstituteFor("apache/kafka"));
    for (Map.Entry<String, String> e : EmbeddedBroker.SINGLE_NODE_SETTINGS.entrySet()) {
      c.withEnv("KAFKA_" + e.getKey().toUpperCase(Locale.ROOT).replace('.', '_'), e.getValue());
    }
    c.setPortBindings(List.of(port + ":" + KAFKA_PORT));
    c.start();
    return new ContainerBroker(image, c, port);
  }

  @Override public String bootstrapServers() { return container.getBootstrapServers(); }

  @Override public void kill() {
    container.getDockerClient().killContainerCmd(container.getContainerId()).exec();
  }

  @Override public void start() throws IOException {
    container.getDockerClient().startContainerCmd(container.getContainerId()).exec();
    long deadline = System.nanoTime() + 90_000_000_000L;
    while (System.nanoTime() < deadline) {
      try (Socket s = new Socket()) {
        s.connect(new InetSocketAddress(container.getHost(), hostPort), 1000);
        return;
      } catch (IOException notYet) {
        try {
          Thread.sleep(200);
        } catch (InterruptedException e) {
          Thread.currentThread().interrupt();
          throw new IOException("interrupted while waiting for " + image, e);
        }
      }
    }
    throw new IOException("the broker from " + image + " did not accept connections within 90 s after a restart");
  }

  @Override public String description() { return "container from " + image; }

  @Override public void close() { container.stop(); }

  private static int freePort() throws IOException {
    try (ServerSocket s = new ServerSocket(0)) {
      return s.getLocalPort();
    }
  }
}
