package dev.runnel.connect.replay;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.PipelineStep;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Random;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code replay} with {@code input.forecast} writes one line of {@code settled.jsonl} per forecast
 * the step settled, in the settled layout (docs/formats.md), and without it writes no such file.
 */
class FileReplaySettledTest {

  static final String CONFIG = """
      name: settled-replay
      input:
        fields:
          hub: text
          temperature_c: number
          sessions: number
          issued_at: time
          hour_start: time
        event_time: {field: issued_at, format: iso8601}
        time_zone: UTC
        forecast:
          entity_fields: [hub]
          target_time_field: hour_start
      target: sessions
      features:
        - {kind: onehot, field: hub}
        - {kind: cyclic, cycle: hour_of_day}
        - {kind: numeric, field: temperature_c}
      """;

  static final long H = 3_600_000L;

  /** Every hour: the actual of the hour that ended for each hub, and a forecast request 3 hours ahead. */
  static List<String> feed() {
    Random rnd = new Random(12);
    long t0 = Instant.parse("2026-06-01T00:00:00Z").toEpochMilli();
    List<String> out = new ArrayList<>();
    for (int k = 0; k < 60; k++) {
      long hour = t0 + k * H;
      for (String hub : new String[] {"north", "south"}) {
        double temp = 10 + 4 * rnd.nextGaussian();
        out.add(String.format(Locale.ROOT, "{\"hub\":\"%s\",\"issued_at\":\"%s\",\"hour_start\":\"%s\",\"temperature_c\":%s,\"sessions\":%s}",
            hub, Instant.ofEpochMilli(hour + H), Instant.ofEpochMilli(hour), temp, 20 - 0.4 * temp + rnd.nextGaussian()));
        out.add(String.format(Locale.ROOT, "{\"hub\":\"%s\",\"issued_at\":\"%s\",\"hour_start\":\"%s\",\"temperature_c\":%s}",
            hub, Instant.ofEpochMilli(hour + H), Instant.ofEpochMilli(hour + 3 * H), temp));
      }
    }
    return out;
  }

  @Test
  void settledForecastsGoToTheirOwnFile(@TempDir Path dir) throws IOException {
    Path source = dir.resolve("in.jsonl");
    Files.write(source, feed(), StandardCharsets.UTF_8);
    PipelineConfig cfg = ConfigLoader.parse(CONFIG, "settled-replay.yaml");
    PipelineStep step = FileReplay.run(cfg, source, dir.resolve("out"), null);
    List<String> settled = Files.readAllLines(dir.resolve("out/settled.jsonl"), StandardCharsets.UTF_8);
    assertTrue(step.settledForecasts() > 50, "settled " + step.settledForecasts());
    assertEquals(step.settledForecasts(), settled.size(), "one line per settled forecast");
    ObjectMapper m = new ObjectMapper();
    for (String line : settled) {
      JsonNode n = m.readTree(line);
      assertEquals(2 * H, n.get("horizon_ms").asLong(), line); // issued an hour after the hour began, for two hours later
      assertEquals(n.get("actual").asDouble() - n.get("forecast").asDouble(), n.get("error").asDouble(), 1e-9, line);
      assertTrue(n.get("entity").get("hub").isTextual(), line);
      long requestLine = n.get("request").get("offset").asLong();
      long actualLine = n.get("actual_source").get("offset").asLong();
      assertTrue(actualLine > requestLine, "the actual came after its request: " + line);
    }
    // without input.forecast: no settled file, and the predictions carry no target time
    Path plainOut = dir.resolve("plain");
    FileReplay.run(ConfigLoader.parse(CONFIG.replaceAll("(?s)  forecast:.*?hour_start\n", ""), "plain.yaml"), source, plainOut, null);
    assertFalse(Files.exists(plainOut.resolve("settled.jsonl")));
    assertFalse(Files.readString(plainOut.resolve("predictions.jsonl")).contains("target_time"));
  }
}
