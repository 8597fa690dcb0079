package dev.runnel.connect.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.connect.replay.FileSource;
import dev.runnel.connect.replay.GlobalScopeReplayTest;
import dev.runnel.connect.replay.MergedFeed;
import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The copy a replay with {@code model.scope: global} makes of its source (docs/backtesting.md, "Global
 * scope"): it says where the temporary files go and how much they take, shows progress while it
 * runs, and is refused with the fix ({@code java.io.tmpdir}) when no folder can be made there.
 */
class BacktestSpillCliTest {

  @Test
  void theCopySaysWhereItGoes_showsProgress_andCountsTheBytesOnDisk(@TempDir Path dir) throws Exception {
    List<GlobalScopeReplayTest.Line> lines = GlobalScopeReplayTest.lines();
    Path recording = GlobalScopeReplayTest.record(dir.resolve("r.jsonl"), lines, true);
    Path root = Files.createDirectories(dir.resolve("tmp"));
    long expectedBytes = 0;
    for (GlobalScopeReplayTest.Line l : lines) {
      expectedBytes += 8 + 8 + 4 + l.value().length; // timestamp, offset, length, value (MergedFeed's file layout)
    }
    List<MergedFeed.SpillProgress> seen = new ArrayList<>();
    ByteArrayOutputStream shown = new ByteArrayOutputStream();
    PrintStream out = new PrintStream(shown, true, StandardCharsets.UTF_8);
    int[] done = {0};
    SpillDisplay display = new SpillDisplay(out, false, Files.size(recording), () -> done[0]++);
    FileSource src = new FileSource(recording);
    long[] read = {0};
    long onDisk;
    Path spillDir;
    try (MergedFeed feed = MergedFeed.spill(h -> src.read(h, read), "--source r.jsonl", root, p -> {
      seen.add(p);
      display.show(p, () -> read[0] + " bytes read");
    })) {
      spillDir = feed.directory();
      assertEquals(root, spillDir.getParent());
      try (Stream<Path> files = Files.list(spillDir)) {
        onDisk = files.mapToLong(f -> f.toFile().length()).sum();
      }
      assertEquals(expectedBytes, onDisk, "the files' sizes on disk");
      assertEquals(onDisk, feed.bytes());
    }
    assertFalse(Files.exists(spillDir), "deleted at the end");

    // once before the first record, every 1,024 records, once at the end
    assertEquals(0, seen.get(0).records());
    assertFalse(seen.get(0).finished());
    assertEquals(spillDir, seen.get(0).dir());
    assertEquals(2 + lines.size() / 1024, seen.size());
    for (int i = 1; i < seen.size() - 1; i++) {
      assertEquals(1024L * i, seen.get(i).records());
      assertFalse(seen.get(i).finished());
    }
    MergedFeed.SpillProgress last = seen.get(seen.size() - 1);
    assertTrue(last.finished());
    assertEquals(lines.size(), last.records());
    assertEquals(onDisk, last.bytesWritten());
    assertEquals(3, last.files()); // GlobalScopeReplayTest.PARTITIONS
    assertEquals(1, done[0], "the caller's pass starts once");

    String text = shown.toString(StandardCharsets.UTF_8);
    assertTrue(text.contains("copying the source once to one temporary file per partition in " + spillDir), text);
    assertTrue(text.contains("free there"), text);
    assertTrue(text.contains("-Djava.io.tmpdir=DIR"), text);
    assertTrue(text.contains("bytes read"), "a progress line while copying: " + text);
    double ratio = (double) onDisk / Files.size(recording);
    assertTrue(text.contains(String.format(java.util.Locale.ROOT, "%,d records copied", lines.size())), text);
    assertTrue(text.contains(String.format(java.util.Locale.ROOT, "%s in 3 temporary file(s), %.2f × the source's",
        SpillDisplay.megabytes(onDisk), ratio)), text);
    assertNotEquals(1.0, ratio); // a recording's line holds more than the value (docs/formats.md)
  }

  @Test
  void littleRoom_isWarnedOfEvenWhenQuiet(@TempDir Path dir) {
    ByteArrayOutputStream shown = new ByteArrayOutputStream();
    SpillDisplay display = new SpillDisplay(new PrintStream(shown, true, StandardCharsets.UTF_8), true, 5_000_000, () -> { });
    display.show(new MergedFeed.SpillProgress(dir, 0, 0, 1_000_000, 0, false), () -> "");
    String text = shown.toString(StandardCharsets.UTF_8);
    assertTrue(text.startsWith("runnel: warning: 1.0 MB free in " + dir + ", less than the source's 5.0 MB"), text);
    assertTrue(text.contains("java.io.tmpdir"), text);
    assertFalse(text.contains("copying"), "quiet: no note");
  }

  @Test
  void aTemporaryFolderThatCannotBeMade_isRefusedNamingJavaIoTmpdir(@TempDir Path dir) throws Exception {
    Path notAFolder = Files.writeString(dir.resolve("not-a-folder"), "x"); // no folder can be made under a file, even as root
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class, () -> MergedFeed.spill(h -> 0, "--source x",
        notAFolder, null));
    assertTrue(e.getMessage().startsWith("model.scope: global: --source x is first copied to one temporary file per"
        + " partition, but no folder can be made in the temporary folder " + notAFolder + " (java.io.tmpdir)"), e.getMessage());
    assertTrue(e.getMessage().contains("-Djava.io.tmpdir="), e.getMessage());

    // the same through the command line, before anything is read
    Path recording = GlobalScopeReplayTest.record(dir.resolve("r.jsonl"), GlobalScopeReplayTest.lines(), false);
    Path global = Files.writeString(dir.resolve("global.yaml"), GlobalScopeReplayTest.demoYaml("global"));
    String old = System.getProperty("java.io.tmpdir");
    String[] r;
    try {
      System.setProperty("java.io.tmpdir", notAFolder.toString());
      r = CliCapture.run("backtest", "--config", global.toString(), "--source", recording.toString(),
          "--out", dir.resolve("out").toString(), "--quiet");
    } finally {
      System.setProperty("java.io.tmpdir", old);
    }
    assertNotEquals("0", r[0]);
    assertTrue(r[1].contains("no folder can be made in the temporary folder " + notAFolder + " (java.io.tmpdir)"), r[1]);
    assertTrue(r[1].contains("RUNNEL_JAVA_OPTS=-Djava.io.tmpdir="), r[1]);
    assertFalse(Files.exists(dir.resolve("out").resolve("backtest.json")));
  }
}
