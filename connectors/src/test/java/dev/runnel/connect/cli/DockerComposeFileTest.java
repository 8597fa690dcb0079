package dev.runnel.connect.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.dataformat.yaml.YAMLFactory;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;
import picocli.CommandLine;

/**
 * docker-compose.yml cannot be run here (no Docker engine), so it is checked as data: it parses as
 * YAML, its Kafka image is the version the build uses, its Runnel image is the one the {@code image}
 * profile builds, and the Runnel service's command parses with the current command line (so a renamed verb or option breaks this test, not a user).
 */
class DockerComposeFileTest {

  @Test
  void composeFileIsValidAndItsRunnelCommandParses() throws Exception {
    Path file = Path.of("..", "docker-compose.yml");
    JsonNode root = new ObjectMapper(new YAMLFactory()).readTree(Files.readString(file));
    JsonNode services = root.path("services");
    assertTrue(services.has("kafka") && services.has("runnel"), "services kafka and runnel");
    String image = services.path("kafka").path("image").asText();
    String kafkaVersion = org.apache.kafka.common.utils.internals.AppInfoParser.getVersion();
    assertEquals("apache/kafka:" + kafkaVersion, image, "the compose broker runs the same Kafka version as the clients");
    // the image the `image` profile builds (its entry point is the command line: ImageTarTest)
    String pom = Files.readString(Path.of("pom.xml"));
    java.util.regex.Matcher version = java.util.regex.Pattern.compile("<parent>.*?<version>([^<]+)</version>").matcher(pom);
    assertTrue(version.find() && pom.contains("<runnel.image.name>runnel:${project.version}</runnel.image.name>"));
    assertEquals("runnel:" + version.group(1), services.path("runnel").path("image").asText(), "the image the image profile builds");
    List<String> args = new ArrayList<>();
    services.path("runnel").path("command").forEach(n -> args.add(n.asText()));
    CommandLine.ParseResult parsed = Main.commandLine().parseArgs(args.toArray(new String[0]));
    assertTrue(parsed.hasSubcommand(), "a verb: " + args);
    assertEquals(args.get(0), parsed.subcommand().commandSpec().name());
    assertTrue(parsed.subcommand().unmatched().isEmpty(), "every option is known: " + args);
    JsonNode env = services.path("kafka").path("environment");
    assertEquals("1", env.path("KAFKA_TRANSACTION_STATE_LOG_REPLICATION_FACTOR").asText(),
        "a single broker needs replication factor 1 for the transaction log (exactly-once needs it)");
  }
}
