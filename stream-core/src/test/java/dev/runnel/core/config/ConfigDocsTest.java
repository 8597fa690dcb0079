package dev.runnel.core.config;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Test;

/**
 * docs/configuration.md against {@link ConfigKeys}: every key the loader accepts has a row with the
 * same default, every row names a key the loader accepts, and every former name is listed with its
 * new name. The doc's tables are parsed: a row's first cell is the key (a feature's keys are listed
 * by name under their {@code kind: ...} heading), and the column headed {@code default} its default.
 */
class ConfigDocsTest {

  private static final Pattern KIND = Pattern.compile("kind: (\\w+)");

  /** What the doc's tables say: key path → default cell; key path → type cell (tables with a type column); former name → new name. */
  record Doc(Map<String, String> defaults, Map<String, String> types, Map<String, String> renamed) { }

  static Doc parse(List<String> lines) {
    Map<String, String> defaults = new LinkedHashMap<>();
    Map<String, String> types = new LinkedHashMap<>();
    Map<String, String> renamed = new LinkedHashMap<>();
    String prefix = "";
    List<String> header = null;
    for (String line : lines) {
      if (line.startsWith("#")) {
        Matcher m = KIND.matcher(line);
        prefix = m.find() ? "features." + m.group(1) + "." : "";
        header = null;
        continue;
      }
      if (!line.startsWith("|")) {
        header = null;
        continue;
      }
      List<String> cells = cells(line);
      if (header == null) {
        header = cells;
        continue;
      }
      if (cells.get(0).matches("-+")) continue;
      String first = cells.get(0);
      if (!first.matches("`[^`]+`")) continue; // prose rows, e.g. a row naming several keys, are not key rows
      String key = first.substring(1, first.length() - 1);
      int d = header.indexOf("default");
      if (header.get(0).startsWith("former")) {
        renamed.put(key, cells.get(1).replace("`", ""));
      } else if (d >= 0) {
        String path = prefix + key;
        if (defaults.put(path, cells.get(d)) != null) throw new AssertionError("configuration.md lists " + path + " twice");
        int t = header.indexOf("type");
        if (t >= 0) types.put(path, cells.get(t));
      }
    }
    return new Doc(defaults, types, renamed);
  }

  /** A table row's cells, split at '|' but not at an escaped '\|'. */
  private static List<String> cells(String line) {
    String[] parts = line.trim().split("(?<!\\\\)\\|", -1);
    List<String> out = new ArrayList<>();
    for (int i = 1; i < parts.length - 1; i++) out.add(parts[i].trim());
    return out;
  }

  /** The path a key has in the parsed doc: its full path, a feature's as {@code features.<kind>.<name>}. */
  static String docPath(ConfigKey<?> k) {
    return k.scope().startsWith("features.") ? k.scope() + "." + k.name() : k.docKey();
  }

  /**
   * Whether a doc cell gives the default {@code expected}: numbers compare as numbers ({@code 1.0} =
   * {@code 1}), words must open the cell, followed by its end, a space or ';' (so {@code 0 (never)}
   * and {@code required with `power`; ...} match). Backticks are ignored.
   */
  static boolean sameDefault(String expected, String cell) {
    String want = expected.replace("`", "").trim();
    String have = cell.replace("`", "").trim();
    String firstWord = have.split("[ ;]", 2)[0];
    Double a = number(want);
    Double b = number(firstWord);
    if (a != null && b != null) return a.doubleValue() == b.doubleValue();
    return have.equals(want) || have.startsWith(want + " ") || have.startsWith(want + ";");
  }

  private static Double number(String s) {
    try {
      return Double.valueOf(s);
    } catch (NumberFormatException e) {
      return null;
    }
  }

  /** Every disagreement between the keys and the doc, one line each; empty when they agree. */
  static List<String> problems(List<ConfigKey<?>> keys, Doc doc) {
    List<String> out = new ArrayList<>();
    List<String> known = new ArrayList<>();
    for (ConfigKey<?> k : keys) {
      String path = docPath(k);
      known.add(path);
      String cell = doc.defaults().get(path);
      if (cell == null) {
        out.add(path + ": accepted by the loader but has no row in docs/configuration.md");
      } else if (!sameDefault(k.docDefault(), cell)) {
        out.add(path + ": default is " + k.docDefault() + " in ConfigKeys but \"" + cell + "\" in docs/configuration.md");
      }
      String type = doc.types().get(path);
      if (type != null && !type.equals(k.type())) {
        out.add(path + ": type is " + k.type() + " in ConfigKeys but \"" + type + "\" in docs/configuration.md");
      }
      for (String former : k.formerNames()) {
        String fp = k.scope().isEmpty() ? former : k.scope() + "." + former;
        String np = k.scope().isEmpty() ? k.name() : k.scope() + "." + k.name();
        if (!np.equals(doc.renamed().get(fp))) {
          out.add(fp + ": a former name of " + np + ", not listed with it in the doc's table of renamed keys");
        }
      }
    }
    for (String path : doc.defaults().keySet()) {
      if (!known.contains(path)) out.add(path + ": has a row in docs/configuration.md but the loader does not accept it");
    }
    return out;
  }

  private static List<String> docLines() throws IOException {
    return Files.readAllLines(Path.of("..", "docs", "configuration.md"), StandardCharsets.UTF_8);
  }

  @Test void everyKey_isDocumentedWithTheSameDefault_andEveryDocumentedKeyIsAccepted() throws IOException {
    assertEquals(List.of(), problems(ConfigKeys.all(), parse(docLines())));
  }

  @Test void theCheck_findsAChangedDefault_aChangedType_aMissingRow_anUnknownRow_andAnUnlistedRename() throws IOException {
    List<String> lines = new ArrayList<>(docLines());
    boolean changed = false;
    for (int i = 0; i < lines.size(); i++) {
      String l = lines.get(i);
      if (l.startsWith("| `kafka.commit_interval_records` |")) {
        lines.set(i, l.replace("| 5000 |", "| 10000 |"));
        changed = true;
      } else if (l.startsWith("| `model.interval_level` | number |")) {
        lines.set(i, l.replace("| number |", "| whole number |"));
      } else if (l.startsWith("| `web.port` |")) {
        lines.set(i, "| `web.portt` | `8642` | 0 to 65535 | the port |");
      }
    }
    assertTrue(lines.removeIf(l -> l.startsWith("| `model.windup_guard` |")), "the doc lists the former name");
    assertTrue(changed, "the doc has the row this test edits");
    List<String> p = problems(ConfigKeys.all(), parse(lines));
    assertEquals(5, p.size(), p.toString());
    assertTrue(p.get(0).startsWith("model.windup_guard: a former name of model.forget_towards_prior"), p.get(0));
    assertTrue(p.get(1).startsWith("model.interval_level: type is number in ConfigKeys but \"whole number\""), p.get(1));
    assertTrue(p.get(2).startsWith("kafka.commit_interval_records: default is 5000 in ConfigKeys but \"10000\""), p.get(2));
    assertTrue(p.get(3).startsWith("web.port: accepted by the loader but has no row"), p.get(3));
    assertTrue(p.get(4).startsWith("web.portt: has a row in docs/configuration.md but the loader does not accept it"), p.get(4));
  }

  @Test void sameDefault_comparesNumbersAsNumbers_andWordsAtTheStartOfTheCell() {
    assertTrue(sameDefault("1.0", "1"));
    assertTrue(sameDefault("0", "0 (never)"));
    assertTrue(sameDefault("absent", "absent (never)"));
    assertTrue(sameDefault("standardize", "`standardize` (`scale` when `model.constant_term: false`)"));
    assertTrue(!sameDefault("1.0", "100"));
    assertTrue(!sameDefault("required", "requiredness"));
    assertTrue(!sameDefault("true", "false"));
  }
}
