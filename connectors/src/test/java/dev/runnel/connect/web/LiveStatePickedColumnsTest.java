package dev.runnel.connect.web;

import static org.junit.jupiter.api.Assertions.assertEquals;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ArrayNode;
import com.fasterxml.jackson.databind.node.ObjectNode;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;

/** The page's column picker: {@code /api/state?columns=a,b} draws the named columns in place of the default ones. */
class LiveStatePickedColumnsTest {

  private static final ObjectMapper JSON = new ObjectMapper();

  private static LiveState stateWithColumns(int n) {
    LiveState s = new LiveState("p", "127.0.0.1:1", Map.of(), null); // never started: no broker needed
    for (int snap = 0; snap < 3; snap++) {
      ObjectNode snapshot = JSON.createObjectNode();
      snapshot.put("index", snap);
      snapshot.put("event_time", "2026-01-0" + (snap + 1) + "T00:00:00Z");
      ArrayNode cols = snapshot.putArray("columns");
      for (int i = 0; i < n; i++) {
        ObjectNode c = cols.addObject();
        c.put("name", i == 0 ? "hub=a,b" : "c" + i);
        c.put("raw_weight", i + snap / 10.0);
        c.put("raw_std_error", 1.0);
      }
      snapshot.putArray("alarms");
      s.addSnapshot(snapshot);
    }
    return s;
  }

  private static List<String> names(JsonNode arr, String field) {
    List<String> out = new ArrayList<>();
    arr.forEach(n -> out.add(field == null ? n.asText() : n.path(field).asText()));
    return out;
  }

  @Test void pickedColumns_replaceTheDefaultOnes_unknownOnesLeftOut() {
    LiveState s = stateWithColumns(20);
    JsonNode d = s.stateJson();
    assertEquals(List.of(), names(d.path("picked_columns"), null));
    assertEquals(names(d.path("shown_columns"), null), names(d.path("coefficient_paths"), "column"));
    assertEquals(LiveState.SHOWN_WEIGHTS, d.path("coefficient_paths").size());

    JsonNode p = s.stateJson(List.of("c17", "nope", "hub=a,b", "c17"));
    assertEquals(List.of("c17", "hub=a,b"), names(p.path("picked_columns"), null));
    assertEquals(List.of("c17", "hub=a,b"), names(p.path("coefficient_paths"), "column"));
    JsonNode pts = p.path("coefficient_paths").get(0).path("points");
    assertEquals(3, pts.size());
    assertEquals(17.2, pts.get(2).get(1).asDouble(), 0.0);

    List<String> many = new ArrayList<>();
    for (int i = 19; i >= 1; i--) {
      many.add("c" + i);
    }
    assertEquals(LiveState.MAX_PICKED, s.stateJson(many).path("coefficient_paths").size());
  }

  @Test void queryNamesColumns_urlEncoded_commaSeparated() {
    assertEquals(List.of(), WebView.pickedColumns(null));
    assertEquals(List.of(), WebView.pickedColumns("x=1"));
    assertEquals(List.of("hub=a,b", "c 2"), WebView.pickedColumns("x=1&columns=hub%3Da%2Cb,c%202"));
    assertEquals(List.of("c1"), WebView.pickedColumns("columns=,c1,"));
  }
}
