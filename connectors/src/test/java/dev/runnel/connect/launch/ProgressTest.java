package dev.runnel.connect.launch;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import org.junit.jupiter.api.Test;

/** The progress line on a made-up clock (no real time passes in this test). */
class ProgressTest {

  private long now = 5_000_000_000L;
  private final ByteArrayOutputStream bytes = new ByteArrayOutputStream();
  private final Progress progress = new Progress(new PrintStream(bytes, true, StandardCharsets.UTF_8), "records", 0,
      false, () -> now);

  /** Advances the clock in quarter seconds, counting {@code perSecond} records a second; returns the count. */
  private long run(long done, double seconds, long perSecond) {
    for (int q = 0; q < seconds * 4; q++) {
      now += 250_000_000L;
      done += perSecond / 4;
      progress.update(done, () -> "");
    }
    return done;
  }

  private String lastLine() {
    String all = bytes.toString(StandardCharsets.UTF_8);
    return all.substring(all.lastIndexOf('\r') + 1).trim();
  }

  @Test
  void theRateIsRecentAndAnIdleStreamSaysIdle() {
    long done = run(0, 20, 1000);
    assertEquals("20,000 records  1,000/s", lastLine());
    // caught up: nothing arrives for a minute. Before, the rate was the average since the start and kept falling
    // (20,000 / 80 s = 250/s) while the lag was 0
    done = run(done, 60, 0);
    assertEquals("20,000 records  idle 1:00 (no new records)", lastLine());
    // records again, at half the pace: the recent rate, not an average over the idle minute
    done = run(done, 15, 500);
    assertEquals("27,500 records  500/s", lastLine());
    progress.finish(done, "");
    // 27,500 records in 95 s
    assertEquals("27,500 records  289/s on average", lastLine());
  }

  @Test
  void aShortPauseIsNotIdleAndTheTimeLeftUsesTheRecentRate() {
    Progress p = new Progress(new PrintStream(bytes, true, StandardCharsets.UTF_8), "records", 10_000, false, () -> now);
    long done = 0;
    for (int q = 0; q < 20; q++) {
      now += 250_000_000L;
      done += 100;
      p.update(done, () -> "");
    }
    now += 2_000_000_000L;
    p.update(done, () -> "");
    assertTrue(lastLine().startsWith("2,000 records  "), lastLine());
    assertTrue(!lastLine().contains("idle") && lastLine().contains("20.0%"), lastLine());
    // 2,000 records over the last 7 s of the window: 286/s; 8,000 left at that rate: 28 s
    assertTrue(lastLine().endsWith("0:27 left") || lastLine().endsWith("0:28 left"), lastLine());
  }
}
