package dev.runnel.connect.web;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.runnel.connect.drift.HorizonTableTest;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Assumptions;
import org.junit.jupiter.api.Test;

/**
 * The live view's errors by horizon: {@code /api/state} passes the latest snapshot's
 * {@code forecast_counts} and {@code horizon_metrics} through (absent without {@code input.forecast}),
 * and the page, loaded in a real headless chromium, draws one row per bucket and per kept entity's
 * non-empty bucket. No broker: the state is fed one snapshot that a real pipeline step published.
 */
class LiveHorizonsTest {

  @Test
  void theStatePassesTheTableThroughAndThePageDrawsIt() throws Exception {
    JsonNode snap = HorizonTableTest.run(HorizonTableTest.CONFIG).snapshot();
    try (LiveState state = new LiveState("horizons", "127.0.0.1:9", Map.of(), null)) {
      state.addSnapshot(snap);
      JsonNode latest = state.stateJson().path("latest");
      assertEquals(snap.path("horizon_metrics"), latest.path("horizon_metrics"));
      assertEquals(snap.path("forecast_counts"), latest.path("forecast_counts"));
      int rows = 0;
      for (JsonNode b : snap.path("horizon_metrics").path("buckets")) {
        rows++;
      }
      for (JsonNode e : snap.path("horizon_metrics").path("entities")) {
        for (JsonNode b : e.path("buckets")) {
          rows += b.path("count").asLong() > 0 ? 1 : 0;
        }
      }

      Path chromium = LiveViewBrowserTest.chromium();
      Assumptions.assumeTrue(chromium != null, "no chromium found at /usr/bin/chromium: the browser check needs it");
      try (WebView web = WebView.start("127.0.0.1", 0, false, state)) {
        Path profile = Files.createTempDirectory("runnel-chromium");
        List<String> cmd = new ArrayList<>(List.of(chromium.toString(), "--headless", "--no-sandbox", "--disable-gpu",
            "--disable-quic", "--no-first-run", "--disable-background-networking", "--disable-component-update",
            "--disable-sync", "--disable-dev-shm-usage", "--user-data-dir=" + profile, "--virtual-time-budget=5000",
            "--dump-dom", web.url()));
        String dom = LiveViewBrowserTest.run(cmd);
        EmbeddedKafkaExtension.deleteTree(profile);
        Matcher section = Pattern.compile("<section id=\"horizon-section\"([^>]*)>(.*?)</section>", Pattern.DOTALL).matcher(dom);
        assertTrue(section.find(), dom.substring(0, Math.min(600, dom.length())));
        assertFalse(section.group(1).contains("hidden"), "the section is shown: " + section.group(1));
        String table = section.group(2);
        assertEquals(rows, LiveViewBrowserTest.count(table, "<tr(?: class=\"[^\"]*\")?><td>"), table);
        assertTrue(table.contains("<td>up to PT2H</td>") && table.contains("<td>over P1D</td>") && table.contains("<td>hub=N2</td>"), table);
        // the memory of learned actuals and the actuals' rejects, from forecast_counts
        JsonNode c = snap.path("forecast_counts");
        assertTrue(c.path("learned_actuals").asLong() > 0, c.toString());
        assertTrue(table.contains("<div id=\"actual-counts\" class=\"note\">actuals: " + c.path("learned_actuals").asLong()
            + " keys remembered as learned (0 forgotten early by max_learned_actuals), 0 replaced, 0 forecasts settled again;"
            + " rejected 0 too late, 0 repeated, 0 corrected</div>"), table);
      }
    }

    // without input.forecast the state has neither field and the page keeps the section hidden
    ObjectNode plain = snap.deepCopy();
    plain.remove(List.of("horizon_metrics", "forecast_counts"));
    try (LiveState state = new LiveState("plain", "127.0.0.1:9", Map.of(), null)) {
      state.addSnapshot(plain);
      assertFalse(state.stateJson().path("latest").has("horizon_metrics"));
      assertFalse(state.stateJson().path("latest").has("forecast_counts"));
    }
  }
}
