package dev.runnel.connect.cli;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.nio.file.Files;
import java.nio.file.Path;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** {@code runnel backtest --horizons}: the table and backtest.json per horizon; a bad duration named with its fix. */
class BacktestHorizonsCliTest {

  private static final String SAMPLE = "../demo-data/samples/quillmarsh-small.jsonl";

  private static String[] backtest(Path out, String threads, String horizons) {
    return CliCapture.run("backtest", "--source", SAMPLE, "--config", "../docs/examples/with-weather.yaml",
        "--config", "../docs/examples/no-weather.yaml", "--out", out.toString(), "--quiet", "--threads", threads,
        "--horizons", horizons);
  }

  @Test
  void aBadDuration_namesTheOptionTheValueAndTheFix(@TempDir Path dir) {
    String[] r = backtest(dir, "1", "PT1H,tomorrow");
    assertEquals("2", r[0], r[1]);
    assertEquals("runnel backtest: --horizons tomorrow: not an ISO 8601 duration; use days, hours, minutes or seconds,"
        + " e.g. --horizons PT1H,PT6H,P1D", r[1].trim());
    String[] neg = backtest(dir, "1", "-PT1H");
    assertEquals("2", neg[0], neg[1]);
    assertTrue(neg[1].contains("--horizons -PT1H: a horizon must be positive") && neg[1].contains("PT1H"), neg[1]);
    String[] twice = backtest(dir, "1", "P1D,PT24H");
    assertEquals("2", twice[0], twice[1]);
    assertTrue(twice[1].contains("--horizons PT24H: given twice"), twice[1]);
  }

  @Test
  void horizons_reachTheTableAndTheJson_sameBitsWithOneThreadOrTwo(@TempDir Path dir) throws Exception {
    String[] one = backtest(dir.resolve("one"), "1", "PT1H,P1D");
    String[] two = backtest(dir.resolve("two"), "2", "PT1H,P1D");
    assertEquals("0", one[0], one[1]);
    assertEquals("0", two[0], two[1]);
    assertArrayEquals(Files.readAllBytes(dir.resolve("one/backtest.json")), Files.readAllBytes(dir.resolve("two/backtest.json")));
    assertTrue(one[2].contains("Errors by horizon"), one[2]);
    assertTrue(one[2].contains("Diebold–Mariano tests by horizon"), one[2]);
    assertTrue(one[2].matches("(?s).*\\nPT24H +with-weather +[0-9,]+ .*"), one[2]);
    JsonNode j = new ObjectMapper().readTree(dir.resolve("one/backtest.json").toFile());
    JsonNode hs = j.get("horizons");
    assertEquals(2, hs.size());
    assertEquals("PT1H", hs.get(0).get("horizon").asText());
    assertEquals(86_400_000L, hs.get(1).get("horizon_ms").asLong());
    JsonNode c = hs.get(1).get("configurations").get(0);
    assertEquals("with-weather", c.get("label").asText());
    assertTrue(c.get("count").asLong() > 1000, c.toString());
    JsonNode cmp = hs.get(1).get("comparisons").get(0);
    // hourly records of a dozen hubs: a day ahead is hundreds of steps of the compared series
    assertTrue(cmp.get("squared").get("dm_steps").asInt() > 100, cmp.toString());
    assertTrue(cmp.get("squared").get("lag").asInt() >= cmp.get("squared").get("dm_steps").asInt() - 1, cmp.toString());
    // without --horizons the document has no horizons at all (as before)
    String[] none = CliCapture.run("backtest", "--source", SAMPLE, "--config", "../docs/examples/with-weather.yaml",
        "--out", dir.resolve("none").toString(), "--quiet");
    assertEquals("0", none[0], none[1]);
    assertTrue(!Files.readString(dir.resolve("none/backtest.json")).contains("\"horizons\""));
  }
}
