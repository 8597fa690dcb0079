package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * A snapshot of an event-time period ({@code outputs.snapshot_every}) is stamped with the end of the
 * period it closes (Snapshot's javadoc, docs/formats.md), also when the record that opens the next
 * period comes after a gap, and then the snapshot built in the callback and
 * {@link PipelineStep#snapshotTimeMillis()} agree; a gap over several periods publishes one snapshot,
 * for the period that ended; a provisional clock overruled backwards (a first record dated years
 * ahead) publishes nothing for the move back, and the periods after it are published as usual.
 * Expected stamps are worked by hand from the times fed.
 */
class SnapshotPeriodStampTest {

  private static final String CONFIG = """
      name: stamps
      input:
        fields: {x: number, y: number, at: time}
        event_time: {field: at, format: iso8601}
      target: y
      features:
        - {kind: numeric, field: x}
      outputs:
        snapshot_every_records: 0
        snapshot_every: PT6H
      """;

  private static final long H = 3_600_000L;
  private static final long T0 = Instant.parse("2026-04-01T00:00:00Z").toEpochMilli();

  /** Per due snapshot: the snapshot's time, the step's snapshot time, the records it holds. */
  private final List<long[]> due = new ArrayList<>();
  private final List<String> rejects = new ArrayList<>();
  private final PipelineStep step = new PipelineStep(ConfigLoader.parse(CONFIG, "stamps.yaml"));
  private final PipelineStep.Sink sink = new PipelineStep.Sink() {
    @Override public void prediction(Prediction p, EventRecord r) { }
    @Override public void reject(RejectReason reason, String detail) { rejects.add(reason.id()); }
    @Override public void snapshotDue() {
      Snapshot s = step.snapshot();
      due.add(new long[] {s.eventTimeMillis(), step.snapshotTimeMillis(), s.trained()});
    }
  };

  private void feed(long t, double x) {
    byte[] b = String.format(java.util.Locale.ROOT, "{\"x\":%s,\"y\":%s,\"at\":\"%s\"}", x, 2 * x + 1, Instant.ofEpochMilli(t))
        .getBytes(StandardCharsets.UTF_8);
    step.process(b, 0, b.length, 0L, 0, 0, sink);
  }

  @Test
  void aPeriodOpenedAfterAGapIsStampedWithTheEndOfThePeriodThatClosed() {
    for (int k = 0; k < 5; k++) {
      feed(T0 + k * H, k); // 00:00 to 04:00
    }
    assertEquals(0, due.size());
    feed(T0 + 7 * H + H / 2, 5); // 07:30: the period [00:00, 06:00) ended
    assertEquals(1, due.size());
    assertEquals(T0 + 6 * H, due.get(0)[0], "the snapshot's time: the end of the period, not 07:30");
    assertEquals(T0 + 6 * H, due.get(0)[1]);
    assertEquals(5, due.get(0)[2], "without the record that opened the next period");
    // a gap over several periods: one snapshot, for the period [06:00, 12:00) that ended
    feed(T0 + 20 * H, 6);
    assertEquals(2, due.size());
    assertEquals(T0 + 12 * H, due.get(1)[0]);
    assertEquals(T0 + 12 * H, due.get(1)[1]);
    assertEquals(6, due.get(1)[2]);
    // outside the callback a snapshot carries the clock's time
    assertEquals(T0 + 20 * H, step.snapshot().eventTimeMillis());
    assertEquals(T0 + 20 * H, step.snapshotTimeMillis());
    assertTrue(rejects.isEmpty(), rejects.toString());
  }

  @Test
  void aProvisionalClockMovedBackPublishesNothingForTheMoveAndThePeriodsAfterItAsUsual() {
    feed(T0 + 13L * 365 * 24 * H, 1); // a first record dated 2039
    feed(T0 + 3 * H, 2); // far behind a provisional clock: time_jump, 1 of 3
    feed(T0 + 4 * H, 3); // 2 of 3
    feed(T0 + 5 * H, 4); // 3 of 3: the clock moves back, into the period [00:00, 06:00)
    assertEquals(List.of("time_jump", "time_jump"), rejects);
    assertEquals(0, due.size(), "moving back closes no period");
    feed(T0 + 6 * H, 5); // the very next record opens [06:00, 12:00)
    assertEquals(1, due.size());
    assertEquals(T0 + 6 * H, due.get(0)[0]);
    assertEquals(2, due.get(0)[2], "the 2039 record and the one at 05:00");
    feed(T0 + 12 * H, 6);
    assertEquals(2, due.size());
    assertEquals(T0 + 12 * H, due.get(1)[0]);
  }
}
