package dev.runnel.connect.cli;

import dev.runnel.connect.text.TerminalText;
import java.io.PrintStream;

/**
 * A one-line progress display on a terminal stream: records done, records per second, share done
 * and time left when the total is known. Redraws at most a few times a second; prints nothing when
 * quiet. One thread.
 */
final class Progress {

  private final PrintStream out;
  private final String label;
  private final long total;
  private final boolean quiet;
  private final long startNanos;
  private long lastDrawNanos;
  private int lastWidth;

  /**
   * @param out where to draw (usually System.err)
   * @param label what is being counted, e.g. "records"
   * @param total the expected total, or a value ≤ 0 when unknown
   * @param quiet draw nothing
   */
  Progress(PrintStream out, String label, long total, boolean quiet) {
    this.out = out;
    this.label = label;
    this.total = total;
    this.quiet = quiet;
    this.startNanos = System.nanoTime();
  }

  /**
   * Reports the count done so far; redraws if enough time has passed. Cheap when it does not
   * redraw: {@code extra} is only asked for its text when a line is drawn.
   */
  void update(long done, java.util.function.Supplier<String> extra) {
    if (quiet) {
      return;
    }
    long now = System.nanoTime();
    if (now - lastDrawNanos < 250_000_000L) {
      return;
    }
    lastDrawNanos = now;
    draw(done, extra.get(), now);
  }

  /** Draws the final line and ends it. */
  void finish(long done, String extra) {
    if (quiet) {
      return;
    }
    draw(done, extra, System.nanoTime());
    out.println();
  }

  private void draw(long done, String extra, long now) {
    double seconds = Math.max(1e-9, (now - startNanos) / 1e9);
    double rate = done / seconds;
    StringBuilder sb = new StringBuilder(96);
    sb.append('\r').append(String.format("%,d %s  %,.0f/s", done, label, rate));
    if (total > 0) {
      double share = Math.min(1.0, (double) done / total);
      sb.append(String.format("  %5.1f%%", 100 * share));
      if (rate > 0 && done < total) {
        long left = (long) ((total - done) / rate);
        sb.append(String.format("  %d:%02d left", left / 60, left % 60));
      }
    }
    if (extra != null && !extra.isEmpty()) {
      sb.append("  ").append(TerminalText.safe(extra));
    }
    int width = sb.length();
    for (int i = width; i < lastWidth; i++) {
      sb.append(' ');
    }
    lastWidth = width;
    out.print(sb);
    out.flush();
  }
}
