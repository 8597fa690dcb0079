package dev.runnel.connect.broker;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.KafkaTestSupport;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.apache.kafka.clients.consumer.ConsumerRecord;
import org.apache.kafka.clients.producer.KafkaProducer;
import org.apache.kafka.clients.producer.ProducerConfig;
import org.apache.kafka.clients.producer.ProducerRecord;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;

@ExtendWith(EmbeddedKafkaExtension.class)
class EmbeddedBrokerTest {

  @Test void committedTransactionIsVisibleReadCommittedAndAbortedOneIsNot(EmbeddedBroker broker) throws Exception {
    String topic = "broker-tx-check";
    KafkaTestSupport.createTopic(broker.bootstrapServers(), topic, 1);
    Map<String, Object> cfg = KafkaTestSupport.producerConfig(broker.bootstrapServers());
    cfg.put(ProducerConfig.TRANSACTIONAL_ID_CONFIG, "broker-tx-check");
    cfg.put(ProducerConfig.ENABLE_IDEMPOTENCE_CONFIG, true); // transactions need it; the test helpers turn it off
    cfg.put(ProducerConfig.MAX_IN_FLIGHT_REQUESTS_PER_CONNECTION, 5);
    try (KafkaProducer<byte[], byte[]> p = new KafkaProducer<>(cfg)) {
      p.initTransactions();
      p.beginTransaction();
      p.send(new ProducerRecord<>(topic, 0, null, "committed-1".getBytes(StandardCharsets.UTF_8)));
      p.send(new ProducerRecord<>(topic, 0, null, "committed-2".getBytes(StandardCharsets.UTF_8)));
      p.commitTransaction();
      p.beginTransaction();
      p.send(new ProducerRecord<>(topic, 0, null, "aborted".getBytes(StandardCharsets.UTF_8)));
      p.flush();
      p.abortTransaction();
      p.beginTransaction();
      p.send(new ProducerRecord<>(topic, 0, null, "committed-3".getBytes(StandardCharsets.UTF_8)));
      p.commitTransaction();
    }
    List<String> seen = new ArrayList<>();
    for (ConsumerRecord<byte[], byte[]> r : KafkaTestSupport.readAll(broker.bootstrapServers(), topic)) {
      seen.add(new String(r.value(), StandardCharsets.UTF_8));
    }
    assertEquals(List.of("committed-1", "committed-2", "committed-3"), seen);
  }

  @Test void childClasspathContainsTheBrokerJars() throws Exception {
    String cp = EmbeddedBroker.childClasspath();
    assertTrue(cp.contains("kafka_2.13"), "kafka_2.13 jar on the child classpath");
    assertTrue(cp.contains("kafka-clients"), "kafka-clients jar on the child classpath");
  }

  @Test void rejectsEqualPorts() {
    IllegalArgumentException e = org.junit.jupiter.api.Assertions.assertThrows(IllegalArgumentException.class,
        () -> new EmbeddedBroker(java.nio.file.Paths.get("target", "unused"), 9092, 9092, Map.of(), EmbeddedBroker.DEFAULT_START_TIMEOUT, "256m"));
    assertTrue(e.getMessage().contains("9092"), e.getMessage());
  }

  /** Surefire's booter and the packaged jar list their classpath only in the manifest's Class-Path; the child needs the jars themselves. */
  @Test void manifestOnlyJarIsExpandedToTheJarsItLists() throws Exception {
    java.nio.file.Path dir = java.nio.file.Paths.get("target", "manifest-only").toAbsolutePath();
    java.nio.file.Files.createDirectories(dir);
    StringBuilder cp = new StringBuilder();
    for (String e : System.getProperty("java.class.path").split(java.io.File.pathSeparator)) {
      if (e.contains("kafka")) cp.append(java.nio.file.Paths.get(e).toAbsolutePath().toUri()).append(' ');
    }
    java.util.jar.Manifest mf = new java.util.jar.Manifest();
    mf.getMainAttributes().put(java.util.jar.Attributes.Name.MANIFEST_VERSION, "1.0");
    mf.getMainAttributes().put(java.util.jar.Attributes.Name.CLASS_PATH, cp.toString().trim());
    java.nio.file.Path jar = dir.resolve("only-manifest.jar");
    new java.util.jar.JarOutputStream(java.nio.file.Files.newOutputStream(jar), mf).close(); // nothing but the manifest
    String expanded = EmbeddedBroker.childClasspath(jar.toString());
    assertTrue(expanded.startsWith(jar.toString()), expanded);
    assertTrue(expanded.contains("kafka_2.13-"), "kafka_2.13 reached through the manifest: " + expanded);
  }

  @Test void withoutTheBrokerJarsTheErrorSaysWhatIsMissing() {
    java.io.IOException e = org.junit.jupiter.api.Assertions.assertThrows(java.io.IOException.class,
        () -> EmbeddedBroker.childClasspath(java.nio.file.Paths.get("target", "classes").toAbsolutePath().toString()));
    assertTrue(e.getMessage().contains("kafka_2.13"), e.getMessage());
  }

  @Test void aRequestedPortInUseIsReportedBeforeLaunching() throws Exception {
    java.nio.file.Path dir = java.nio.file.Paths.get("target", "embedded-kafka", "port-in-use").toAbsolutePath();
    try (java.net.ServerSocket taken = new java.net.ServerSocket(0, 50, java.net.InetAddress.getByName("127.0.0.1"))) {
      EmbeddedBroker b = new EmbeddedBroker(dir, taken.getLocalPort(), 0, Map.of(), java.time.Duration.ofSeconds(60), "256m");
      java.io.IOException e = org.junit.jupiter.api.Assertions.assertThrows(java.io.IOException.class, b::start);
      assertTrue(e.getMessage().contains("port " + taken.getLocalPort()) && e.getMessage().contains("in use"), e.getMessage());
      assertTrue(!b.isRunning());
    }
  }

  /** The child fails to bind (the listener is overridden to a taken port): the error names broker.log and quotes it. */
  @Test void aBrokerThatCannotStartPointsToItsLog() throws Exception {
    java.nio.file.Path dir = java.nio.file.Paths.get("target", "embedded-kafka", "port-taken").toAbsolutePath();
    dev.runnel.connect.testing.EmbeddedKafkaExtension.deleteTree(dir);
    int cport;
    try (java.net.ServerSocket free = new java.net.ServerSocket(0, 50, java.net.InetAddress.getByName("127.0.0.1"))) {
      cport = free.getLocalPort();
    }
    try (java.net.ServerSocket taken = new java.net.ServerSocket(0, 50, java.net.InetAddress.getByName("127.0.0.1"))) {
      EmbeddedBroker b = new EmbeddedBroker(dir, 0, cport,
          Map.of("listeners", "PLAINTEXT://127.0.0.1:" + taken.getLocalPort() + ",CONTROLLER://127.0.0.1:" + cport,
              "advertised.listeners", "PLAINTEXT://127.0.0.1:" + taken.getLocalPort()),
          java.time.Duration.ofSeconds(60), "256m");
      java.io.IOException e = org.junit.jupiter.api.Assertions.assertThrows(java.io.IOException.class, b::start);
      assertTrue(e.getMessage().contains("broker.log") && e.getMessage().contains("Last lines"), e.getMessage());
      assertTrue(e.getMessage().contains("Address already in use"), "the quoted log says why: " + e.getMessage());
      assertTrue(!b.isRunning());
    }
  }
}
