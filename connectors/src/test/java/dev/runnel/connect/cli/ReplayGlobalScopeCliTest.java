package dev.runnel.connect.cli;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import dev.runnel.connect.replay.GlobalScopeReplayTest;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code runnel replay} of a recording with {@code model.scope: global} (docs/backtesting.md, "Global
 * scope"): each partition through its own step, shares folded by the others before their next record,
 * the same bytes in every output file twice and from a recording that holds the partitions in another
 * order; and outputs that are not those of a model per partition.
 */
class ReplayGlobalScopeCliTest {

  static final List<String> FILES = List.of("format.json", "predictions.jsonl", "coefficients.jsonl", "rejects.jsonl",
      "settled.jsonl");

  @Test
  void aRecordingReplaysToTheSameBytes_whateverItsInterleaving(@TempDir Path dir) throws Exception {
    List<GlobalScopeReplayTest.Line> lines = GlobalScopeReplayTest.lines();
    Path inOrder = GlobalScopeReplayTest.record(dir.resolve("in-order.jsonl"), lines, false);
    Path byPartition = GlobalScopeReplayTest.record(dir.resolve("by-partition.jsonl"), lines, true);
    Path global = dir.resolve("global.yaml");
    Files.writeString(global, GlobalScopeReplayTest.demoYaml("global"));
    Path partition = dir.resolve("partition.yaml");
    Files.writeString(partition, GlobalScopeReplayTest.demoYaml("partition"));

    String[] a = CliCapture.run("replay", "--config", global.toString(), "--source", inOrder.toString(),
        "--out", dir.resolve("a").toString(), "--quiet");
    assertEquals("0", a[0], a[1]);
    String[] b = CliCapture.run("replay", "--config", global.toString(), "--source", inOrder.toString(),
        "--out", dir.resolve("b").toString(), "--quiet");
    assertEquals("0", b[0], b[1]);
    String[] c = CliCapture.run("replay", "--config", global.toString(), "--source", byPartition.toString(),
        "--out", dir.resolve("c").toString(), "--quiet");
    assertEquals("0", c[0], c[1]);
    for (String f : FILES) {
      byte[] first = Files.readAllBytes(dir.resolve("a").resolve(f));
      assertTrue(first.length > 0, f);
      assertArrayEquals(first, Files.readAllBytes(dir.resolve("b").resolve(f)), f + ": twice");
      assertArrayEquals(first, Files.readAllBytes(dir.resolve("c").resolve(f)), f + ": another interleaving");
    }
    // the summary, but for its last line (the output folder)
    assertEquals(a[2].substring(0, a[2].indexOf("outputs in")), c[2].substring(0, c[2].indexOf("outputs in")));
    assertTrue(a[2].contains("partition 2: model.scope: global: "), a[2]);

    // the recording's partitions and offsets are kept; the last snapshot of each partition folded shares
    List<JsonNode> snaps = ReplayCliTest.lines(dir.resolve("a").resolve("coefficients.jsonl"));
    int[] partitionsSeen = new int[3];
    for (JsonNode s : snaps) {
      partitionsSeen[s.path("partition").asInt()]++;
    }
    for (int p = 0; p < 3; p++) {
      assertTrue(partitionsSeen[p] > 0, "snapshots of partition " + p);
    }
    JsonNode last = snaps.get(snaps.size() - 1);
    assertTrue(last.path("global_model").path("shares_folded").asLong() > 0, last.path("global_model").toString());

    String[] d = CliCapture.run("replay", "--config", partition.toString(), "--source", inOrder.toString(),
        "--out", dir.resolve("d").toString(), "--quiet");
    assertEquals("0", d[0], d[1]);
    assertFalse(java.util.Arrays.equals(Files.readAllBytes(dir.resolve("a").resolve("predictions.jsonl")),
        Files.readAllBytes(dir.resolve("d").resolve("predictions.jsonl"))), "a model per partition predicts otherwise");
    assertFalse(d[2].contains("model.scope: global"), d[2]);
  }

  @Test
  void aRecordingWithoutTimestamps_replaysInPartitionScope_andIsRefusedNamingTheScopeInGlobal(@TempDir Path dir)
      throws Exception {
    // the sample's lines recorded without Kafka timestamps (-1), partition by partition
    List<GlobalScopeReplayTest.Line> lines = new java.util.ArrayList<>();
    for (GlobalScopeReplayTest.Line l : GlobalScopeReplayTest.lines()) {
      lines.add(new GlobalScopeReplayTest.Line(l.partition(), l.offset(), -1, l.value()));
    }
    Path noTs = GlobalScopeReplayTest.record(dir.resolve("no-ts.jsonl"), lines, true);
    Path global = dir.resolve("global.yaml");
    Files.writeString(global, GlobalScopeReplayTest.demoYaml("global"));
    Path partition = dir.resolve("partition.yaml");
    Files.writeString(partition, GlobalScopeReplayTest.demoYaml("partition"));

    // partition scope: no partition's records change another's outputs, so no timestamps are needed
    String[] a = CliCapture.run("replay", "--config", partition.toString(), "--source", noTs.toString(),
        "--out", dir.resolve("a").toString(), "--quiet");
    assertEquals("0", a[0], a[1] + a[2]);
    String[] b = CliCapture.run("replay", "--config", partition.toString(), "--source", noTs.toString(),
        "--out", dir.resolve("b").toString(), "--quiet");
    assertEquals("0", b[0], b[1] + b[2]);
    assertTrue(Files.size(dir.resolve("a").resolve("predictions.jsonl")) > 0);
    for (String f : FILES) {
      assertArrayEquals(Files.readAllBytes(dir.resolve("a").resolve(f)), Files.readAllBytes(dir.resolve("b").resolve(f)), f);
    }
    assertFalse((a[1] + a[2]).contains("model.scope: global"), a[1] + a[2]);

    // global scope: the records' place among the other partitions' is unknown, refused naming the scope
    String[] c = CliCapture.run("replay", "--config", global.toString(), "--source", noTs.toString(),
        "--out", dir.resolve("c").toString(), "--quiet");
    assertFalse("0".equals(c[0]), c[1] + c[2]);
    assertTrue((c[1] + c[2]).contains("model.scope: global: --source"), c[1] + c[2]);
    assertTrue((c[1] + c[2]).contains("without a timestamp"), c[1] + c[2]);
  }
}
