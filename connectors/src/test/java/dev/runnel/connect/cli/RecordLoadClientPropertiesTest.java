package dev.runnel.connect.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.connect.testing.TestBroker;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code record} and {@code load} take {@code kafka.client_properties} (and the bootstrap servers) from
 * {@code --config}, as {@code run} and {@code backtest} do. A property's arrival is shown by the Kafka
 * client itself: an invalid {@code security.protocol} is rejected by the client's own config check,
 * naming the value, which only the configuration file holds.
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class RecordLoadClientPropertiesTest {

  private static final String UNSET = "RUNNEL_TEST_UNSET_VARIABLE_7731";

  /** The example configuration with its kafka section's servers and client properties replaced. */
  private static Path config(Path dir, String name, String servers, String clientProperties) throws IOException {
    String yaml = Files.readString(Path.of("../docs/examples/with-weather.yaml"));
    String line = "  bootstrap_servers: \"\"        # empty: the embedded broker\n";
    assertTrue(yaml.contains(line), "the example has an empty bootstrap_servers line");
    Path p = dir.resolve(name);
    Files.writeString(p, yaml.replace(line, "  bootstrap_servers: \"" + servers + "\"\n  client_properties: "
        + clientProperties + "\n"));
    return p;
  }


  private static Path sampleCopy(Path dir, int lines) throws IOException {
    List<String> all = Files.readAllLines(Path.of("../demo-data/samples/quillmarsh-small.jsonl"));
    Path p = dir.resolve("part.jsonl");
    Files.write(p, all.subList(0, lines));
    return p;
  }

  @Test
  void record_passesTheConfigsClientPropertiesToItsConsumer(@TempDir Path dir) throws IOException {
    Path cfg = config(dir, "bad-protocol.yaml", "127.0.0.1:1", "{security.protocol: NOT_A_PROTOCOL}");
    String[] r = CliCapture.run("record", "--config", cfg.toString(), "--topic", "t", "--out", dir.resolve("o.jsonl").toString(), "--quiet");
    assertEquals("2", r[0], r[1]);
    assertTrue(r[1].startsWith("runnel record: ") && r[1].contains("NOT_A_PROTOCOL") && r[1].contains("security.protocol"), r[1]);
  }

  @Test
  void bothVerbs_resolveEnvironmentReferences_andNameTheKeyOfAMissingOne(@TempDir Path dir) throws IOException {
    Path cfg = config(dir, "env.yaml", "127.0.0.1:1", "{sasl.jaas.config: \"${" + UNSET + "}\"}");
    String expected = "client property sasl.jaas.config refers to environment variable " + UNSET + ", which is not set";
    String[] rec = CliCapture.run("record", "--config", cfg.toString(), "--topic", "t", "--out", dir.resolve("o.jsonl").toString(), "--quiet");
    assertEquals("2", rec[0]);
    assertEquals("runnel record: " + expected, rec[1].trim());
    String[] load = CliCapture.run("load", "--config", cfg.toString(), "--source", sampleCopy(dir, 10).toString(), "--topic", "t");
    assertEquals("2", load[0]);
    assertEquals("runnel load: " + expected, load[1].trim());
  }

  @Test
  void load_passesAdminAndProducerKeysToThoseClients(TestBroker broker, @TempDir Path dir) throws IOException {
    String bs = broker.bootstrapServers();
    Path file = sampleCopy(dir, 20);
    Path badAdmin = config(dir, "bad-admin.yaml", bs, "{admin.security.protocol: BOGUS_ADMIN}");
    String[] a = CliCapture.run("load", "--config", badAdmin.toString(), "--source", file.toString(), "--topic", "props-admin");
    assertEquals("2", a[0], a[1]);
    assertTrue(a[1].contains("BOGUS_ADMIN"), a[1]);
    // the servers come from the configuration: the admin client reaches the broker, the producer gets its own key
    Path badProducer = config(dir, "bad-producer.yaml", bs, "{producer.security.protocol: BOGUS_PRODUCER}");
    String[] p = CliCapture.run("load", "--config", badProducer.toString(), "--source", file.toString(), "--topic", "props-producer");
    assertEquals("2", p[0], p[1]);
    assertTrue(p[1].contains("BOGUS_PRODUCER"), p[1]);
  }

  @Test
  void loadThenRecord_withTheConfigsServersAndProperties(TestBroker broker, @TempDir Path dir) throws IOException {
    Path cfg = config(dir, "ok.yaml", broker.bootstrapServers(),
        "{request.timeout.ms: 20000, producer.linger.ms: 5, consumer.fetch.min.bytes: 1}");
    Path file = sampleCopy(dir, 300);
    String[] load = CliCapture.run("load", "--config", cfg.toString(), "--source", file.toString(), "--topic", "props-roundtrip");
    assertEquals("0", load[0], load[1]);
    assertTrue(load[2].startsWith("published 300 records"), load[2]);
    Path out = dir.resolve("rec.jsonl");
    String[] rec = CliCapture.run("record", "--config", cfg.toString(), "--topic", "props-roundtrip", "--out", out.toString(), "--quiet");
    assertEquals("0", rec[0], rec[1]);
    assertEquals(301, Files.readAllLines(out).size(), "a header line and the 300 records");
  }

  @Test
  void record_onAnEmptyRange_namesItsOwnOptions(TestBroker broker, @TempDir Path dir) throws IOException {
    // before: "--source ...: the range holds no record": --source is the backtest's option, record has none
    String bs = broker.bootstrapServers();
    Path file = sampleCopy(dir, 5);
    String[] load = CliCapture.run("load", "--bootstrap-servers", bs, "--source", file.toString(), "--topic", "rec-empty-range");
    assertEquals("0", load[0], load[1]);
    Path out = dir.resolve("rec.jsonl");
    String[] past = CliCapture.run("record", "--bootstrap-servers", bs, "--topic", "rec-empty-range", "--start-offset", "9",
        "--out", out.toString(), "--quiet");
    assertEquals("2", past[0], past[1]);
    assertEquals("runnel record: --topic rec-empty-range: the range holds no record (offsets per partition: 0: 0..5); "
        + "widen --start-offset/--start-time/--end-offset/--end-time or check the topic", past[1].trim());
    String[] missing = CliCapture.run("record", "--bootstrap-servers", bs, "--topic", "rec-no-such-topic",
        "--out", out.toString(), "--quiet");
    assertEquals("runnel record: --topic rec-no-such-topic: no such topic at " + bs + "; name an existing topic",
        missing[1].trim());
    String help = CliCapture.run("record", "--help")[2];
    assertTrue(help.contains("--start-time=ISO") && help.contains("Stop before this offset in every partition"), help);
  }
}
