// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
package dev.runnel.demo;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayOutputStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.security.MessageDigest;
import java.util.HexFormat;
import java.util.List;
import java.util.stream.Collectors;
import org.junit.jupiter.api.Test;

/** Same settings give the same bytes; the committed samples are a fresh generation byte for byte. */
class DeterminismTest {
  private static final Settings MONTH = Settings.defaults().withDays(31);

  private static byte[] bytes(Settings s) {
    ByteArrayOutputStream out = new ByteArrayOutputStream();
    new QuillmarshGenerator(s).writeTo(out);
    return out.toByteArray();
  }

  // Reference digest: SHA-256 from the JDK's MessageDigest (FIPS 180-4).
  private static String sha256(byte[] b) throws Exception {
    return HexFormat.of().formatHex(MessageDigest.getInstance("SHA-256").digest(b));
  }

  @Test void sameSeed_sameBytes_differentSeed_differentBytes() throws Exception {
    String a = sha256(bytes(MONTH));
    String b = sha256(bytes(MONTH));
    String c = sha256(bytes(MONTH.withSeed(MONTH.seed() + 1)));
    assertEquals(a, b);
    assertNotEquals(a, c);
  }

  @Test void writeTo_lines_andAppendable_agree() {
    Settings s = Settings.sample();
    String viaStream = new String(bytes(s), StandardCharsets.UTF_8);
    StringBuilder sb = new StringBuilder();
    long n = new QuillmarshGenerator(s).writeTo(sb);
    String viaLines = new QuillmarshGenerator(s).lines().map(l -> l + "\n").collect(Collectors.joining());
    assertEquals(viaStream, sb.toString());
    assertEquals(viaStream, viaLines);
    assertEquals(n, new QuillmarshGenerator(s).countRecords());
    assertEquals(n, viaStream.chars().filter(ch -> ch == '\n').count());
  }

  @Test void countRecords_matchesAPass_withAndWithoutForecasts() {
    for (Settings s : List.of(MONTH, MONTH.withForecasts(false), MONTH.withForecastHorizonHours(5), Settings.defaults().withDays(1))) {
      QuillmarshGenerator g = new QuillmarshGenerator(s);
      assertEquals(g.records().count(), g.countRecords(), s.toString());
    }
  }

  @Test void committedSample_equalsFreshGeneration() throws Exception {
    // Surefire's working directory is the module folder (demo-data/).
    Path dir = Path.of("samples");
    Settings s = Settings.sample();
    byte[] committed = Files.readAllBytes(dir.resolve("quillmarsh-small.jsonl"));
    assertEquals(sha256(bytes(s)), sha256(committed), "regenerate with the command in demo-data/README.md");
    assertEquals(GroundTruth.toJson(s), Files.readString(dir.resolve("quillmarsh-truth.json"), StandardCharsets.UTF_8));
    assertEquals(GroundTruth.toMarkdown(s), Files.readString(dir.resolve("quillmarsh-truth.md"), StandardCharsets.UTF_8));
    long lines = new String(committed, StandardCharsets.US_ASCII).chars().filter(ch -> ch == '\n').count();
    assertTrue(lines >= 4_500 && lines <= 8_000, "sample lines " + lines);
    assertTrue(committed.length < 1_000_000, "sample bytes " + committed.length);
  }

  @Test void noForecasts_leavesActualLinesUnchanged() {
    List<String> with = new QuillmarshGenerator(MONTH).records().filter(r -> !r.forecast())
        .map(GeneratedRecord::line).collect(Collectors.toList());
    List<String> without = new QuillmarshGenerator(MONTH.withForecasts(false)).lines().collect(Collectors.toList());
    assertEquals(with, without);
  }

  @Test void noCorrupt_changesOnlyTheCorruptLines() {
    QuillmarshGenerator g = new QuillmarshGenerator(MONTH);
    List<String> a = g.lines().collect(Collectors.toList());
    List<String> b = new QuillmarshGenerator(MONTH.withCorrupt(false)).lines().collect(Collectors.toList());
    assertEquals(a.size(), b.size());
    long[] expected = g.corruptLineNumbers();
    long[] differing = new long[expected.length];
    int k = 0;
    for (int i = 0; i < a.size(); i++) {
      if (!a.get(i).equals(b.get(i))) {
        assertTrue(k < differing.length, "more lines differ than planned, at line " + (i + 1));
        differing[k++] = i + 1;
      }
    }
    assertArrayEquals(expected, differing);
    assertFalse(b.stream().anyMatch(l -> SchemaCheck.parse(l) == null), "with --no-corrupt every line follows the schema");
  }
}
