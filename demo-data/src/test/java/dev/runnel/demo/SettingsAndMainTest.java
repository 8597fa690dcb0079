// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
package dev.runnel.demo;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.LocalDateTime;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

class SettingsAndMainTest {
  @Test void settings_rejectBadValues_namingTheParameter() {
    Settings d = Settings.defaults();
    assertTrue(assertThrows(IllegalArgumentException.class, () -> d.withDays(0)).getMessage().contains("days"));
    assertTrue(assertThrows(IllegalArgumentException.class, () -> d.withForecastHorizonHours(49)).getMessage().contains("forecastHorizonHours"));
    assertTrue(assertThrows(IllegalArgumentException.class, () -> d.withStart(LocalDateTime.of(2026, 1, 5, 0, 30))).getMessage().contains("whole hour"));
    // 2026-03-29T02:00 does not exist in Europe/Amsterdam (spring forward).
    assertTrue(assertThrows(IllegalArgumentException.class, () -> d.withStart(LocalDateTime.of(2026, 3, 29, 2, 0))).getMessage().contains("gap"));
    assertThrows(IllegalArgumentException.class, () -> d.withStart(null));
    assertThrows(IllegalArgumentException.class, () -> new QuillmarshGenerator(null));
  }

  @Test void main_writesWhatTheGeneratorWrites(@TempDir Path dir) throws Exception {
    Path out = dir.resolve("x.jsonl");
    Path truth = dir.resolve("t.json");
    Path md = dir.resolve("t.md");
    ByteArrayOutputStream err = new ByteArrayOutputStream();
    int rc = DemoDataMain.run(new String[] {"--out", out.toString(), "--days", "3", "--seed", "7", "--no-forecasts",
        "--truth", truth.toString(), "--truth-md", md.toString()}, new PrintStream(err, true, StandardCharsets.UTF_8));
    assertEquals(0, rc, err.toString(StandardCharsets.UTF_8));
    Settings s = Settings.defaults().withDays(3).withSeed(7).withForecasts(false);
    ByteArrayOutputStream expected = new ByteArrayOutputStream();
    new QuillmarshGenerator(s).writeTo(expected);
    assertArrayEquals(expected.toByteArray(), Files.readAllBytes(out));
    assertEquals(GroundTruth.toJson(s), Files.readString(truth));
    assertEquals(GroundTruth.toMarkdown(s), Files.readString(md));
  }

  @Test void main_sample_writesTheThreeFiles(@TempDir Path dir) throws Exception {
    assertEquals(0, DemoDataMain.run(new String[] {"--sample", dir.toString()}, new PrintStream(new ByteArrayOutputStream(), true, StandardCharsets.UTF_8)));
    assertArrayEquals(Files.readAllBytes(Path.of("samples/quillmarsh-small.jsonl")), Files.readAllBytes(dir.resolve("quillmarsh-small.jsonl")));
    assertArrayEquals(Files.readAllBytes(Path.of("samples/quillmarsh-truth.json")), Files.readAllBytes(dir.resolve("quillmarsh-truth.json")));
    assertArrayEquals(Files.readAllBytes(Path.of("samples/quillmarsh-truth.md")), Files.readAllBytes(dir.resolve("quillmarsh-truth.md")));
  }

  @Test void main_badArguments_exit2_withTheOptionNamed() {
    String[][] cases = {{"--days", "x", "--out", "a"}, {"--days", "0", "--out", "a"}, {"--bogus"}, {"--days", "3"},
        {"--start", "yesterday", "--out", "a"}, {"--out"}};
    String[] mention = {"--days", "--days", "--bogus", "--out", "--start", "--out"};
    for (int i = 0; i < cases.length; i++) {
      ByteArrayOutputStream err = new ByteArrayOutputStream();
      int rc = DemoDataMain.run(cases[i], new PrintStream(err, true, StandardCharsets.UTF_8));
      assertEquals(2, rc);
      String msg = err.toString(StandardCharsets.UTF_8);
      assertTrue(msg.contains(mention[i]) && msg.contains("usage"), msg);
    }
  }
}
