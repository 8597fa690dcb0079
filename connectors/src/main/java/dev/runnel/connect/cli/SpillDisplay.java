package dev.runnel.connect.cli;

import dev.runnel.connect.launch.Progress;
import dev.runnel.connect.replay.MergedFeed;
import dev.runnel.connect.text.TerminalText;
import java.io.PrintStream;
import java.util.Locale;
import java.util.function.Supplier;

/**
 * What the terminal shows while a replay with {@code model.scope: global} copies its source to one
 * temporary file per partition ({@link MergedFeed}, docs/backtesting.md, "Global scope"): a line that
 * says where the files go, how much room they need and have, and how to put them elsewhere; then the
 * usual progress line, and a last line with the bytes written and their ratio to the source. A
 * warning when the free space is less than the source's size is printed even with {@code --quiet}.
 * One thread.
 */
final class SpillDisplay {

  private final PrintStream out;
  private final boolean quiet;
  private final long sourceBytes;
  private final Runnable whenDone;
  private Progress progress;

  /**
   * @param out where to write (System.err)
   * @param quiet no progress and no notes (warnings still)
   * @param sourceBytes the source's size in bytes, or -1 (a topic)
   * @param whenDone run once the copy is over (the caller starts its pass's progress line)
   */
  SpillDisplay(PrintStream out, boolean quiet, long sourceBytes, Runnable whenDone) {
    this.out = out;
    this.quiet = quiet;
    this.sourceBytes = sourceBytes;
    this.whenDone = whenDone;
  }

  /** Shows one step of the copy; {@code measure} is the source's own share done (e.g. "40% of the file"). */
  void show(MergedFeed.SpillProgress p, Supplier<String> measure) {
    if (p.records() == 0 && !p.finished() && progress == null) {
      start(p);
      return;
    }
    if (progress == null) {
      progress = new Progress(out, "records copied", 0, quiet);
    }
    if (!p.finished()) {
      progress.update(p.records(), () -> measure.get() + "  " + megabytes(p.bytesWritten()) + " written");
      return;
    }
    String ratio = sourceBytes > 0
        ? String.format(Locale.ROOT, ", %.2f × the source's %s", (double) p.bytesWritten() / sourceBytes, megabytes(sourceBytes))
        : "";
    progress.finish(p.records(), megabytes(p.bytesWritten()) + " in " + p.files() + " temporary file(s)" + ratio);
    whenDone.run();
  }

  private void start(MergedFeed.SpillProgress p) {
    String dir = TerminalText.safe(p.dir().toString());
    if (!quiet) {
      out.println("to run the partitions in one order (docs/backtesting.md, \"Global scope\"): copying the source once"
          + " to one temporary file per partition in " + dir
          + " (about the source's size" + (sourceBytes > 0 ? ", " + megabytes(sourceBytes) : "")
          + (p.usableBytes() >= 0 ? "; " + megabytes(p.usableBytes()) + " free there" : "")
          + "; deleted at the end; elsewhere with -Djava.io.tmpdir=DIR, e.g. in RUNNEL_JAVA_OPTS)");
    }
    if (sourceBytes > 0 && p.usableBytes() >= 0 && p.usableBytes() < sourceBytes) {
      out.println("runnel: warning: " + megabytes(p.usableBytes()) + " free in " + dir + ", less than the source's "
          + megabytes(sourceBytes) + ": the copy may fill the disk; point java.io.tmpdir at a folder with more room"
          + " (-Djava.io.tmpdir=DIR, e.g. in RUNNEL_JAVA_OPTS)");
    }
    progress = new Progress(out, "records copied", 0, quiet);
  }

  /** Bytes as decimal megabytes (or gigabytes from 10 GB), e.g. "12.3 MB". */
  static String megabytes(long bytes) {
    if (bytes >= 10_000_000_000L) {
      return String.format(Locale.ROOT, "%.1f GB", bytes / 1e9);
    }
    return String.format(Locale.ROOT, "%.1f MB", bytes / 1e6);
  }
}
