package dev.runnel.connect.demo;

import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.runnel.connect.drift.HorizonTable;
import dev.runnel.connect.drift.HorizonTableTest;
import dev.runnel.demo.Settings;
import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * The demo summary prints the settled forecasts' errors by horizon, per entity, when the last
 * snapshots carry them (a pipeline with {@code input.forecast}), and nothing of it otherwise.
 */
class DemoSummaryHorizonsTest {

  static String printed(DemoSummary s) {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    s.print(new PrintStream(b, true, StandardCharsets.UTF_8));
    return b.toString(StandardCharsets.UTF_8);
  }

  @Test
  void theSummaryPrintsTheTableOfTheLastSnapshotThatCarriesIt() throws Exception {
    JsonNode snap = HorizonTableTest.run(HorizonTableTest.CONFIG).snapshot();
    DemoSummary s = DemoSummary.of(Settings.defaults(), 100, List.of(snap), List.of(), List.of(), List.of());
    String text = printed(s);
    for (String line : HorizonTable.lines(snap, "", 0)) {
      assertTrue(text.contains(line), "missing: " + line + "\n" + text);
    }
    assertTrue(text.contains("up to PT2H") && !text.contains("hub=N1"), "the overall rows only: " + text);

    ObjectNode plain = snap.deepCopy();
    plain.remove(List.of("horizon_metrics", "forecast_counts"));
    DemoSummary without = DemoSummary.of(Settings.defaults(), 100, List.of(plain), List.of(), List.of(), List.of());
    assertNull(without.horizons());
    assertFalse(printed(without).contains("by horizon"), printed(without));
  }
}
