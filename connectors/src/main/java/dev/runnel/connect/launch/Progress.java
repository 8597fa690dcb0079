package dev.runnel.connect.launch;

import dev.runnel.connect.text.TerminalText;
import java.io.PrintStream;
import java.util.Locale;
import java.util.function.LongSupplier;
import java.util.function.Supplier;

/**
 * A one-line progress display on a terminal stream: records done, the rate over the last
 * {@value #WINDOW_SECONDS} seconds (or "idle" and for how long when nothing arrived for
 * {@value #IDLE_SECONDS} seconds), share done and time left when the total is known. Redraws at
 * most four times a second; prints nothing when quiet. One thread.
 *
 * <p>The rate is a recent one, not the average since the start: a pipeline that has caught up
 * and waits for input shows "idle", not a rate that keeps falling. The final line gives the
 * average over the whole run.
 */
public final class Progress {

  /** The rate is measured over this many recent seconds. */
  static final int WINDOW_SECONDS = 10;
  /** With no new record for this many seconds the line says "idle". */
  static final int IDLE_SECONDS = 3;

  private static final long DRAW_EVERY_NANOS = 250_000_000L;
  private static final int SAMPLES = 64; // > WINDOW_SECONDS * 4 draws per second

  private final PrintStream out;
  private final String label;
  private final long total;
  private final boolean quiet;
  private final LongSupplier clock;
  private final long startNanos;
  private final long[] sampleNanos = new long[SAMPLES];
  private final long[] sampleDone = new long[SAMPLES];
  private int samples;
  private int next;
  private long lastDone = -1;
  private long lastChangeNanos;
  private long lastDrawNanos;
  private int lastWidth;

  /**
   * @param out where to draw (usually System.err)
   * @param label what is being counted, e.g. "records"
   * @param total the expected total, or a value ≤ 0 when unknown
   * @param quiet draw nothing
   */
  public Progress(PrintStream out, String label, long total, boolean quiet) {
    this(out, label, total, quiet, System::nanoTime);
  }

  /** As above, with the clock given (nanoseconds, as {@link System#nanoTime}); for tests. */
  Progress(PrintStream out, String label, long total, boolean quiet, LongSupplier clock) {
    this.out = out;
    this.label = label;
    this.total = total;
    this.quiet = quiet;
    this.clock = clock;
    this.startNanos = clock.getAsLong();
    this.lastChangeNanos = startNanos;
    this.lastDrawNanos = startNanos - DRAW_EVERY_NANOS;
  }

  /**
   * Reports the count done so far; redraws if enough time has passed. Cheap when it does not
   * redraw: {@code extra} is only asked for its text when a line is drawn.
   */
  public void update(long done, Supplier<String> extra) {
    if (quiet) {
      return;
    }
    long now = clock.getAsLong();
    if (now - lastDrawNanos < DRAW_EVERY_NANOS) {
      return;
    }
    lastDrawNanos = now;
    sample(done, now);
    draw(line(done, extra.get(), now, false));
  }

  /** Draws the final line (with the average rate over the whole run) and ends it. */
  public void finish(long done, String extra) {
    if (quiet) {
      return;
    }
    draw(line(done, extra, clock.getAsLong(), true));
    if (out instanceof SharedTerminal t) {
      t.endProgress();
    } else {
      out.println();
    }
  }

  private void sample(long done, long now) {
    if (done != lastDone) {
      lastDone = done;
      lastChangeNanos = now;
    }
    sampleNanos[next] = now;
    sampleDone[next] = done;
    next = (next + 1) % SAMPLES;
    samples = Math.min(samples + 1, SAMPLES);
  }

  /** Records per second over the recent window, from the oldest sample inside it. */
  private double recentRate(long done, long now) {
    long from = now - WINDOW_SECONDS * 1_000_000_000L;
    long t0 = now;
    long n0 = done;
    for (int k = 0; k < samples; k++) {
      int i = Math.floorMod(next - 1 - k, SAMPLES);
      if (sampleNanos[i] < from) {
        break;
      }
      t0 = sampleNanos[i];
      n0 = sampleDone[i];
    }
    if (now - t0 < DRAW_EVERY_NANOS) {
      double secs = (now - startNanos) / 1e9;
      return secs > 0 ? done / secs : 0;
    }
    return (done - n0) / ((now - t0) / 1e9);
  }

  /** The line's text (no carriage return). Package-private for tests. */
  String line(long done, String extra, long now, boolean last) {
    double seconds = Math.max(1e-9, (now - startNanos) / 1e9);
    double average = done / seconds;
    StringBuilder sb = new StringBuilder(96);
    sb.append(String.format(Locale.ROOT, "%,d %s", done, label));
    double rate;
    if (last) {
      rate = average;
      sb.append(String.format(Locale.ROOT, "  %,.0f/s on average", average));
    } else if (now - lastChangeNanos >= IDLE_SECONDS * 1_000_000_000L) {
      rate = 0;
      long idle = (now - lastChangeNanos) / 1_000_000_000L;
      sb.append(String.format(Locale.ROOT, "  idle %d:%02d (no new %s)", idle / 60, idle % 60, label));
    } else {
      rate = recentRate(done, now);
      sb.append(String.format(Locale.ROOT, "  %,.0f/s", rate));
    }
    if (total > 0) {
      double share = Math.min(1.0, (double) done / total);
      sb.append(String.format(Locale.ROOT, "  %5.1f%%", 100 * share));
      if (rate > 0 && done < total) {
        long left = (long) ((total - done) / rate);
        sb.append(String.format(Locale.ROOT, "  %d:%02d left", left / 60, left % 60));
      }
    }
    if (extra != null && !extra.isEmpty()) {
      sb.append("  ").append(extra);
    }
    return TerminalText.safe(sb);
  }

  private void draw(String text) {
    StringBuilder sb = new StringBuilder(text.length() + 8).append('\r').append(text);
    for (int i = text.length(); i < lastWidth; i++) {
      sb.append(' ');
    }
    lastWidth = text.length();
    if (out instanceof SharedTerminal t) {
      t.drawProgress(sb); // a line someone else writes meanwhile starts below this one, not glued to it
    } else {
      out.print(sb);
      out.flush();
    }
  }
}
