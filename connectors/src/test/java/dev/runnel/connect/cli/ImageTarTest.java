package dev.runnel.connect.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.io.ByteArrayInputStream;
import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.zip.GZIPInputStream;
import org.junit.jupiter.api.Assumptions;
import org.junit.jupiter.api.Test;

/**
 * The image Jib wrote in the {@code image} profile (docs/operations.md, "The image"): the tar exists,
 * its configuration's entry point runs this command line's main class with the classpath Jib wrote,
 * it runs as a user other than root, and its layers hold the demo data and the demo configuration.
 * Runs only in that profile (which sets {@code runnel.image.tar}); there a missing tar fails it.
 */
class ImageTarTest {

  private static final ObjectMapper JSON = new ObjectMapper();

  @Test
  void theImageTarNamesTheEntryPointANonRootUserAndHoldsTheDemoData() throws IOException {
    String where = System.getProperty("runnel.image.tar");
    Assumptions.assumeTrue(where != null, "not in the image profile (mvn -Pimage)");
    Path tar = Path.of(where);
    assertTrue(Files.isRegularFile(tar), "the image profile writes " + tar);
    Map<String, byte[]> top = entries(Files.newInputStream(tar));
    JsonNode manifest = JSON.readTree(top.get("manifest.json")).get(0);
    JsonNode config = JSON.readTree(top.get(manifest.get("Config").asText())).get("config");

    List<String> entry = JSON.convertValue(config.get("Entrypoint"), JSON.getTypeFactory().constructCollectionType(List.class, String.class));
    assertEquals("java", entry.get(0), entry.toString());
    assertEquals(Main.class.getName(), entry.get(entry.size() - 1), "the entry point runs the command line: " + entry);
    String user = config.path("User").asText();
    assertFalse(user.isEmpty() || user.equals("0") || user.startsWith("0:") || user.startsWith("root"), "a non-root user: " + user);

    boolean sample = false;
    boolean demoConfig = false;
    boolean mainClass = false;
    for (JsonNode layer : manifest.get("Layers")) {
      for (String name : entries(new GZIPInputStream(new ByteArrayInputStream(top.get(layer.asText())))).keySet()) {
        sample |= name.endsWith("opt/runnel/demo-data/samples/quillmarsh-small.jsonl");
        demoConfig |= name.endsWith("opt/runnel/demo-data/config/quillmarsh.yaml");
        mainClass |= name.endsWith("dev/runnel/connect/cli/Main.class");
      }
    }
    assertTrue(sample && demoConfig, "the demo data and configuration are in the image");
    assertTrue(mainClass, "the classes are in the image");
  }

  /** The entries of a tar stream (ustar, as Jib writes it): name to bytes. */
  private static Map<String, byte[]> entries(InputStream in) throws IOException {
    Map<String, byte[]> m = new LinkedHashMap<>();
    try (in) {
      byte[] header = new byte[512];
      while (in.readNBytes(header, 0, 512) == 512) {
        String name = field(header, 0, 100);
        if (name.isEmpty()) {
          break; // the two zero blocks at the end
        }
        String prefix = field(header, 345, 155);
        if (!prefix.isEmpty()) {
          name = prefix + "/" + name;
        }
        long size = Long.parseLong(field(header, 124, 12).trim().isEmpty() ? "0" : field(header, 124, 12).trim(), 8);
        byte[] body = in.readNBytes((int) size);
        in.skipNBytes((512 - size % 512) % 512);
        m.put(name, body);
      }
    }
    return m;
  }

  private static String field(byte[] h, int off, int len) {
    int end = off;
    while (end < off + len && h[end] != 0) {
      end++;
    }
    return new String(h, off, end - off, StandardCharsets.US_ASCII);
  }
}
