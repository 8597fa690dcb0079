package dev.runnel.connect.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code runnel backtest --horizons}: backtest.html shows the errors per horizon and the
 * Diebold–Mariano tests per horizon, and every number in those tables is backtest.json's (read by
 * Jackson), to the digits the page shows.
 */
class BacktestHtmlHorizonsTest {

  private static final String SAMPLE = "../demo-data/samples/quillmarsh-small.jsonl";

  @Test
  void theHtmlPerHorizonTablesHoldTheJsonValues(@TempDir Path dir) throws Exception {
    String[] r = CliCapture.run("backtest", "--source", SAMPLE, "--config", "../docs/examples/with-weather.yaml",
        "--config", "../docs/examples/no-weather.yaml", "--out", dir.toString(), "--quiet", "--threads", "1",
        "--horizons", "PT1H,P1D");
    assertEquals("0", r[0], r[1]);
    String html = Files.readString(dir.resolve("backtest.html"));
    JsonNode hs = new ObjectMapper().readTree(dir.resolve("backtest.json").toFile()).get("horizons");

    List<List<String>> errors = rows(table(html, "horizons"));
    List<JsonNode> configs = new ArrayList<>();
    List<String> horizonOf = new ArrayList<>();
    for (JsonNode h : hs) {
      for (JsonNode c : h.get("configurations")) {
        configs.add(c);
        horizonOf.add(h.get("horizon").asText());
      }
    }
    assertEquals(4, configs.size(), "two horizons, two configurations");
    assertEquals(configs.size(), errors.size(), html);
    for (int i = 0; i < configs.size(); i++) {
      List<String> row = errors.get(i);
      JsonNode c = configs.get(i);
      String where = "row " + i + ": " + row + " vs " + c;
      assertEquals(horizonOf.get(i), row.get(0), where);
      assertEquals(c.get("label").asText(), row.get(1), where);
      assertEquals(c.get("count").asLong(), count(row.get(2)), where);
      assertTrue(c.get("count").asLong() > 100, where);
      near(c.get("mae").asDouble(), row.get(3), where);
      near(c.get("rmse").asDouble(), row.get(4), where);
      near(c.get("bias").asDouble(), row.get(5), where);
      // coverage as a percentage with one decimal
      assertEquals(100 * c.get("coverage").asDouble(), Double.parseDouble(row.get(6).replace("%", "")), 0.05 + 1e-9, where);
      assertEquals(c.get("warming_up").asLong() + c.get("not_settled").asLong(), count(row.get(7)), where);
      assertEquals(c.get("beyond_lookahead").asLong() + c.get("not_issued").asLong(), count(row.get(8)), where);
    }

    List<List<String>> tests = rows(table(html, "horizon-tests"));
    int k = 0;
    for (JsonNode h : hs) {
      for (JsonNode cmp : h.get("comparisons")) {
        for (String loss : new String[] {"squared", "absolute"}) {
          List<String> row = tests.get(k++);
          JsonNode t = cmp.get(loss);
          String where = row + " vs " + t;
          assertEquals(h.get("horizon").asText(), row.get(0), where);
          assertEquals(cmp.get("a").asText() + " vs " + cmp.get("b").asText(), row.get(1), where);
          assertEquals(loss, row.get(2), where);
          assertEquals(cmp.get("n").asLong(), count(row.get(3)), where);
          assertEquals(t.get("dm_steps").asInt(), Integer.parseInt(row.get(4)), where);
          assertEquals(t.get("lag").asInt(), Integer.parseInt(row.get(5)), where);
          near(t.get("mean_difference").asDouble(), row.get(6), where);
          near(t.get("statistic").asDouble(), row.get(7), where);
          p(t.get("p_normal").asDouble(), row.get(8), where);
          near(t.get("statistic_corrected").asDouble(), row.get(9), where);
          p(t.get("p").asDouble(), row.get(10), where);
          assertTrue(html.contains(h.get("horizon").asText() + ": " + HtmlText.esc(t.get("verdict").asText())), t.get("verdict").asText());
        }
      }
    }
    assertEquals(4, k, "one comparison per horizon, two losses each");
    assertEquals(k, tests.size(), html);
    // a day ahead is hundreds of steps of the compared series (BacktestHorizonsCliTest): the page shows k itself
    assertTrue(Integer.parseInt(tests.get(2).get(4)) > 100, tests.get(2).toString());

    String[] none = CliCapture.run("backtest", "--source", SAMPLE, "--config", "../docs/examples/with-weather.yaml",
        "--out", dir.resolve("none").toString(), "--quiet");
    assertEquals("0", none[0], none[1]);
    assertFalse(Files.readString(dir.resolve("none/backtest.html")).contains("by horizon"), "no horizons without --horizons");
  }

  /** The page's escaping of text (the verdicts hold no markup but may hold quotes). */
  private static final class HtmlText {
    static String esc(String s) {
      return s.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;").replace("\"", "&quot;");
    }
  }

  private static String table(String html, String cls) {
    int i = html.indexOf("<table class=\"" + cls + "\">");
    assertTrue(i >= 0, "no table " + cls);
    return html.substring(i, html.indexOf("</table>", i));
  }

  /** The data rows' cell texts (the header row has th cells, so no td). */
  private static List<List<String>> rows(String table) {
    List<List<String>> out = new ArrayList<>();
    Matcher tr = Pattern.compile("<tr>(.*?)</tr>").matcher(table);
    while (tr.find()) {
      List<String> cells = new ArrayList<>();
      Matcher td = Pattern.compile("<td>(.*?)</td>").matcher(tr.group(1));
      while (td.find()) {
        cells.add(td.group(1));
      }
      if (!cells.isEmpty()) {
        out.add(cells);
      }
    }
    return out;
  }

  private static long count(String cell) {
    return Long.parseLong(cell.replace(",", ""));
  }

  /** A value shown with four significant digits: within half a unit of the fourth digit. */
  private static void near(double json, String cell, String where) {
    assertTrue(Double.isFinite(json), where);
    double shown = Double.parseDouble(cell);
    assertTrue(Math.abs(shown - json) <= 5e-4 * Math.abs(json) + 1e-300, json + " shown as " + cell + ": " + where);
  }

  /** A p-value shown as {@code <1e-12}, with one decimal of mantissa below 0.001, or with four decimals. */
  private static void p(double json, String cell, String where) {
    if (cell.equals("<1e-12")) {
      assertTrue(json < 1e-12, where);
    } else if (cell.contains("e")) {
      assertTrue(json < 0.001 && Math.abs(Double.parseDouble(cell) - json) <= 0.05 * json, json + " shown as " + cell + ": " + where);
    } else {
      assertEquals(json, Double.parseDouble(cell), 5e-5 + 1e-12, where);
    }
  }
}
