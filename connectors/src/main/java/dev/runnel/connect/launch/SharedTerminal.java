package dev.runnel.connect.launch;

import java.io.PrintStream;

/**
 * Standard error shared by the progress line and every other writer (Runnel's own messages, the
 * Kafka clients' log lines through slf4j-simple, which looks up {@code System.err} at each line).
 * The progress line is drawn with a carriage return and no newline, so anything else written while
 * it shows would be glued onto its end; this stream ends the progress line first, and the next
 * progress update draws a fresh one below. Thread-safe: the runner's threads log while the main
 * thread draws.
 */
public final class SharedTerminal extends PrintStream {

  private final PrintStream raw;
  private boolean lineOpen;

  private SharedTerminal(PrintStream raw) {
    super(raw, true);
    this.raw = raw;
  }

  /**
   * Makes {@code System.err} a shared terminal (once; later calls return the same one), so that
   * every writer that reads {@code System.err} afterwards goes through it.
   */
  public static synchronized SharedTerminal install() {
    if (System.err instanceof SharedTerminal s) {
      return s;
    }
    SharedTerminal s = new SharedTerminal(System.err);
    System.setErr(s);
    return s;
  }

  /** A shared terminal around {@code raw}, not installed anywhere; for tests. */
  static SharedTerminal around(PrintStream raw) {
    return new SharedTerminal(raw);
  }

  /** Draws (or redraws) the progress line: {@code text} starts with a carriage return and has no newline. */
  synchronized void drawProgress(CharSequence text) {
    raw.print(text);
    raw.flush();
    lineOpen = true;
  }

  /** Ends the progress line (its final form stays on the screen). */
  synchronized void endProgress() {
    raw.println();
    raw.flush();
    lineOpen = false;
  }

  @Override
  public synchronized void write(int b) {
    breakProgressLine();
    raw.write(b);
  }

  @Override
  public synchronized void write(byte[] buf, int off, int len) {
    breakProgressLine();
    raw.write(buf, off, len);
  }

  @Override
  public synchronized void flush() {
    raw.flush();
  }

  private void breakProgressLine() {
    if (lineOpen) {
      lineOpen = false;
      raw.print('\n');
    }
  }
}
