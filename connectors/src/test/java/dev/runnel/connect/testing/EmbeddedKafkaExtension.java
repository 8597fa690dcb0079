package dev.runnel.connect.testing;

import dev.runnel.connect.broker.EmbeddedBroker;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.Paths;
import java.util.Comparator;
import java.util.stream.Stream;
import org.junit.jupiter.api.extension.ExtensionContext;
import org.junit.jupiter.api.extension.ParameterContext;
import org.junit.jupiter.api.extension.ParameterResolver;

/**
 * Injects a running {@link EmbeddedBroker} into test constructors and methods.
 *
 * <p>One broker per test JVM, shared by every test class that uses this extension: it is kept in the root
 * {@link ExtensionContext} store and stopped when the store closes (after the last test). Starting a broker
 * costs a few seconds; sharing it keeps the suite short. Tests therefore use their own topic and group names.
 * A test that kills or restarts the broker must leave it running. Data: {@code target/embedded-kafka/shared},
 * emptied at the first use in a JVM.
 *
 * <p>// Testcontainers: where a Docker engine exists, the Testcontainers Kafka module could provide the broker
 * instead; every test here runs without Docker, so that dependency is not added.
 */
public final class EmbeddedKafkaExtension implements ParameterResolver {
  private static final ExtensionContext.Namespace NS = ExtensionContext.Namespace.create(EmbeddedKafkaExtension.class);

  @Override public boolean supportsParameter(ParameterContext pc, ExtensionContext ec) {
    return pc.getParameter().getType() == EmbeddedBroker.class;
  }

  @Override public Object resolveParameter(ParameterContext pc, ExtensionContext ec) {
    return ec.getRoot().getStore(NS).computeIfAbsent("broker", k -> startShared(), EmbeddedBroker.class);
  }

  private static EmbeddedBroker startShared() {
    Path dir = Paths.get("target", "embedded-kafka", "shared").toAbsolutePath();
    try {
      deleteTree(dir);
      EmbeddedBroker b = new EmbeddedBroker(dir);
      b.start();
      return b;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /** Deletes a folder tree if it exists. */
  public static void deleteTree(Path dir) throws IOException {
    if (!Files.exists(dir)) return;
    try (Stream<Path> s = Files.walk(dir)) {
      for (Path p : (Iterable<Path>) s.sorted(Comparator.reverseOrder())::iterator) Files.delete(p);
    }
  }
}
