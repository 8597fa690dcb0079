package dev.runnel.core;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;

/**
 * docs/model.md promises that a checkpoint restored on another JVM continues with the same bits.
 * {@code java.lang.Math}'s transcendental functions may differ between JVMs and CPUs by an ulp
 * (its javadoc allows 1 ulp and leaves the choice to the implementation; {@code StrictMath} is
 * fdlibm's results everywhere), so everything that reaches the pipeline's state or outputs must
 * call {@code StrictMath}. {@code sqrt}, {@code abs}, {@code scalb}, rounding are exact in both.
 * The backtest's statistics ({@code core/evaluate}) are reports, not state, and are exempt.
 */
class StrictMathOnlyTest {

  static final Pattern LOOSE = Pattern.compile(
      "(?<![A-Za-z])Math\\.(sin|cos|tan|asin|acos|atan|atan2|exp|expm1|log|log10|log1p|pow|hypot|cbrt|sinh|cosh|tanh)\\(");

  @Test void stateAndOutputCodeCallsStrictMathForTranscendentals() throws IOException {
    Path root = Path.of("src", "main", "java", "dev", "runnel", "core");
    List<String> found = new ArrayList<>();
    int files = 0;
    try (Stream<Path> all = Files.walk(root)) {
      for (Path p : (Iterable<Path>) all.filter(f -> f.toString().endsWith(".java"))::iterator) {
        if (p.startsWith(root.resolve("evaluate"))) continue;
        files++;
        List<String> lines = Files.readAllLines(p);
        for (int i = 0; i < lines.size(); i++) {
          Matcher m = LOOSE.matcher(lines.get(i));
          if (m.find()) found.add(p + ":" + (i + 1) + ": " + lines.get(i).trim());
        }
      }
    }
    assertTrue(files > 30, "scanned " + files + " files");
    assertEquals(List.of(), found, "use StrictMath here (docs/model.md, determinism across JVMs)");
  }
}
