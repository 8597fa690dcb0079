package dev.runnel.connect.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.io.IOException;
import java.io.OutputStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code replay} over a file with a line far longer than {@code input.limits.max_record_bytes}:
 * the line is one {@code record_too_large} reject naming its whole size, and the lines after it
 * are replayed (issue 14, item 4). The line is 3 MB here, written to a temporary file; the
 * reader's bounded buffer is checked in {@code JsonLinesReaderTest} with a 300 MB line.
 */
class ReplayLongLineTest {

  private static final Path DEMO_CONFIG = Path.of("..", "demo-data", "src", "main", "resources", "dev", "runnel", "demo", "quillmarsh.yaml");

  @Test void aLineOverTheRecordLimitIsOneTooLargeRejectAndTheRestIsReplayed(@TempDir Path dir) throws IOException {
    String good = "{\"kind\":\"actual\",\"hub\":\"QM-01\",\"issued_at\":\"2026-03-25T0%d:00:00+01:00\","
        + "\"weather\":\"clear\",\"temperature_c\":3.4,\"price_per_kwh\":0.162,\"sessions\":35.4}";
    Path src = dir.resolve("feed.jsonl");
    long padBytes = 3_000_000;
    try (OutputStream o = Files.newOutputStream(src)) {
      o.write((String.format(good, 1) + "\n").getBytes(StandardCharsets.UTF_8));
      o.write("{\"pad\":\"".getBytes(StandardCharsets.US_ASCII));
      byte[] x = new byte[100_000];
      java.util.Arrays.fill(x, (byte) 'x');
      for (long k = 0; k < padBytes; k += x.length) o.write(x);
      o.write("\"}\n".getBytes(StandardCharsets.US_ASCII));
      o.write((String.format(good, 2) + "\n").getBytes(StandardCharsets.UTF_8));
    }
    Path out = dir.resolve("out");
    String[] r = CliCapture.run("replay", "--config", DEMO_CONFIG.toString(), "--source", src.toString(), "--out", out.toString(), "--quiet");
    assertEquals("0", r[0], r[1]);
    List<String> rejects = Files.readAllLines(out.resolve("rejects.jsonl"));
    assertEquals(1, rejects.size(), rejects.toString());
    JsonNode j = new ObjectMapper().readTree(rejects.get(0));
    assertEquals("record_too_large", j.path("reason").asText());
    assertEquals("record is " + (8 + padBytes + 2) + " bytes; the limit is 65536", j.path("detail").asText());
    assertEquals(2, j.path("source").path("offset").asLong(), "the line number");
    assertTrue(j.path("raw").asText().startsWith("{\"pad\":\"xxx"));
    assertEquals(2, Files.readAllLines(out.resolve("predictions.jsonl")).size(), "both good lines predicted");
  }
}
