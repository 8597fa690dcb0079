package dev.runnel.connect.replay;

import dev.runnel.core.evaluate.Backtest;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.InvalidPathException;
import java.nio.file.Path;
import java.util.Map;

/**
 * What a backtest replays: a JSON Lines file or a topic range, chosen by {@link #resolve} from
 * the text the user gave, so a verb never decides by a name's ending. One thread.
 */
public interface ReplaySource extends AutoCloseable {

  /** Opens a topic when the text names one; called only then (it may start a broker). */
  @FunctionalInterface
  interface TopicOpener {
    TopicSource open(String topic) throws IOException;
  }

  /**
   * Chooses the source: an existing regular file is a file; text that cannot be a Kafka topic
   * name (a topic name is 1 to 249 of {@code a-z A-Z 0-9 . _ -}, Kafka's rule) and is no file is
   * an error that says so; anything else is a topic, opened through {@code topics}. A range
   * applies to a topic only.
   *
   * @param text the {@code --source} value
   * @param range the part of a topic to read; must be {@link TopicRange#ALL} for a file
   * @param topics opens a topic
   * @throws IllegalArgumentException if the text names neither an existing file nor a possible
   *     topic, a directory, or a file with a range
   */
  static ReplaySource resolve(String text, TopicRange range, TopicOpener topics) throws IOException {
    return resolve(text, range, topics, null);
  }

  /**
   * As {@link #resolve(String, TopicRange, TopicOpener)}, with the declared fields a CSV file's cells
   * are typed by (null to refuse CSV files). Not modified.
   */
  static ReplaySource resolve(String text, TopicRange range, TopicOpener topics,
                              java.util.Map<String, dev.runnel.core.record.FieldType> csvTypes) throws IOException {
    Path file = null;
    try {
      file = Path.of(text);
    } catch (InvalidPathException e) {
      // not a path on this system: it can only be a topic
    }
    if (file != null && Files.isDirectory(file)) {
      throw new IllegalArgumentException("--source " + text + ": is a folder; give a JSON Lines or CSV file or a topic name");
    }
    if (file != null && Files.isRegularFile(file)) {
      if (!range.equals(TopicRange.ALL)) {
        throw new IllegalArgumentException("--start-*/--end-* apply to a topic source; " + text + " is a file");
      }
      return new OfFile(new FileSource(file, csvTypes));
    }
    if (!possibleTopicName(text)) {
      throw new IllegalArgumentException("--source " + text + ": no such file (and not a topic name, which is 1 to 249 "
          + "of the characters a-z A-Z 0-9 . _ -); give an existing JSON Lines or CSV file or a topic name");
    }
    return new OfTopic(topics.open(text), range);
  }

  /** Kafka's rule for topic names: 1 to 249 characters from {@code [a-zA-Z0-9._-]}, not "." or "..". */
  static boolean possibleTopicName(String s) {
    return s.length() >= 1 && s.length() <= 249 && s.matches("[a-zA-Z0-9._-]+") && !s.equals(".") && !s.equals("..");
  }

  /** Runs the backtest over the source. @return records read */
  long replay(Backtest bt, int threads, ReplayDriver.ProgressListener listener) throws IOException;

  /** Reads the source once and does nothing with the records (the reading speed). @return records read */
  long readOnly() throws IOException;

  /** The progress line's text for the source's own measure ({@code done} of {@code total}). */
  String progress(long done, long total);

  /** Adds what the report says about the source to {@code run}. Modified. */
  void describe(Map<String, Object> run);

  @Override
  void close();

  /** A JSON Lines file. */
  final class OfFile implements ReplaySource {
    private final FileSource src;

    OfFile(FileSource src) {
      this.src = src;
    }

    @Override public long replay(Backtest bt, int threads, ReplayDriver.ProgressListener l) throws IOException {
      return ReplayDriver.run(bt, src, threads, l);
    }

    @Override public long readOnly() throws IOException {
      return src.read((b, o, len, ts, p, off) -> { }, null);
    }

    @Override public String progress(long done, long total) {
      return String.format(java.util.Locale.ROOT, "%.0f%% of the file", 100.0 * done / Math.max(1, total));
    }

    @Override public void describe(Map<String, Object> run) {
      // the file's name is already the run's source
    }

    @Override public void close() { }
  }

  /** A topic range. */
  final class OfTopic implements ReplaySource {
    private final TopicSource src;
    private final TopicRange range;

    OfTopic(TopicSource src, TopicRange range) {
      this.src = src;
      this.range = range;
    }

    @Override public long replay(Backtest bt, int threads, ReplayDriver.ProgressListener l) {
      return ReplayDriver.run(bt, src, threads, l);
    }

    @Override public long readOnly() {
      return src.read((b, o, len, ts, p, off) -> { }, null);
    }

    @Override public String progress(long done, long total) {
      return String.format(java.util.Locale.ROOT, "%.1f%% done", 100.0 * done / Math.max(1, total));
    }

    @Override public void describe(Map<String, Object> run) {
      run.put("range", range.toString());
    }

    @Override public void close() {
      src.close();
    }
  }
}
