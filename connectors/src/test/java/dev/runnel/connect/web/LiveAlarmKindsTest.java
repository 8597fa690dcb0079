package dev.runnel.connect.web;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ArrayNode;
import com.fasterxml.jackson.databind.node.ObjectNode;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.time.Instant;
import java.util.List;
import java.util.Map;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Test;

/**
 * Weight-break alarms (issue 17) on the live page like the other kinds: {@code /api/state} carries them in the
 * latest snapshot's {@code alarms} and in {@code alarm_log}; the page lists the one in the latest snapshot as active
 * and the older one as past, coloured by direction, draws the named column first among the weights with a dashed
 * tick where the break was named, and says what baseline and now mean for the kind. Snapshots are built here (the
 * format of docs/formats.md), the view is never started (no broker needed); the page part needs chromium, as
 * {@link LiveViewBrowserTest} does, and is skipped without it.
 */
class LiveAlarmKindsTest {

  private static final ObjectMapper JSON = new ObjectMapper();
  private static final Instant T0 = Instant.parse("2026-01-15T00:00:00Z");

  private static ObjectNode breakAlarm(String column, String direction, Instant at, long snap, double before, double after) {
    ObjectNode a = JSON.createObjectNode();
    a.put("kind", "weight_break");
    a.put("column", column);
    a.put("direction", direction);
    a.put("fired_at", at.toString());
    a.put("fired_at_snapshot", snap);
    a.put("fired_at_record", 1000 * snap);
    a.put("score", 5.2);
    a.put("threshold", 4.75);
    a.put("baseline_value", before);
    a.put("current_value", after);
    return a;
  }

  static LiveState state() {
    LiveState s = new LiveState("p", "127.0.0.1:1", Map.of(), null); // never started
    for (int i = 0; i < 6; i++) {
      Instant t = T0.plus(Duration.ofHours(6L * i));
      ObjectNode n = JSON.createObjectNode();
      n.put("index", i);
      n.put("partition", 0);
      n.put("event_time", t.toString());
      n.put("records", 1000L * i);
      n.put("trained", 900L * i);
      n.put("rejected", 0);
      n.put("ready", true);
      n.put("noise_sd", 1.5);
      n.putObject("metrics").putObject("recent").put("mae", 1.2).put("rmse", 1.5).put("coverage", 0.9);
      ArrayNode cols = n.putArray("columns");
      String[] names = {"constant", "c1", "c2", "c3", "c4", "c5", "c6", "c7", "temperature_c"};
      for (int j = 0; j < names.length; j++) {
        ObjectNode c = cols.addObject();
        c.put("name", names[j]);
        // temperature_c the least significant column: only its alarm puts it among the drawn weights
        c.put("raw_weight", names[j].equals("temperature_c") ? 0.01 : 10 + j + 0.1 * i);
        c.put("raw_std_error", 0.5);
        c.putNull("drift_score");
      }
      ArrayNode alarms = n.putArray("alarms");
      if (i == 2 || i == 3) { // named at snapshot 1's time, carried by snapshots 2 and 3: past by the latest
        alarms.add(breakAlarm("temperature_c", "down", T0.plus(Duration.ofHours(6)), 2, 0.5, 0.004));
      }
      if (i == 5) {
        alarms.add(breakAlarm("c3", "up", t, 5, 13.0, 14.0));
      }
      n.putArray("vocabularies");
      n.putArray("standardization");
      n.putObject("drift").put("baseline", "snapshots_ago").put("weight_alarm_se", 4).put("error_test", "page_hinkley")
          .put("error_up", 1.0).put("error_down", 0.5).put("error_threshold", 30);
      s.addSnapshot(n);
    }
    return s;
  }

  @Test
  void theStateCarriesWeightBreaksAndThePageListsThem() throws Exception {
    LiveState state = state();
    JsonNode d = state.stateJson();
    assertEquals("weight_break", d.path("latest").path("alarms").get(0).path("kind").asText());
    assertEquals("c3", d.path("latest").path("alarms").get(0).path("column").asText());
    JsonNode log = d.path("alarm_log");
    assertEquals(2, log.size(), "each break once: " + log);
    assertEquals("c3", log.get(0).path("column").asText(), "newest first");
    assertEquals("temperature_c", log.get(1).path("column").asText());
    assertEquals(T0.plus(Duration.ofHours(18)).toString(), log.get(1).path("last_seen").asText(), "last carried by snapshot 3");
    assertEquals(0.004, log.get(1).path("current_value").asDouble(), 0.0);
    assertEquals("c3", d.path("shown_columns").get(0).asText(), "the column of the raised break drawn first: " + d.path("shown_columns"));

    Path chromium = LiveViewBrowserTest.chromium();
    if (chromium == null) {
      return;
    }
    Path profile = Files.createTempDirectory("runnel-chromium");
    try (WebView web = WebView.start("127.0.0.1", 0, false, state)) {
      String dom = LiveViewBrowserTest.run(List.of(chromium.toString(), "--headless", "--no-sandbox", "--disable-gpu",
          "--disable-quic", "--no-first-run", "--disable-background-networking", "--disable-component-update", "--disable-sync",
          "--disable-dev-shm-usage", "--user-data-dir=" + profile, "--virtual-time-budget=8000", "--window-size=1280,1400",
          "--dump-dom", web.url()));
      assertEquals("1", LiveViewBrowserTest.text(dom, "id=\"alarms-active-n\""), dom);
      assertEquals("1", LiveViewBrowserTest.text(dom, "id=\"alarms-past-n\""));
      assertTrue(Pattern.compile("<tr class=\"alarm-up active\"><td>weight_break</td><td>c3</td><td>up</td>").matcher(dom).find(),
          "the raised break as active, red (up)");
      Matcher past = Pattern.compile("<tr class=\"alarm-down past\"><td>weight_break</td><td>temperature_c</td><td>down</td>"
          + "<td>2026-01-15 06:00Z</td><td>2</td><td>5.2</td><td>4.8</td><td>([^<]*)</td><td>([^<]*)</td>").matcher(dom);
      assertTrue(past.find(), "the older break as past, blue (down), with its weights: " + dom);
      assertTrue(past.group(1).startsWith("0.5") && past.group(2).startsWith("0.004"), past.group(0));
      assertTrue(dom.contains("id=\"alarm-kinds\"") && dom.contains("<b>weight_break</b>"), "what baseline and now mean");
      // the c3 chart carries the dashed tick of its break; no other chart carries one
      assertEquals(1, LiveViewBrowserTest.count(dom, "data-break-tick=\"up\""), "one dashed tick, on c3's chart");
      int c3 = dom.indexOf("data-key=\"c3\"");
      assertTrue(c3 >= 0 && dom.indexOf("data-break-tick", c3) > c3
          && dom.indexOf("data-break-tick", c3) < dom.indexOf("</svg>", c3), "the tick is inside c3's chart");
    } finally {
      Files.walk(profile).sorted(java.util.Comparator.reverseOrder()).forEach(p -> p.toFile().delete());
    }
  }
}
