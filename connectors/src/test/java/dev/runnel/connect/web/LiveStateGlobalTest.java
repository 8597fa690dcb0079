package dev.runnel.connect.web;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.runnel.connect.output.GlobalViewsFeed;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Assumptions;
import org.junit.jupiter.api.Test;

/**
 * The live page with {@code model.scope: global}: the snapshots of 4 partitions made by real pipeline steps that share
 * and fold ({@link GlobalViewsFeed}; partition 3 stops folding after the first day) give one model on the page (one
 * coefficient path point per snapshot time, the columns of every partition, the latest the view that took in the most
 * shares) and the views listed with partition 3 named as differing; then the page in a real headless chromium draws
 * the views' table. A state of partitions without {@code global_model} has no such part (partition scope unchanged).
 */
class LiveStateGlobalTest {

  private static LiveState fed(GlobalViewsFeed f) {
    LiveState s = new LiveState("global-views", "127.0.0.1:1", Map.of(), null); // never started: no broker needed
    f.snapshots.forEach(s::addSnapshot);
    return s;
  }

  @Test
  void thePageShowsOneModelAndNamesThePartitionWhoseViewDiffers() throws Exception {
    GlobalViewsFeed f = GlobalViewsFeed.run();
    LiveState state = fed(f);
    JsonNode s = state.stateJson(List.of("price", "temperature_c"));
    List<String> times = f.times();
    String last = times.get(times.size() - 1);

    // one model: one point per snapshot time (four partitions published at each), in time order
    JsonNode price = s.path("coefficient_paths").get(0);
    assertEquals("price", price.path("column").asText());
    assertEquals(times.size(), price.path("points").size(), "one weight history, not one per partition");
    assertEquals(times.size(), s.path("error_path").size());
    for (int i = 0; i < times.size(); i++) {
      assertEquals(times.get(i), price.path("points").get(i).get(0).asText());
    }
    assertEquals(4 * times.size(), s.path("throughput").path("snapshots_read").asLong());

    // the model: the view that took in the most shares at the last time, with every partition's hubs
    JsonNode g = s.path("global_model");
    assertEquals("global", g.path("scope").asText());
    assertEquals("[0,1,2,3]", g.path("partitions").toString());
    int model = g.path("model_partition").asInt();
    long most = -1;
    int best = -1;
    for (int p = 0; p < 4; p++) {
      JsonNode gm = f.at(p, last).path("global_model");
      long taken = gm.path("shares_made").asLong() + gm.path("shares_folded").asLong();
      if (taken > most) {
        most = taken;
        best = p;
      }
    }
    assertEquals(best, model);
    assertEquals(model, s.path("latest").path("partition").asInt());
    assertEquals(last, s.path("latest").path("event_time").asText());
    List<String> cols = new ArrayList<>();
    s.path("latest").path("columns").forEach(c -> cols.add(c.path("name").asText()));
    for (int h = 0; h < 16; h++) {
      assertTrue(cols.contains("hub=H" + h), "hub=H" + h + " in " + cols);
    }
    assertEquals(GlobalViewsFeed.column(f.at(model, last), "price")[0],
        price.path("points").get(times.size() - 1).get(1).asDouble(), 0.0, "the path ends at the model's weight");

    // the views: partition 3 differs on price (by how much, in the model's standard errors), the others agree
    assertEquals(4, g.path("views").size());
    double[] m = GlobalViewsFeed.column(f.at(model, last), "price");
    for (JsonNode v : g.path("views")) {
      int p = v.path("partition").asInt();
      assertEquals(p == model, v.path("model").asBoolean());
      assertEquals(p == GlobalViewsFeed.BEHIND, v.path("differs").asBoolean(), v.toString());
      if (p == GlobalViewsFeed.BEHIND) {
        JsonNode d = v.path("differences").get(0);
        assertEquals("price", d.path("column").asText(), "the largest difference first: " + v);
        double w = GlobalViewsFeed.column(f.at(p, last), "price")[0];
        assertEquals(w - m[0], d.path("difference").asDouble(), 1e-12);
        assertEquals((w - m[0]) / m[1], d.path("std_errors").asDouble(), 1e-9);
        assertTrue(Math.abs(d.path("std_errors").asDouble()) > 3, d.toString());
      }
    }

    // the page in a real browser: the views' table, partition 3's row marked as differing
    Path chromium = LiveViewBrowserTest.chromium();
    Assumptions.assumeTrue(chromium != null, "no chromium found at /usr/bin/chromium: install it (apt-get install"
        + " chromium; .ci/run does this) to run the browser check; the JSON document was checked above");
    Path profile = Files.createTempDirectory("runnel-chromium");
    try (WebView web = WebView.start("127.0.0.1", 0, false, state)) {
      String dom = LiveViewBrowserTest.run(List.of(chromium.toString(), "--headless", "--no-sandbox", "--disable-gpu",
          "--no-first-run", "--disable-background-networking", "--disable-component-update", "--disable-sync",
          "--disable-dev-shm-usage", "--user-data-dir=" + profile, "--virtual-time-budget=8000", "--window-size=1280,1400",
          "--dump-dom", web.url() + "#columns=price"));
      assertTrue(dom.contains("data-shown-weights=\"1\""), "the page finished a refresh");
      assertFalse(dom.matches("(?s).*<section class=\"wide\" id=\"global-section\" hidden.*"), "the views' section is shown");
      assertEquals(1, LiveViewBrowserTest.count(dom, "<tr class=\"view-differs\"><td>" + GlobalViewsFeed.BEHIND + "</td>"));
      assertEquals(1, LiveViewBrowserTest.count(dom, "<tr class=\"view-model\"><td>" + model + "</td>"));
      assertEquals(2, LiveViewBrowserTest.count(dom, "<tr class=\"view-agrees\">"));
      assertEquals("4", LiveViewBrowserTest.text(dom, "id=\"global-partitions\""));
      assertEquals(String.valueOf(model), LiveViewBrowserTest.text(dom, "id=\"global-model\""));
      assertEquals("1", LiveViewBrowserTest.text(dom, "id=\"global-differ\""), "the header counts the views that differ");
      assertTrue(dom.matches("(?s).*<tr class=\"view-differs\">.*differs: price [-0-9.]+ vs [-0-9.]+ \\([-+][0-9.]+ se\\).*"), dom);
      assertEquals(1, LiveViewBrowserTest.count(dom, "<path[^>]*data-weight=\"price\""), "one path for the model's price weight");
    } finally {
      dev.runnel.connect.testing.EmbeddedKafkaExtension.deleteTree(profile);
    }
  }

  @Test
  void partitionScopeHasNoGlobalPart() {
    LiveState s = new LiveState("p", "127.0.0.1:1", Map.of(), null);
    for (int p = 0; p < 2; p++) {
      ObjectNode n = new com.fasterxml.jackson.databind.ObjectMapper().createObjectNode();
      n.put("partition", p);
      n.put("index", 0);
      n.put("event_time", "2026-01-01T00:00:00Z");
      n.putArray("columns").addObject().put("name", "a").put("raw_weight", p).put("raw_std_error", 1.0);
      n.putArray("alarms");
      s.addSnapshot(n);
    }
    JsonNode d = s.stateJson(List.of("a"));
    assertFalse(d.has("global_model"));
    assertEquals(2, d.path("coefficient_paths").get(0).path("points").size(), "each partition's snapshot, as before");
  }
}
