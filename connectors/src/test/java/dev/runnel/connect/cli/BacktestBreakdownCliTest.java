package dev.runnel.connect.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Iterator;
import java.util.List;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code runnel backtest --horizons} with its breakdown of each horizon by entity, hour of day and
 * period of the target time: in the terminal table, backtest.json and backtest.html, for both
 * configurations; every table of a horizon holds its settled forecasts exactly once; the fields
 * backtest.json had before are unchanged, in their order; a bad option is named with its fix.
 * The rows themselves are checked against a separate computation in stream-core's
 * BacktestBreakdownTest.
 */
class BacktestBreakdownCliTest {

  private static final String SAMPLE = "../demo-data/samples/quillmarsh-small.jsonl";
  private static final String DEMO = "../demo-data/src/main/resources/dev/runnel/demo/quillmarsh.yaml";
  private static final String HISTORY = "../demo-data/src/main/resources/dev/runnel/demo/quillmarsh-history.yaml";

  private static String[] backtest(Path out, String... more) {
    List<String> args = new ArrayList<>(List.of("backtest", "--source", SAMPLE, "--config", DEMO, "--config", HISTORY,
        "--out", out.toString(), "--quiet", "--threads", "1", "--horizons", "PT1H,P1D"));
    args.addAll(List.of(more));
    return CliCapture.run(args.toArray(new String[0]));
  }

  @Test
  void breakdown_reachesTheTableTheJsonAndTheHtml_andEachTableAddsUpToItsHorizon(@TempDir Path dir) throws Exception {
    String[] r = backtest(dir, "--breakdown-entities", "3");
    assertEquals("0", r[0], r[1]);
    JsonNode j = new ObjectMapper().readTree(dir.resolve("backtest.json").toFile());
    assertEquals(3, j.get("breakdown_entities").asInt());
    assertEquals("week", j.get("breakdown_period").asText());
    String html = Files.readString(dir.resolve("backtest.html"));
    List<String> details = sections(html);
    assertEquals(2, details.size(), "one folded section per horizon");
    int hz = 0;
    for (JsonNode h : j.get("horizons")) {
      List<String> firstEntities = null;
      List<List<List<String>>> tables = tables(details.get(hz));
      assertEquals(3, tables.size(), "by hub, by hour, by week");
      int ci = 0;
      for (JsonNode c : h.get("configurations")) {
        String where = h.get("horizon").asText() + " " + c.get("label").asText();
        // the fields the document had before come first, in their order
        List<String> names = new ArrayList<>();
        for (Iterator<String> it = c.fieldNames(); it.hasNext(); ) {
          names.add(it.next());
        }
        assertEquals(List.of("label", "count", "mae", "rmse", "bias", "coverage", "warming_up", "not_settled",
            "beyond_lookahead", "not_issued", "lookahead_ms", "max_held_records", "sum_squared_error", "entity_fields",
            "by_entity", "by_target_hour", "by_target_period"), names, where);
        long count = c.get("count").asLong();
        assertTrue(count > 500, where + " " + count);
        double sse = c.get("sum_squared_error").asDouble();
        // the horizon's own RMSE (summed in source order) and the exact sum agree to rounding
        assertEquals(c.get("rmse").asDouble() * c.get("rmse").asDouble() * count, sse, 1e-9 * sse, where);
        assertEquals("[\"hub\"]", c.get("entity_fields").toString());
        JsonNode ents = c.get("by_entity");
        assertEquals(4, ents.size(), where); // three hubs, then the rest
        List<String> hubs = new ArrayList<>();
        for (int i = 0; i < 3; i++) {
          hubs.add(ents.get(i).get("entity").get("hub").asText());
          assertTrue(ents.get(i).get("count").asLong() >= ents.get(i + 1 == 3 ? i : i + 1).get("count").asLong() || i == 2);
        }
        JsonNode other = ents.get(3);
        assertTrue(other.get("entity").isNull());
        assertTrue(other.get("other_entities").asInt() >= 9, other.toString()); // a dozen hubs and more
        if (firstEntities == null) {
          firstEntities = hubs;
        }
        assertEquals(firstEntities, hubs, "the same entities for both configurations");
        assertAddsUp(ents, count, sse, where + " by_entity");
        JsonNode hours = c.get("by_target_hour");
        assertEquals(24, hours.size());
        assertAddsUp(hours, count, sse, where + " by_target_hour");
        JsonNode weeks = c.get("by_target_period");
        // 25 to 30 March 2026 in Europe/Amsterdam: ISO weeks 13 and 14 (java.time); no forecasts issued
        // a day ahead before the model has learned
        assertEquals("2026-W13", weeks.get(0).get("period").asText(), where);
        assertEquals("2026-W14", weeks.get(weeks.size() - 1).get("period").asText(), where);
        assertAddsUp(weeks, count, sse, where + " by_target_period");
        // the page: every number is the document's, five columns per configuration
        checkTable(tables.get(0), ents, ci, where, true);
        checkTable(tables.get(2), weeks, ci, where, false);
        List<JsonNode> withForecasts = new ArrayList<>();
        for (JsonNode x : hours) {
          if (x.get("count").asLong() > 0 || otherConfigHas(h, x.get("hour").asInt())) {
            withForecasts.add(x);
          }
        }
        checkTable(tables.get(1), new ObjectMapper().valueToTree(withForecasts), ci, where, false);
        ci++;
      }
      // the terminal: the horizon's table with a row per hub shown and "(other: n)"
      String text = r[2];
      int at = text.indexOf("\n" + h.get("horizon").asText() + " ", text.indexOf("Where the error is"));
      assertTrue(at > 0, text);
      String section = text.substring(at);
      for (String hub : firstEntities) {
        assertTrue(section.contains("\n  " + hub + " "), hub + " in " + section);
      }
      assertTrue(section.contains("\n  (other: "), section);
      assertTrue(section.contains("\n  2026-W14 "), section);
      hz++;
    }
    // a month instead of a week
    String[] m = backtest(dir.resolve("month"), "--breakdown-period", "month");
    assertEquals("0", m[0], m[1]);
    JsonNode jm = new ObjectMapper().readTree(dir.resolve("month/backtest.json").toFile());
    assertEquals("month", jm.get("breakdown_period").asText());
    assertEquals(10, jm.get("breakdown_entities").asInt(), "the default");
    JsonNode months = jm.get("horizons").get(0).get("configurations").get(0).get("by_target_period");
    assertEquals(1, months.size());
    assertEquals("2026-03", months.get(0).get("period").asText());
    assertTrue(m[2].contains("\nmonth\n  2026-03 "), m[2]);
  }

  @Test
  void aBadBreakdownOption_namesTheOptionAndTheFix(@TempDir Path dir) {
    String[] r = backtest(dir, "--breakdown-period", "fortnight");
    assertEquals("2", r[0], r[1]);
    assertEquals("runnel backtest: --breakdown-period fortnight: not a period; use week (ISO 8601 weeks) or month", r[1].trim());
    String[] n = backtest(dir, "--breakdown-entities", "0");
    assertEquals("2", n[0], n[1]);
    assertTrue(n[1].contains("--breakdown-entities 0: not allowed; use a whole number from 1 to 100000"), n[1]);
  }

  @Test
  void withoutHorizons_thereIsNoBreakdown(@TempDir Path dir) throws Exception {
    String[] r = CliCapture.run("backtest", "--source", SAMPLE, "--config", DEMO, "--out", dir.toString(), "--quiet");
    assertEquals("0", r[0], r[1]);
    String json = Files.readString(dir.resolve("backtest.json"));
    assertFalse(json.contains("breakdown") || json.contains("by_entity"), json);
    assertFalse(Files.readString(dir.resolve("backtest.html")).contains("Where the error is"));
    assertFalse(r[2].contains("Where the error is"), r[2]);
    assertEquals("", r[1], "no warning when the breakdown options are not given");
    // given without --horizons, the option is said to do nothing (and the backtest still runs)
    String[] w = CliCapture.run("backtest", "--source", SAMPLE, "--config", DEMO, "--out", dir.toString(), "--quiet",
        "--breakdown-period", "month");
    assertEquals("0", w[0], w[1]);
    assertTrue(w[1].contains("--breakdown-period breaks down each horizon's errors; it does nothing without --horizons"), w[1]);
  }

  private static boolean otherConfigHas(JsonNode h, int hour) {
    for (JsonNode c : h.get("configurations")) {
      if (c.get("by_target_hour").get(hour).get("count").asLong() > 0) {
        return true;
      }
    }
    return false;
  }

  /** Counts add up to the horizon's exactly; the rows' squared-error sums (each rounded once) to its own. */
  private static void assertAddsUp(JsonNode rows, long count, double sse, String where) {
    long n = 0;
    double s = 0;
    for (JsonNode x : rows) {
      n += x.get("count").asLong();
      s += x.get("sum_squared_error").asDouble();
    }
    assertEquals(count, n, where);
    assertEquals(sse, s, 1e-12 * sse, where);
  }

  /** Configuration {@code ci}'s five columns of each row hold the row's JSON values, to the digits shown. */
  private static void checkTable(List<List<String>> rows, JsonNode json, int ci, String where, boolean entities) {
    assertEquals(json.size(), rows.size(), where);
    for (int i = 0; i < rows.size(); i++) {
      List<String> row = rows.get(i);
      JsonNode x = json.get(i);
      String label = entities ? (x.get("entity").isNull() ? "(other: " + x.get("other_entities").asInt() + ")"
          : x.get("entity").get("hub").asText()) : x.has("period") ? x.get("period").asText()
          : String.format(java.util.Locale.ROOT, "%02d", x.get("hour").asInt());
      assertEquals(label, row.get(0), where + " " + row);
      int k = 1 + 5 * ci;
      assertEquals(x.get("count").asLong(), Long.parseLong(row.get(k).replace(",", "")), where + " " + row);
      if (x.get("count").asLong() == 0) {
        assertEquals("-", row.get(k + 2), where + " " + row);
        continue;
      }
      near(x.get("mae").asDouble(), row.get(k + 1), where);
      near(x.get("rmse").asDouble(), row.get(k + 2), where);
      near(x.get("bias").asDouble(), row.get(k + 3), where);
      assertEquals(100 * x.get("coverage").asDouble(), Double.parseDouble(row.get(k + 4).replace("%", "")), 0.05 + 1e-9, where);
    }
  }

  /** The page's folded sections of the breakdown. */
  private static List<String> sections(String html) {
    List<String> out = new ArrayList<>();
    Matcher m = Pattern.compile("(?s)<details class=\"breakdown\">(.*?)</details>").matcher(html);
    while (m.find()) {
      out.add(m.group(1));
    }
    return out;
  }

  /** Each table's data rows (rows with td cells), as cell texts. */
  private static List<List<List<String>>> tables(String section) {
    List<List<List<String>>> out = new ArrayList<>();
    Matcher t = Pattern.compile("(?s)<table class=\"breakdown\">(.*?)</table>").matcher(section);
    while (t.find()) {
      List<List<String>> rows = new ArrayList<>();
      Matcher tr = Pattern.compile("<tr>(.*?)</tr>").matcher(t.group(1));
      while (tr.find()) {
        List<String> cells = new ArrayList<>();
        Matcher td = Pattern.compile("<td[^>]*>(.*?)</td>").matcher(tr.group(1));
        while (td.find()) {
          cells.add(td.group(1));
        }
        if (!cells.isEmpty()) {
          rows.add(cells);
        }
      }
      out.add(rows);
    }
    return out;
  }

  /** A value shown with four significant digits: within half a unit of the fourth digit. */
  private static void near(double json, String cell, String where) {
    double shown = Double.parseDouble(cell);
    assertTrue(Math.abs(shown - json) <= 5e-4 * Math.abs(json) + 1e-300, json + " shown as " + cell + ": " + where);
  }
}
