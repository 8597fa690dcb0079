package dev.runnel.connect.replay;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.connect.recording.Loader;
import dev.runnel.connect.testing.EmbeddedKafkaExtension;
import dev.runnel.connect.testing.TestBroker;
import dev.runnel.core.evaluate.Backtest;
import dev.runnel.core.evaluate.BacktestResult;
import java.nio.file.Path;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.extension.ExtendWith;
import org.junit.jupiter.api.io.TempDir;

/**
 * A backtest of {@code model.scope: global} from a topic equals, bit for bit, the backtest of a
 * recording of the same records written partition by partition (a very different interleaving from
 * the consumer's), and two reads of the topic agree (docs/backtesting.md, "Global scope").
 */
@ExtendWith(EmbeddedKafkaExtension.class)
class GlobalScopeTopicReplayTest {

  @Test
  void topicAndARecordingInAnotherInterleaving_giveTheSameBits(TestBroker broker, @TempDir Path dir) throws Exception {
    String bs = broker.bootstrapServers();
    String topic = "bt-global-same-bits";
    // loaded from a recording in timestamp order: same partitions, offsets and timestamps as the lines
    Loader.load(GlobalScopeReplayTest.record(dir.resolve("in-order.jsonl"), GlobalScopeReplayTest.lines(), false),
        bs, topic, 1);
    Path byPartition = GlobalScopeReplayTest.record(dir.resolve("by-partition.jsonl"), GlobalScopeReplayTest.lines(), true);

    Backtest fromTopic = new Backtest(GlobalScopeReplayTest.variants(), GlobalScopeReplayTest.options());
    try (TopicSource src = new TopicSource(bs, Map.of(), topic, TopicRange.ALL)) {
      assertEquals(GlobalScopeReplayTest.PARTITIONS, src.partitionCount());
      assertEquals(4951, ReplayDriver.run(fromTopic, src, 1, null), "every line of the sample (quillmarsh-truth.md: 4951 lines)");
    }
    Backtest fromTopicAgain = new Backtest(GlobalScopeReplayTest.variants(), GlobalScopeReplayTest.options());
    try (TopicSource src = new TopicSource(bs, Map.of(), topic, TopicRange.ALL)) {
      ReplayDriver.run(fromTopicAgain, src, 2, null);
    }
    Backtest fromFile = new Backtest(GlobalScopeReplayTest.variants(), GlobalScopeReplayTest.options());
    ReplayDriver.run(fromFile, new FileSource(byPartition), 1, null);

    assertTrue(fromTopic.sharesFolded(0) > 20, "folded " + fromTopic.sharesFolded(0));
    BacktestResult a = fromTopic.result();
    assertEquals(a, fromFile.result()); // records compare doubles by Double.compare: equal means the same bits
    assertArrayEquals(GlobalScopeReplayTest.json(a, dir.resolve("a.json")),
        GlobalScopeReplayTest.json(fromFile.result(), dir.resolve("b.json")));
    assertArrayEquals(GlobalScopeReplayTest.json(a, dir.resolve("a.json")),
        GlobalScopeReplayTest.json(fromTopicAgain.result(), dir.resolve("c.json")));
  }
}
