package dev.runnel.connect.web;

import static org.junit.jupiter.api.Assertions.assertEquals;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.util.Map;
import org.junit.jupiter.api.Test;

/** The live page reads predictions of output format 2 (values carry format, pipeline, fields) and format 3 alike. */
class LiveStateFormatsTest {

  // recorded from `runnel replay` of the demo sample (quillmarsh.yaml) by the build before format 3, line 2
  static final String FORMAT_2 = "{\"format\":2,\"pipeline\":\"quillmarsh\",\"status\":\"scored\",\"source\":{\"partition\":0,\"offset\":2},"
      + "\"event_time\":\"2026-03-24T23:00:00Z\",\"fields\":{\"kind\":\"actual\",\"hub\":\"QM-02\",\"weather\":\"clear\"},"
      + "\"predicted\":29.572289899070913,\"low\":11.64734944281797,\"high\":47.49723035532386,\"level\":0.9,\"actual\":39.8,"
      + "\"error\":10.227710100929084,\"columns_version\":3}";
  // the same record from this build (format 3, default outputs), line 2
  static final String FORMAT_3 = "{\"status\":\"scored\",\"source\":{\"partition\":0,\"offset\":2},\"event_time\":\"2026-03-24T23:00:00Z\","
      + "\"predicted\":29.572289899070913,\"low\":11.64734944281797,\"high\":47.49723035532386,\"level\":0.9,\"actual\":39.8,"
      + "\"error\":10.227710100929084,\"columns_version\":3}";
  // format 3 with outputs.significant_digits: 4
  static final String FORMAT_3_SHORT = "{\"status\":\"scored\",\"source\":{\"partition\":0,\"offset\":2},\"event_time\":\"2026-03-24T23:00:00Z\","
      + "\"predicted\":29.57,\"low\":11.65,\"high\":47.5,\"level\":0.9,\"actual\":39.8,\"error\":10.23,\"columns_version\":3}";

  @Test void bothFormats_giveTheSameRowOfThePage() throws Exception {
    ObjectMapper m = new ObjectMapper();
    LiveState s = new LiveState("quillmarsh", "127.0.0.1:1", Map.of(), null); // never started: no broker needed
    s.addPrediction(m.readTree(FORMAT_2), "QM-02");
    s.addPrediction(m.readTree(FORMAT_3), "QM-02");
    s.addPrediction(m.readTree(FORMAT_3_SHORT), "QM-02");
    JsonNode rows = s.stateJson().get("predictions");
    assertEquals(3, rows.size());
    assertEquals("[\"QM-02\",\"2026-03-24T23:00:00Z\",29.572289899070913,11.64734944281797,47.49723035532386,39.8]", rows.get(0).toString());
    assertEquals(rows.get(0), rows.get(1));
    assertEquals("[\"QM-02\",\"2026-03-24T23:00:00Z\",29.57,11.65,47.5,39.8]", rows.get(2).toString());
  }
}
