package dev.runnel.connect.cli;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.nio.file.Files;
import java.nio.file.Path;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** {@code runnel backtest --threads}: same report files whatever the count; bad counts named; documented in --help. */
class BacktestThreadsCliTest {

  private static final String SAMPLE = "../demo-data/samples/quillmarsh-small.jsonl";


  private static String[] backtest(Path out, String threads) {
    return CliCapture.run("backtest", "--source", SAMPLE, "--config", "../docs/examples/with-weather.yaml",
        "--config", "../docs/examples/no-weather.yaml", "--segment-by", "weather", "--weights", "price_per_kwh,temperature_c",
        "--out", out.toString(), "--quiet", "--threads", threads);
  }

  @Test
  void oneThreadAndTwo_writeTheSameReportFiles(@TempDir Path dir) throws Exception {
    String[] one = backtest(dir.resolve("one"), "1");
    String[] two = backtest(dir.resolve("two"), "2");
    assertEquals("0", one[0], one[1]);
    assertEquals("0", two[0], two[1]);
    assertTrue(one[2].contains("through 2 configuration(s) on one thread"), one[2]);
    assertTrue(two[2].contains("through 2 configuration(s) on 2 worker threads"), two[2]);
    assertArrayEquals(Files.readAllBytes(dir.resolve("one/backtest.json")), Files.readAllBytes(dir.resolve("two/backtest.json")));
    assertArrayEquals(Files.readAllBytes(dir.resolve("one/backtest.html")), Files.readAllBytes(dir.resolve("two/backtest.html")));
    // the terminal table too (everything before the timing line)
    assertEquals(one[2].substring(0, one[2].indexOf("replayed ")), two[2].substring(0, two[2].indexOf("replayed ")));
  }

  @Test
  void moreThreadsThanConfigurations_useOnePerConfiguration(@TempDir Path dir) {
    String[] r = backtest(dir.resolve("many"), "16");
    assertEquals("0", r[0], r[1]);
    assertTrue(r[2].contains("on 2 worker threads"), r[2]);
  }

  @Test
  void aThreadCountBelowOne_isNamed(@TempDir Path dir) {
    String[] r = backtest(dir.resolve("zero"), "0");
    assertEquals("2", r[0]);
    assertEquals("runnel backtest: --threads 0: must be at least 1 (1 = no worker threads)", r[1].trim());
  }

  @Test
  void helpDocumentsTheOption() {
    String[] r = CliCapture.run("backtest", "--help");
    assertEquals("0", r[0]);
    assertTrue(r[2].contains("--threads=N"), r[2]);
    String rec = CliCapture.run("record", "--help")[2];
    assertTrue(rec.contains("--config=FILE") && rec.contains("kafka.client_properties") && rec.contains("${ENV}"), rec);
    String load = CliCapture.run("load", "--help")[2];
    assertTrue(load.contains("--config=FILE") && load.contains("${ENV}"), load);
  }

  @Test
  void theReportReadsNaturally(@TempDir Path dir) throws Exception {
    String[] r = backtest(dir.resolve("r"), "1");
    assertEquals("0", r[0], r[1]);
    String html = Files.readString(dir.resolve("r/backtest.html"));
    // the last date label of a time axis is anchored at its end (it was centred on the plot's edge and clipped)
    assertTrue(html.matches("(?s).*text-anchor=\"end\">\\d{4}-\\d\\d-\\d\\d</text>.*"), "an end-anchored date label");
    assertTrue(html.contains("<svg") && html.contains("class=\"hours\"") && html.contains("<title>23 h, no-weather: RMSE"),
        "the per-hour RMSE as bars");
    assertTrue(html.contains("below zero, the first did better"), "the sign in words");
    assertTrue(!html.contains("DM*") && !r[2].contains("DM*"), "no DM / DM* shorthand");
    assertTrue(r[2].contains("loss difference = first's loss − second's: below zero, the first did better"), r[2]);
  }

  @Test
  void oldOptionNamesStillWorkAndSaySo(@TempDir Path dir) {
    String[] r = CliCapture.run("backtest", "--source", SAMPLE, "--config", "../docs/examples/with-weather.yaml",
        "--out", dir.toString(), "--quiet", "--read-only", "--horizon", "2");
    assertEquals("0", r[0], r[1]);
    assertTrue(r[2].contains("no configuration run"), r[2]);
    assertTrue(r[1].contains("--read-only is deprecated; use --reading-speed"), r[1]);
    assertTrue(r[1].contains("--horizon is deprecated") && r[1].contains("use --dm-steps 2"), r[1]);
  }

  @Test
  void aPlantedEscapeSequenceInASegmentLevelIsPrintedEscaped(@TempDir Path dir) throws Exception {
    // issue #14 item 8 for the backtest's table: levels of --segment-by come from the data
    java.util.List<String> lines = new java.util.ArrayList<>();
    for (String l : Files.readAllLines(Path.of(SAMPLE))) {
      lines.add(l.replace("\"weather\":\"snow\"", "\"weather\":\"snow\\u001b[2J\""));
    }
    Path planted = dir.resolve("planted.jsonl");
    Files.write(planted, lines);
    String[] r = CliCapture.run("backtest", "--source", planted.toString(), "--config", "../docs/examples/with-weather.yaml",
        "--segment-by", "weather", "--out", dir.resolve("out").toString(), "--quiet");
    assertEquals("0", r[0], r[1]);
    assertTrue(r[2].indexOf('\u001b') < 0, "no ESC reaches the terminal");
    assertTrue(r[2].contains("snow\\x1B[2J"), r[2]);
  }
}
