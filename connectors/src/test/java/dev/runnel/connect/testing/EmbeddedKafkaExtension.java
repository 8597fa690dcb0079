package dev.runnel.connect.testing;

import dev.runnel.connect.broker.EmbeddedBroker;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.lang.reflect.Constructor;
import java.lang.reflect.Executable;
import java.lang.reflect.InvocationTargetException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.Paths;
import java.util.Arrays;
import java.util.Comparator;
import java.util.Optional;
import java.util.stream.Stream;
import org.junit.jupiter.api.extension.ConditionEvaluationResult;
import org.junit.jupiter.api.extension.ExecutionCondition;
import org.junit.jupiter.api.extension.ExtensionContext;
import org.junit.jupiter.api.extension.ParameterContext;
import org.junit.jupiter.api.extension.ParameterResolver;

/**
 * The one seam through which every Kafka test obtains its broker: injects a {@link TestBroker} (any
 * Kafka test) or an {@link EmbeddedBroker} (tests of the embedded launcher itself) into test
 * constructors and methods.
 *
 * <p>Which broker a {@link TestBroker} is: the embedded broker by default; with the system property
 * {@code runnel.kafka.image} set (the {@code containers} Maven profile sets it), a broker in a
 * container started by Testcontainers from that image ({@code ContainerBroker}, compiled only in that
 * profile). Where no Docker engine is reachable, the tests that take a {@link TestBroker} are skipped
 * with one line that says so; they never fail for that reason.
 *
 * <p>One broker of each kind per test JVM, shared by every test class that uses this extension: it
 * is kept in the root {@link ExtensionContext} store and stopped when the store closes (after the
 * last test). Starting a broker costs a few seconds; sharing it keeps the suite short. Tests therefore
 * use their own topic and group names. A test that kills the broker must start it again. Embedded
 * broker data: {@code target/embedded-kafka/shared}, emptied at the first use in a JVM.
 */
public final class EmbeddedKafkaExtension implements ParameterResolver, ExecutionCondition {
  /** The system property naming a container image; unset or empty means the embedded broker. */
  public static final String IMAGE_PROPERTY = "runnel.kafka.image";

  private static final ExtensionContext.Namespace NS = ExtensionContext.Namespace.create(EmbeddedKafkaExtension.class);
  private static final String CONTAINER_CLASS = "dev.runnel.connect.testing.ContainerBroker";
  private static volatile boolean skipNoticePrinted;

  @Override public boolean supportsParameter(ParameterContext pc, ExtensionContext ec) {
    Class<?> t = pc.getParameter().getType();
    return t == TestBroker.class || t == EmbeddedBroker.class;
  }

  @Override public Object resolveParameter(ParameterContext pc, ExtensionContext ec) {
    ExtensionContext.Store store = ec.getRoot().getStore(NS);
    if (pc.getParameter().getType() == EmbeddedBroker.class) {
      return embedded(store);
    }
    return image().isPresent()
        ? store.computeIfAbsent("container", k -> startContainer(image().get()), ClosableBroker.class).broker
        : store.computeIfAbsent("embedded-seam", k -> new EmbeddedTestBroker(embedded(store)), TestBroker.class);
  }

  private static EmbeddedBroker embedded(ExtensionContext.Store store) {
    return store.computeIfAbsent("broker", k -> startShared(), EmbeddedBroker.class);
  }

  /** Skips a test that takes a {@link TestBroker} when a container broker was asked for and no Docker engine is reachable. */
  @Override public ConditionEvaluationResult evaluateExecutionCondition(ExtensionContext ec) {
    Optional<String> image = image();
    if (image.isEmpty() || !takesTestBroker(ec)) {
      return ConditionEvaluationResult.enabled("the broker is available");
    }
    String reason = dockerUnavailableReason();
    if (reason == null) {
      return ConditionEvaluationResult.enabled("a Docker engine is reachable for " + image.get());
    }
    String line = "runnel: -Pcontainers asked for a Kafka broker from " + image.get()
        + ", but no Docker engine is reachable (" + reason + "); the Kafka tests skip."
        + " Without -Pcontainers they run against the embedded broker.";
    if (!skipNoticePrinted) {
      skipNoticePrinted = true;
      System.err.println(line);
    }
    return ConditionEvaluationResult.disabled(line);
  }

  /** The container image asked for, if any. */
  public static Optional<String> image() {
    String v = System.getProperty(IMAGE_PROPERTY, "").trim();
    return v.isEmpty() || v.startsWith("${") ? Optional.empty() : Optional.of(v);
  }

  private static boolean takesTestBroker(ExtensionContext ec) {
    Optional<Executable> method = ec.getTestMethod().map(m -> m);
    if (method.isEmpty()) {
      return false; // class level: decided per test
    }
    if (takes(method.get())) {
      return true;
    }
    for (Constructor<?> c : ec.getRequiredTestClass().getDeclaredConstructors()) {
      if (takes(c)) {
        return true;
      }
    }
    return false;
  }

  private static boolean takes(Executable e) {
    return Arrays.asList(e.getParameterTypes()).contains(TestBroker.class);
  }

  /** Null when a Docker engine answers, else why not (asked of {@code ContainerBroker} by reflection). */
  private static String dockerUnavailableReason() {
    try {
      Class<?> c = Class.forName(CONTAINER_CLASS);
      return (String) c.getMethod("dockerUnavailableReason").invoke(null);
    } catch (ClassNotFoundException e) {
      return "the container support is compiled only with the Maven profile -Pcontainers";
    } catch (ReflectiveOperationException e) {
      return e.toString();
    }
  }

  private static ClosableBroker startContainer(String image) {
    try {
      Class<?> c = Class.forName(CONTAINER_CLASS);
      return new ClosableBroker((TestBroker) c.getMethod("start", String.class).invoke(null, image));
    } catch (InvocationTargetException e) {
      throw new IllegalStateException("could not start a Kafka broker from " + image + ": " + e.getCause(), e.getCause());
    } catch (ReflectiveOperationException e) {
      throw new IllegalStateException("run with -Pcontainers to start a broker from " + image + ": " + e, e);
    }
  }

  /** Stops a container broker when the root store closes. */
  static final class ClosableBroker implements ExtensionContext.Store.CloseableResource {
    final TestBroker broker;

    ClosableBroker(TestBroker broker) { this.broker = broker; }

    @Override public void close() throws Throwable {
      if (broker instanceof AutoCloseable a) {
        a.close();
      }
    }
  }

  /** The embedded broker seen through the seam. */
  static final class EmbeddedTestBroker implements TestBroker {
    private final EmbeddedBroker broker;

    EmbeddedTestBroker(EmbeddedBroker broker) { this.broker = broker; }

    @Override public String bootstrapServers() { return broker.bootstrapServers(); }

    @Override public void kill() { broker.kill(); }

    @Override public void start() throws IOException { broker.start(); }

    @Override public String description() { return "embedded broker in " + broker.folder(); }
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
