package dev.runnel.connect.backtest;

import dev.runnel.core.evaluate.Backtest;
import java.io.IOException;

/** Feeds a source through a {@link Backtest} in one pass, reporting progress now and then. */
public final class ReplayDriver {

  /** Told how far the pass is: {@code done} of about {@code total} (records or bytes). */
  @FunctionalInterface
  public interface ProgressListener {
    void progress(long records, long done, long total);
  }

  private ReplayDriver() { }

  /** Replays a file; progress is measured in bytes. @return records read */
  public static long run(Backtest bt, FileSource src, ProgressListener listener) throws IOException {
    long size = src.sizeBytes();
    long[] bytes = {0};
    long[] n = {0};
    return src.read((buf, off, len, ts, p, o) -> {
      bt.accept(buf, off, len, ts, p, o);
      if ((++n[0] & 1023) == 0 && listener != null) {
        listener.progress(n[0], bytes[0], size);
      }
    }, bytes);
  }

  /** Replays a topic range; progress is measured in offsets. @return records read */
  public static long run(Backtest bt, TopicSource src, ProgressListener listener) {
    long total = src.expectedRecords();
    long[] n = {0};
    return src.read((buf, off, len, ts, p, o) -> {
      bt.accept(buf, off, len, ts, p, o);
      if ((++n[0] & 1023) == 0 && listener != null) {
        listener.progress(n[0], n[0], total);
      }
    }, null);
  }
}
