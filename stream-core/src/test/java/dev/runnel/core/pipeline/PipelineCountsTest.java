package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * The step's counters and its record-count snapshot trigger against counts kept by hand on a
 * mixed feed: training records, requests without a target, and rejected records.
 * {@code outputs.snapshot_every_records: N} (docs/configuration.md) makes a snapshot due after
 * every N-th training record exactly: requests and rejects do not count, and the N-th record
 * itself triggers it (not the one after). The stream clock moves with training records only.
 */
class PipelineCountsTest {

  @Test void countersAndSnapshotTrigger_followTheFeed() {
    PipelineStep step = new PipelineStep(ConfigLoader.parse("""
        name: counts
        input:
          fields:
            y: number
            x: number
        target: y
        features:
          - {kind: numeric, field: x}
        outputs:
          snapshot_every_records: 4
        """, "counts.yaml"));
    List<Long> dueAtTrained = new ArrayList<>();
    List<Long> dueAtSnapshotTime = new ArrayList<>();
    int[] rejects = {0};
    int[] predictions = {0};
    PipelineStep.Sink sink = new PipelineStep.Sink() {
      @Override public void prediction(Prediction p, EventRecord r) { predictions[0]++; }
      @Override public void reject(RejectReason reason, String detail) {
        rejects[0]++;
        assertEquals(RejectReason.WRONG_TYPE, reason, detail);
      }
      @Override public void snapshotDue() {
        dueAtTrained.add(step.trained());
        dueAtSnapshotTime.add(step.snapshotTimeMillis());
      }
    };
    long trained = 0;
    long requests = 0;
    long rejected = 0;
    long records = 0;
    List<Long> expectedDue = new ArrayList<>();
    List<Long> expectedDueTime = new ArrayList<>();
    long time = 1_774_744_200_000L;
    long clock = Long.MIN_VALUE;
    for (int k = 0; k < 40; k++) {
      time += 60_000L;
      String json;
      switch (k % 5) {
        case 3 -> { json = "{\"x\":" + k + "}"; requests++; }
        case 4 -> { json = k % 10 == 4 ? "{\"y\":\"ten\",\"x\":1}" : "{\"y\":1,\"x\":1}"; if (k % 10 == 4) rejected++; else trained++; }
        default -> { json = "{\"y\":" + (0.5 * k + (k % 3)) + ",\"x\":" + k + "}"; trained++; }
      }
      records++;
      boolean training = json.startsWith("{\"y\":") && !json.contains("ten");
      if (training) {
        clock = time; // the stream clock moves with training records only
        if (trained % 4 == 0) {
          expectedDue.add(trained);
          expectedDueTime.add(time);
        }
      }
      byte[] b = json.getBytes(StandardCharsets.UTF_8);
      step.process(b, 0, b.length, time, 0, k, sink);
      assertEquals(records, step.records(), "records after " + k);
      assertEquals(trained, step.trained(), "trained after " + k);
      assertEquals(requests, step.forecasts(), "requests after " + k);
      assertEquals(rejected, step.rejected(), "rejected after " + k);
      assertEquals(rejected, step.rejected(RejectReason.WRONG_TYPE), "rejected as wrong type after " + k);
      assertEquals(clock, step.lastEventTimeMillis(), "the stream clock after " + k);
    }
    assertEquals(expectedDue, dueAtTrained, "a snapshot after every 4th training record");
    assertEquals(expectedDueTime, dueAtSnapshotTime, "stamped with the record that made it due");
    assertEquals(records - rejected, predictions[0]);
    assertEquals(rejected, rejects[0]);
    assertTrue(step.warmingUp() >= 1 && step.warmingUp() < trained, "warming up " + step.warmingUp());
    assertEquals(expectedDue.size(), step.snapshotsTaken(), "snapshots taken");
  }
}
