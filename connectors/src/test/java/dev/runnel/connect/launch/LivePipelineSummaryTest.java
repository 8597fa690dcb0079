package dev.runnel.connect.launch;

import static org.junit.jupiter.api.Assertions.assertEquals;

import dev.runnel.connect.kafka.Emitter;
import dev.runnel.connect.kafka.PartitionProcessor;
import dev.runnel.connect.kafka.RunnerCounters;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import org.apache.kafka.common.TopicPartition;
import org.junit.jupiter.api.Test;

/** What {@code run} prints on stop, from counted outputs (it printed a raw RunnerCounters[...] dump before). */
class LivePipelineSummaryTest {

  /** A processor that turns "p", "s" and "r:reason" values into a prediction, a snapshot or a reject. */
  private static PartitionProcessor fake() {
    return new PartitionProcessor() {
      @Override public void restore(byte[] checkpointOrNull) { }

      @Override public void process(long offset, long ts, byte[] key, byte[] value, Emitter out) {
        String v = new String(value, StandardCharsets.UTF_8);
        if (v.equals("p")) {
          out.prediction(key, value);
        } else if (v.equals("s")) {
          out.snapshot(key, value);
        } else {
          out.reject(key, ("{\"format\":2,\"pipeline\":\"x\",\"reason\":\"" + v.substring(2) + "\"}").getBytes(StandardCharsets.UTF_8));
        }
      }

      @Override public byte[] checkpoint() {
        return new byte[0];
      }
    };
  }

  @Test
  void countsOutputsByKindAndRejectsByReason() {
    OutputTally tally = new OutputTally();
    PartitionProcessor p = tally.wrap(tp -> fake()).create(new TopicPartition("in", 0));
    List<String> passedOn = new ArrayList<>();
    Emitter sink = new Emitter() {
      @Override public void prediction(byte[] k, byte[] v) { passedOn.add("prediction"); }
      @Override public void snapshot(byte[] k, byte[] v) { passedOn.add("snapshot"); }
      @Override public void reject(byte[] k, byte[] v) { passedOn.add("reject"); }
    };
    String[] values = {"p", "p", "r:wrong_type", "p", "s", "r:malformed_json", "r:wrong_type", "p"};
    for (int i = 0; i < values.length; i++) {
      p.process(i, 0, null, values[i].getBytes(StandardCharsets.UTF_8), sink);
    }
    assertEquals(List.of("prediction", "prediction", "reject", "prediction", "snapshot", "reject", "reject", "prediction"),
        passedOn, "every output is passed on, in order");
    assertEquals(4, tally.predictions());
    assertEquals(1, tally.snapshots());
    assertEquals(Map.of("malformed_json", 1L, "wrong_type", 2L), tally.rejectsByReason());

    // 8 records in 4 s: 2 a second; 3,725 s = 1:02:05
    String text = LivePipeline.summary("quillmarsh", new RunnerCounters(8, 8, 3, 2, 1, 1L, 0, 0, 0), tally, 4);
    assertEquals(String.join("\n",
        "pipeline quillmarsh ran 0:00:04",
        "  records in     8 (2 a second on average)",
        "  predictions    4",
        "  snapshots      1",
        "  rejects        3: malformed_json 1, wrong_type 2",
        "  transactions   2 committed, 1 aborted (their records were processed again)",
        "  behind         0 records at the last commit", ""), text.replace(System.lineSeparator(), "\n"));
    String longRun = LivePipeline.summary("q", new RunnerCounters(0, 0, 0, 0, 0, 0, -1, 0, 0), new OutputTally(), 3725);
    assertEquals("pipeline q ran 1:02:05", longRun.lines().findFirst().orElseThrow());
  }
}
