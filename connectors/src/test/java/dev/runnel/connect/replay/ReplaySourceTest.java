package dev.runnel.connect.replay;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertInstanceOf;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** How a backtest's --source text becomes a file or a topic (no broker: a topic is only asked for). */
class ReplaySourceTest {

  /** Thrown by the test's topic opener, so a test sees that a topic was asked for. */
  static final class AskedForTopic extends RuntimeException {
    AskedForTopic(String topic) {
      super(topic);
    }
  }

  private static final ReplaySource.TopicOpener NO_BROKER = t -> {
    throw new AskedForTopic(t);
  };

  @Test
  void anExistingFileIsAFileWhateverItsName(@TempDir Path dir) throws Exception {
    // before, the verb called anything ending in .jsonl or .json a file, and a file named otherwise a topic only
    // when it did not exist; now the file system decides
    Path f = dir.resolve("history.data");
    Files.writeString(f, "{\"x\":1}\n");
    try (ReplaySource s = ReplaySource.resolve(f.toString(), TopicRange.ALL, NO_BROKER)) {
      assertInstanceOf(ReplaySource.OfFile.class, s);
      assertEquals(1, s.readOnly());
    }
    IllegalArgumentException ranged = assertThrows(IllegalArgumentException.class, () -> ReplaySource.resolve(f.toString(),
        new TopicRange(null, Instant.parse("2026-01-01T00:00:00Z"), null, null), NO_BROKER));
    assertEquals("--start-*/--end-* apply to a topic source; " + f + " is a file", ranged.getMessage());
  }

  @Test
  void aTopicNameIsATopicEvenWithAFileLikeEnding() {
    // "sessions.json" is a legal Kafka topic name: with no such file, it is asked for as a topic
    assertEquals("sessions.json", assertThrows(AskedForTopic.class,
        () -> ReplaySource.resolve("sessions.json", TopicRange.ALL, NO_BROKER)).getMessage());
    assertEquals("quillmarsh.sessions", assertThrows(AskedForTopic.class,
        () -> ReplaySource.resolve("quillmarsh.sessions", TopicRange.ALL, NO_BROKER)).getMessage());
  }

  @Test
  void textThatIsNeitherIsNamed(@TempDir Path dir) {
    String missing = dir.resolve("missing.jsonl").toString();
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
        () -> ReplaySource.resolve(missing, TopicRange.ALL, NO_BROKER));
    assertTrue(e.getMessage().startsWith("--source " + missing + ": no such file (and not a topic name"), e.getMessage());
    IllegalArgumentException folder = assertThrows(IllegalArgumentException.class,
        () -> ReplaySource.resolve(dir.toString(), TopicRange.ALL, NO_BROKER));
    assertEquals("--source " + dir + ": is a folder; give a JSON Lines or CSV file or a topic name", folder.getMessage());
  }

  @Test
  void kafkasTopicNameRule() {
    // Kafka's rule (org.apache.kafka.common.internals.Topic: legal characters [a-zA-Z0-9._-], at most 249, not . or ..)
    assertTrue(ReplaySource.possibleTopicName("a"));
    assertTrue(ReplaySource.possibleTopicName("x".repeat(249)));
    assertFalse(ReplaySource.possibleTopicName("x".repeat(250)));
    assertFalse(ReplaySource.possibleTopicName(""));
    assertFalse(ReplaySource.possibleTopicName("."));
    assertFalse(ReplaySource.possibleTopicName(".."));
    assertFalse(ReplaySource.possibleTopicName("dir/file"));
    assertFalse(ReplaySource.possibleTopicName("a b"));
  }
}
