package dev.runnel.connect.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** {@code runnel replay} on the committed demo sample: what its output files hold. */
class ReplayCliTest {

  static final String SAMPLE = "../demo-data/samples/quillmarsh-small.jsonl";
  static final String CONFIG = "../docs/examples/with-weather.yaml";
  private static final ObjectMapper JSON = new ObjectMapper();

  static List<JsonNode> lines(Path file) throws Exception {
    List<JsonNode> out = new ArrayList<>();
    for (String l : Files.readAllLines(file)) {
      out.add(JSON.readTree(l));
    }
    return out;
  }

  @Test
  void snapshotIndicesOnlyRiseAndAFileIsPartitionZero(@TempDir Path dir) throws Exception {
    String[] r = CliCapture.run("replay", "--config", CONFIG, "--source", SAMPLE, "--out", dir.toString(), "--quiet");
    assertEquals("0", r[0], r[1]);
    long lines = Files.readAllLines(Path.of(SAMPLE)).size();
    List<JsonNode> snaps = lines(dir.resolve("coefficients.jsonl"));
    assertTrue(snaps.size() > 2, "snapshots: " + snaps.size());
    for (int i = 0; i < snaps.size(); i++) {
      // before the fix the end-of-file snapshot repeated the previous index with other contents
      assertEquals(i, snaps.get(i).path("index").asLong(), "snapshot " + i + " has index " + i);
      // before the fix every snapshot said partition -1; docs/formats.md: a file is partition 0
      assertEquals(0, snaps.get(i).path("partition").asInt(-99), "snapshot " + i + " partition");
    }
    assertEquals(lines, snaps.get(snaps.size() - 1).path("records").asLong(), "the last snapshot is the end of the file");
    JsonNode firstPrediction = lines(dir.resolve("predictions.jsonl")).get(0);
    assertEquals(0, firstPrediction.path("source").path("partition").asInt(-99), firstPrediction.toString());
    assertEquals(1, firstPrediction.path("source").path("offset").asLong(), "offset = line number: " + firstPrediction);
    assertTrue(r[2].contains("; " + snaps.size() + " snapshots"), r[2]);
  }

  @Test
  void driftReadsTheCoefficientFileOfAReplay(@TempDir Path dir) throws Exception {
    String[] r = CliCapture.run("replay", "--config", CONFIG, "--source", SAMPLE, "--out", dir.toString(), "--quiet");
    assertEquals("0", r[0], r[1]);
    int snaps = Files.readAllLines(dir.resolve("coefficients.jsonl")).size();
    String[] d = CliCapture.run("drift", "--file", dir.resolve("coefficients.jsonl").toString(), "--baseline", "first");
    assertEquals("0", d[0], d[1]);
    List<String> printed = d[2].lines().toList();
    assertEquals(1 + snaps, printed.size(), "a header and one line per snapshot: " + d[2]);
    assertTrue(printed.get(2).startsWith("1 "), printed.get(2));
    // the last line is the end-of-file snapshot, with its own index
    assertTrue(printed.get(snaps).startsWith((snaps - 1) + " "), printed.get(snaps));

    String[] both = CliCapture.run("drift", "--file", dir.resolve("coefficients.jsonl").toString(), "--pipeline", "x");
    assertEquals("2", both[0]);
    assertTrue(both[1].contains("--file reads snapshots from a file; leave out --pipeline"), both[1]);
    String[] none = CliCapture.run("drift", "--file", dir.resolve("nothing.jsonl").toString());
    assertTrue(none[1].contains("--file " + dir.resolve("nothing.jsonl") + ": no such file"), none[1]);
  }
}
