package dev.runnel.connect.demo;

import static org.junit.jupiter.api.Assertions.assertEquals;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.demo.ChangeSchedule;
import dev.runnel.demo.Settings;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/** The demo summary reads predictions of output format 2 and format 3 alike (it uses status, event_time, error). */
class DemoSummaryFormatsTest {

  private static List<JsonNode> predictions(boolean format2, String time) throws Exception {
    ObjectMapper m = new ObjectMapper();
    // format 2 lines as the build before format 3 wrote them (replay of the demo sample, numbers changed)
    String head2 = "{\"format\":2,\"pipeline\":\"quillmarsh\",";
    String fields2 = "\"fields\":{\"kind\":\"actual\",\"hub\":\"QM-02\",\"weather\":\"clear\"},";
    List<JsonNode> out = new ArrayList<>();
    String[] bodies = {
      "\"status\":\"scored\",\"source\":{\"partition\":0,\"offset\":2},\"event_time\":\"" + time + "\",%s"
          + "\"predicted\":29.5,\"low\":11.6,\"high\":47.4,\"level\":0.9,\"actual\":32.0,\"error\":2.5,\"columns_version\":3}",
      "\"status\":\"scored\",\"source\":{\"partition\":0,\"offset\":3},\"event_time\":\"" + time + "\",%s"
          + "\"predicted\":30.5,\"low\":11.6,\"high\":47.4,\"level\":0.9,\"actual\":29.0,\"error\":-1.5,\"columns_version\":3}",
      "\"status\":\"no_target\",\"source\":{\"partition\":0,\"offset\":4},\"event_time\":\"" + time + "\",%s"
          + "\"predicted\":30.5,\"low\":11.6,\"high\":47.4,\"level\":0.9,\"actual\":null,\"error\":null,\"columns_version\":3}"};
    for (String b : bodies) {
      String line = format2 ? head2 + String.format(java.util.Locale.ROOT, b, fields2) : "{" + String.format(java.util.Locale.ROOT, b, "");
      out.add(m.readTree(line));
    }
    return out;
  }

  @Test void bothFormats_giveTheSameSummary() throws Exception {
    Settings settings = Settings.defaults();
    String time = ChangeSchedule.localTime(settings, 30).toInstant().toString(); // after the first day, outside the °F hours
    DemoSummary old = DemoSummary.of(settings, 3, List.of(), predictions(true, time), List.of(), List.of());
    DemoSummary now = DemoSummary.of(settings, 3, List.of(), predictions(false, time), List.of(), List.of());
    assertEquals(2.0, old.normalMae(), 1e-12, "(2.5 + 1.5) / 2");
    assertEquals(1, old.forecasts());
    assertEquals(old.normalMae(), now.normalMae());
    assertEquals(old.forecasts(), now.forecasts());
    assertEquals(old.predictions(), now.predictions());
  }
}
