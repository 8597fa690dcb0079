package dev.runnel.connect.replay;

import dev.runnel.connect.report.TextReport;
import dev.runnel.connect.report.JsonReport;
import dev.runnel.connect.report.HtmlReport;
import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertInstanceOf;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.evaluate.Backtest;
import dev.runnel.core.evaluate.BacktestResult;
import dev.runnel.demo.QuillmarshGenerator;
import dev.runnel.demo.Settings;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.concurrent.CancellationException;
import java.util.concurrent.CountDownLatch;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicLong;
import java.util.concurrent.atomic.AtomicLongArray;
import java.util.concurrent.atomic.AtomicReference;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;

/**
 * The threaded replay against the sequential one: the same bits in the reports whatever the thread
 * count and batch size; failures name the configuration; cancellation and back-pressure; progress
 * counts only finished records. Data: 40 invented Quillmarsh days with forecast requests and the
 * generator's corrupt lines (demo-data, seeded).
 */
class ParallelReplayTest {

  @TempDir
  static Path dir;
  private static Path file;
  private static String yaml;

  @BeforeAll
  static void generate() throws IOException {
    QuillmarshGenerator gen = new QuillmarshGenerator(Settings.defaults().withDays(40));
    file = dir.resolve("quillmarsh-40d.jsonl");
    StringBuilder sb = new StringBuilder();
    gen.lines().forEach(l -> sb.append(l).append('\n'));
    Files.writeString(file, sb, StandardCharsets.UTF_8);
    yaml = Files.readString(Path.of("../docs/examples/with-weather.yaml"));
  }

  /** Three configurations: as shipped, without weather, without the day-of-week encoding. */
  private static Backtest backtest() {
    String noWeather = yaml.replace("  - {kind: onehot, field: weather, max_levels: 8}\n", "");
    String noWeekday = yaml.replace("  - {kind: cyclic, cycle: day_of_week, harmonics: 3}\n", "");
    assertTrue(noWeather.length() < yaml.length() && noWeekday.length() < yaml.length(), "the example has both lines");
    return new Backtest(List.of(
        new Backtest.Variant("with-weather", ConfigLoader.parse(yaml, "with-weather.yaml")),
        new Backtest.Variant("no-weather", ConfigLoader.parse(noWeather, "no-weather.yaml")),
        new Backtest.Variant("no-weekday", ConfigLoader.parse(noWeekday, "no-weekday.yaml"))),
        new Backtest.Options("weather", 86_400_000L, List.of("price_per_kwh", "temperature_c"), -1, 1, 0.05));
  }

  private static byte[] json(BacktestResult r, Path out) throws IOException {
    JsonReport.write(r, Map.of("source", "quillmarsh-40d.jsonl"), out);
    return Files.readAllBytes(out);
  }

  private static byte[] html(BacktestResult r, Path out) throws IOException {
    HtmlReport.write(r, Map.of("source", "quillmarsh-40d.jsonl"), out);
    return Files.readAllBytes(out);
  }

  private static List<String> workerThreadsAlive() {
    List<String> alive = new ArrayList<>();
    for (Thread t : Thread.getAllStackTraces().keySet()) {
      if (t.getName().startsWith(ParallelReplay.THREAD_PREFIX) && t.isAlive()) {
        alive.add(t.getName());
      }
    }
    return alive;
  }

  @Test
  void oneThreadAndSeveral_giveByteIdenticalReports() throws IOException {
    Backtest sequential = backtest();
    long n = ReplayDriver.run(sequential, new FileSource(file), 1, null);
    BacktestResult expected = sequential.result();
    byte[] expectedJson = json(expected, dir.resolve("t1.json"));
    byte[] expectedHtml = html(expected, dir.resolve("t1.html"));
    assertTrue(expected.variant("with-weather").scored() > 5000, "scored " + expected.variant("with-weather").scored());
    assertTrue(expected.variant("with-weather").forecasts() > 0, "the data hold forecast requests");
    for (int threads : new int[] {2, 3, 8}) {
      Backtest bt = backtest();
      assertEquals(n, ReplayDriver.run(bt, new FileSource(file), threads, null));
      BacktestResult r = bt.result();
      assertArrayEquals(expectedJson, json(r, dir.resolve("t" + threads + ".json")), threads + " threads: backtest.json");
      assertEquals(expected, r, threads + " threads"); // records compare doubles by Double.compare: the same bits
      assertArrayEquals(expectedHtml, html(r, dir.resolve("t" + threads + ".html")), threads + " threads: backtest.html");
      assertEquals(TextReport.render(expected), TextReport.render(r));
    }
    assertEquals(List.of(), workerThreadsAlive());
  }

  @Test
  void tinyBatchesAndFewOfThem_giveTheSameBits() throws IOException {
    Backtest sequential = backtest();
    ReplayDriver.run(sequential, new FileSource(file), 1, null);
    byte[] expected = json(sequential.result(), dir.resolve("seq.json"));
    // 7 records per batch (many partial hand-overs, a last batch that is not full), 2 batches in flight (constant back-pressure)
    Backtest bt = backtest();
    ParallelReplay replay = new ParallelReplay(List.of("with-weather", "no-weather", "no-weekday"), bt::acceptFor, 2, 7, 2);
    assertEquals(2, replay.threads());
    FileSource src = new FileSource(file);
    long n = replay.run(h -> src.read(h, null), null, 0, null);
    bt.countRecords(n);
    assertEquals(sequential.records(), bt.records());
    assertArrayEquals(expected, json(bt.result(), dir.resolve("tiny.json")));
  }

  @ParameterizedTest
  @ValueSource(ints = {1, 2, 3})
  void aFailingConfiguration_isNamedWithItsRecord_andNoThreadOutlivesTheRun(int threads) {
    Backtest bt = backtest();
    RuntimeException boom = new IllegalStateException("boom");
    long[] calls = {0};
    long[] failedOffset = {-1};
    ParallelReplay.VariantSink sink = (v, buf, off, len, ts, p, o) -> {
      if (v == 1 && ++calls[0] == 3000) { // only no-weather's thread touches calls
        failedOffset[0] = o;
        throw boom;
      }
      bt.acceptFor(v, buf, off, len, ts, p, o);
    };
    List<String> labels = List.of("with-weather", "no-weather", "no-weekday");
    ParallelReplay.ConfigurationFailure f = assertThrows(ParallelReplay.ConfigurationFailure.class, () -> {
      FileSource src = new FileSource(file);
      ReplayDriver.replay(labels, sink, h -> src.read(h, null), null, 0, threads, null);
    });
    assertEquals("no-weather", f.label());
    assertSame(boom, f.getCause());
    assertEquals("configuration no-weather failed on the record at partition 0, offset " + failedOffset[0] + ": boom",
        f.getMessage());
    assertEquals(List.of(), workerThreadsAlive(), "worker threads after a failure");
  }

  @Test
  void noThreadCount_belowOne() {
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
        () -> ReplayDriver.replay(List.of("a"), (v, b, o, l, t, p, off) -> { }, h -> 0, null, 0, 0, null));
    assertEquals("--threads must be at least 1 (1 = no worker threads), got 0", e.getMessage());
  }

  /**
   * Configuration 0 stalls on its 100th record until it is interrupted; the reader must stop
   * within the batches in flight (back-pressure), and cancelling (Ctrl-C) or interrupting the
   * reader ends the run with every thread gone.
   */
  @ParameterizedTest
  @ValueSource(strings = {"cancel", "interrupt"})
  void aStalledConfiguration_holdsTheReaderBack_andStoppingEndsEveryThread(String how) throws Exception {
    int batch = 10;
    int inFlight = 3;
    CountDownLatch stalled = new CountDownLatch(1);
    CountDownLatch never = new CountDownLatch(1);
    AtomicLong seen0 = new AtomicLong();
    ParallelReplay.VariantSink sink = (v, buf, off, len, ts, p, o) -> {
      if (v == 0 && seen0.incrementAndGet() == 100) {
        stalled.countDown();
        try {
          never.await();
        } catch (InterruptedException e) {
          Thread.currentThread().interrupt();
        }
      }
    };
    ParallelReplay replay = new ParallelReplay(List.of("a", "b"), sink, 2, batch, inFlight);
    AtomicLong handed = new AtomicLong();
    byte[] value = "{}".getBytes(StandardCharsets.UTF_8);
    ParallelReplay.Feed endless = h -> {
      for (long i = 0; i < 10_000_000L; i++) {
        handed.incrementAndGet();
        h.record(value, 0, value.length, 0L, 0, i);
      }
      return 10_000_000L;
    };
    AtomicReference<Throwable> outcome = new AtomicReference<>();
    Thread reader = new Thread(() -> {
      try {
        replay.run(endless, null, 0, null);
      } catch (Throwable t) {
        outcome.set(t);
      }
    }, "test-reader");
    reader.start();
    assertTrue(stalled.await(30, TimeUnit.SECONDS), "configuration a reached its 100th record");
    // batches are released only when both configurations finished them: the reader can hold at most
    // `inFlight` batches from the stalled one (batch 9, records 90..99) on, so it fills batches 9..11 and
    // then waits inside the call for record 120: at most (9 + 3) * 10 + 1 records handed
    long bound = (9 + inFlight) * batch + 1;
    assertTrue(handed.get() <= bound, "read ahead: " + handed.get());
    if (how.equals("cancel")) {
      replay.cancel();
    } else {
      reader.interrupt();
    }
    reader.join(30_000);
    assertTrue(!reader.isAlive(), "the reader returned");
    assertInstanceOf(CancellationException.class, outcome.get(), String.valueOf(outcome.get()));
    assertTrue(handed.get() >= 100 && handed.get() <= bound, "read: " + handed.get());
    assertEquals(List.of(), workerThreadsAlive(), "worker threads after " + how);
  }

  @Test
  void progress_countsOnlyRecordsEveryConfigurationFinished_onTheCallingThread() throws IOException {
    AtomicLongArray finished = new AtomicLongArray(3);
    ParallelReplay.VariantSink sink = (v, buf, off, len, ts, p, o) -> finished.incrementAndGet(v);
    ParallelReplay replay = new ParallelReplay(List.of("a", "b", "c"), sink, 3, 16, 4);
    Thread caller = Thread.currentThread();
    List<long[]> calls = new ArrayList<>();
    FileSource src = new FileSource(file);
    long[] bytes = {0};
    long size = src.sizeBytes();
    long n = replay.run(h -> src.read(h, bytes), () -> bytes[0], size, (records, done, total) -> {
      assertSame(caller, Thread.currentThread(), "the listener runs on the reader thread");
      long slowest = Math.min(finished.get(0), Math.min(finished.get(1), finished.get(2)));
      assertTrue(records <= slowest, records + " reported, slowest configuration finished " + slowest);
      calls.add(new long[] {records, done, total});
    });
    assertTrue(calls.size() > 10, "calls: " + calls.size());
    for (int i = 1; i < calls.size(); i++) {
      assertTrue(calls.get(i)[0] >= calls.get(i - 1)[0] && calls.get(i)[1] >= calls.get(i - 1)[1], "never goes back");
      assertTrue(calls.get(i)[1] <= size);
    }
    long[] last = calls.get(calls.size() - 1);
    assertEquals(n, last[0]);
    // every line ends in '\n' here, so the bytes read at the end are the file's size
    assertEquals(size, last[1]);
    assertEquals(size, last[2]);
    for (int v = 0; v < 3; v++) {
      assertEquals(n, finished.get(v));
    }
  }
}
