package dev.runnel.core.nist;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;

/**
 * Collects the accuracy tables that tests measure into docs/accuracy.md. Each test writes its
 * section to {@code target/accuracy/<order>-<key>.md}; with {@code -Drunnel.writeDocs=true} the
 * document is rebuilt from every section present, so one run of the stream-core tests leaves a
 * complete page. The numbers therefore always come from a real run, never from typing.
 */
public final class AccuracyReport {

  /** The sections, in the order the page shows them. */
  private static final List<String> ORDER = List.of("pipeline", "model", "univariate");

  private AccuracyReport() { }

  /**
   * Records one section and, when asked to, rebuilds docs/accuracy.md.
   *
   * @param key one of {@code pipeline}, {@code model}, {@code univariate}
   * @param markdown the section, starting with a level-2 heading
   */
  public static synchronized void section(String key, String markdown) throws IOException {
    int order = ORDER.indexOf(key);
    if (order < 0) {
      throw new IllegalArgumentException("unknown accuracy section " + key + "; use one of " + ORDER);
    }
    Path dir = Path.of("target", "accuracy");
    Files.createDirectories(dir);
    Files.writeString(dir.resolve(order + "-" + key + ".md"), markdown, StandardCharsets.UTF_8);
    if (!Boolean.getBoolean("runnel.writeDocs")) {
      return;
    }
    StringBuilder page = new StringBuilder();
    page.append("# Accuracy against published reference results\n\n");
    page.append("Written by the stream-core tests from a real run; do not edit by hand. Regenerate with\n");
    page.append("`mvn -o -q -pl stream-core test -Drunnel.writeDocs=true`.\n");
    page.append("LRE (log relative error) = −log10(|estimate − certified| / |certified|), capped at 15, the\n");
    page.append("usual measure for the NIST StRD (common practice).\n");
    for (int i = 0; i < ORDER.size(); i++) {
      Path p = dir.resolve(i + "-" + ORDER.get(i) + ".md");
      if (Files.exists(p)) {
        page.append('\n').append(Files.readString(p, StandardCharsets.UTF_8));
      }
    }
    Files.writeString(Path.of("..", "docs", "accuracy.md"), page.toString(), StandardCharsets.UTF_8);
  }
}
