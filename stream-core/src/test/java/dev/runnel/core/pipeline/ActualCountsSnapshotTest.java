package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The snapshot's {@code forecast_counts} carries the memory of learned actuals and the actuals it
 * turned away (docs/formats.md): each count equals what the sink saw (rejects by reason, settled
 * records marked as corrections) or the step's own counter, on a feed with repeats, corrections and
 * actuals past {@code max_actual_lag}, under {@code reject} and {@code replace}.
 */
class ActualCountsSnapshotTest {

  private static final ObjectMapper JSON = new ObjectMapper();

  @Test
  void theCountsInTheSnapshotAreWhatTheSinkSaw() throws Exception {
    for (String policy : new String[] {"reject", "replace"}) {
      PipelineConfig cfg = LateRepeatedCorrectedActualsTest.config(
          "    max_learned_actuals: 150\n    corrections: " + policy + "\n    max_actual_lag: P3D\n", null);
      List<byte[]> base = PipelineForecastTest.mixedFeed(81, 120);
      Random rnd = new Random(82);
      List<byte[]> feed = new ArrayList<>();
      for (byte[] b : base) {
        feed.add(b);
        String text = new String(b, StandardCharsets.UTF_8);
        if (text.contains("sessions") && rnd.nextInt(6) == 0) {
          byte[] earlier = feed.get(Math.max(0, feed.size() - 1 - rnd.nextInt(60)));
          String e = new String(earlier, StandardCharsets.UTF_8);
          if (e.contains("sessions")) {
            feed.add(rnd.nextBoolean() ? earlier : e.replace("\"sessions\":", "\"sessions\":1").getBytes(StandardCharsets.UTF_8));
          }
        }
        if (text.contains("sessions") && rnd.nextInt(40) == 0) {
          // an actual for an hour a week before this record's event time: past max_actual_lag (P3D)
          String issued = JSON.readTree(b).path("issued_at").asText();
          long at = java.time.Instant.parse(issued).toEpochMilli();
          feed.add(PipelineForecastTest.line("A", at, at - 7 * 24 * PipelineForecastTest.H, 9, 20.0));
        }
      }
      PipelineStep step = new PipelineStep(cfg);
      OutputJson out = new OutputJson(cfg.name(), cfg.model().intervalLevel());
      Map<String, Long> rejects = new HashMap<>();
      long[] corrections = new long[1];
      PipelineStep.Sink sink = new PipelineStep.Sink() {
        @Override public void prediction(Prediction p, EventRecord r) { }
        @Override public void reject(RejectReason reason, String detail) { rejects.merge(reason.id(), 1L, Long::sum); }
        @Override public void snapshotDue() { }
        @Override public void settled(SettledForecast s, EventRecord r) {
          if (new String(out.settled(s, r), StandardCharsets.UTF_8).contains("\"correction\":true")) {
            corrections[0]++;
          }
        }
      };
      long off = 0;
      for (byte[] b : feed) {
        step.process(b, 0, b.length, 0L, 0, off++, sink);
      }
      JsonNode c = JSON.readTree(out.snapshot(step.snapshot(), 0)).path("forecast_counts");
      assertEquals(rejects.getOrDefault("repeated_actual", 0L), c.path("rejected_repeated").asLong(), policy + ": " + c);
      assertEquals(rejects.getOrDefault("corrected_actual", 0L), c.path("rejected_corrected").asLong(), policy + ": " + c);
      assertEquals(rejects.getOrDefault("actual_too_late", 0L), c.path("rejected_too_late").asLong(), policy + ": " + c);
      assertEquals(corrections[0], c.path("resettled").asLong(), policy + ": " + c);
      assertEquals(step.replacedActuals(), c.path("replaced_actuals").asLong(), policy + ": " + c);
      assertEquals(step.learnedActuals(), c.path("learned_actuals").asLong(), policy + ": " + c);
      assertEquals(step.learnedActualsForgottenEarly(), c.path("learned_forgotten_early").asLong(), policy + ": " + c);
      // the feed reaches every count it can under the policy, so a count left at zero would fail
      assertTrue(c.path("rejected_repeated").asLong() > 10 && c.path("rejected_too_late").asLong() > 0
          && c.path("learned_actuals").asLong() > 100 && c.path("learned_forgotten_early").asLong() > 0, policy + ": " + c);
      if (policy.equals("reject")) {
        assertTrue(c.path("rejected_corrected").asLong() > 5, c.toString());
        assertEquals(0, c.path("replaced_actuals").asLong());
      } else {
        assertTrue(c.path("replaced_actuals").asLong() > 5 && c.path("resettled").asLong() > 0, c.toString());
      }
      // the field order the docs give: the counts after dropped_expired
      List<String> names = new ArrayList<>();
      c.fieldNames().forEachRemaining(names::add);
      assertEquals(List.of("pending", "remembered", "settled", "dropped_full", "dropped_expired", "learned_actuals",
          "learned_forgotten_early", "replaced_actuals", "resettled", "rejected_too_late", "rejected_repeated",
          "rejected_corrected"), names);
    }
    // without input.forecast: no forecast_counts at all (the snapshot keeps its bits)
    PipelineStep plain = new PipelineStep(dev.runnel.core.config.ConfigLoader.parse(PipelineForecastTest.CONFIG
        .replace("MAX", "10").replaceAll("(?s)  forecast:.*?max_actual_delay: P2D\n", ""), "plain.yaml"));
    OutputJson out = new OutputJson("plain", 0.9);
    assertFalse(new String(out.snapshot(plain.snapshot(), 0), StandardCharsets.UTF_8).contains("forecast_counts"));
  }
}
