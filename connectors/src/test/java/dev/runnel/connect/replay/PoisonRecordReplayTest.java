package dev.runnel.connect.replay;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
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
import org.junit.jupiter.api.io.TempDir;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;

/**
 * A record on which one configuration's step throws (planted by a test wrapper that first lets the
 * real step process the record, then throws) does not stop the replay: it becomes that
 * configuration's {@code processing_failed} reject, its metrics, segments, buckets and coefficient
 * paths equal those of the file without the record, and the other configuration is not touched.
 * Data: 20 invented Quillmarsh days (demo-data, seeded).
 */
class PoisonRecordReplayTest {

  private static final String MARK = "\"planted_failure\":true,";

  @TempDir
  Path dir;

  private static Backtest backtest(PipelineConfig cfg) {
    return backtest(cfg, List.of());
  }

  private static Backtest backtest(PipelineConfig cfg, List<Long> horizons) {
    return new Backtest(List.of(new Backtest.Variant("throws", cfg), new Backtest.Variant("plain", cfg)),
        new Backtest.Options("hub", 86_400_000L, List.of("price_per_kwh"), -1, 1, 0.05).withHorizons(horizons));
  }

  private static Path write(Path file, List<String> lines) throws IOException {
    Files.writeString(file, String.join("\n", lines) + "\n", StandardCharsets.UTF_8);
    return file;
  }

  /** Everything of a variant's result but the record and reject counts. */
  private static void assertSameModelOutcome(BacktestResult.VariantResult want, BacktestResult.VariantResult got) {
    assertEquals(want.scored(), got.scored());
    assertEquals(want.overall(), got.overall());
    assertEquals(want.segments(), got.segments());
    assertEquals(want.byHour(), got.byHour());
    assertEquals(want.overTime(), got.overTime());
    assertEquals(want.paths(), got.paths());
  }

  @ParameterizedTest
  @ValueSource(ints = {1, 2})
  void aThrowingRecordBecomesARejectAndTheReplayGoesOnWithoutIt(int threads) throws IOException {
    poisoned(threads, List.of());
  }

  /** With --horizons the records are held back before the step runs them: the same outcome, horizons included. */
  @ParameterizedTest
  @ValueSource(ints = {1, 2})
  void withHorizons_aThrowingRecordBecomesARejectAndTheReplayGoesOnWithoutIt(int threads) throws IOException {
    poisoned(threads, List.of(3_600_000L, 86_400_000L));
  }

  private void poisoned(int threads, List<Long> horizons) throws IOException {
    PipelineConfig cfg = ConfigLoader.parse(Files.readString(Path.of("../docs/examples/with-weather.yaml")), "with-weather.yaml");
    List<String> clean = new QuillmarshGenerator(Settings.defaults().withDays(20)).lines().toList();
    List<String> salted = new ArrayList<>(clean);
    salted.add(1500, clean.get(1500).replaceFirst("\\{", "{" + MARK));
    salted.add(900, clean.get(900).replaceFirst("\\{", "{" + MARK));
    Path poisoned = write(dir.resolve("poisoned.jsonl"), salted);
    Path without = write(dir.resolve("without.jsonl"), clean);

    Backtest bt = backtest(cfg, horizons);
    FileSource src = new FileSource(poisoned);
    long[] bytes = {0};
    ParallelReplay.VariantSink throwing = (v, buf, off, len, ts, p, o) -> {
      bt.acceptFor(v, buf, off, len, ts, p, o);
      if (v == 0 && !bt.isSetAside(v, p, o) && new String(buf, off, len, StandardCharsets.UTF_8).contains(MARK)) {
        throw new IllegalStateException("planted failure at line " + o);
      }
    };
    long n = ReplayDriver.passes(bt, throwing, sink -> ReplayDriver.replay(List.of("throws", "plain"), sink,
        h -> src.read(h, bytes), () -> bytes[0], src.sizeBytes(), threads, null));
    assertEquals(salted.size(), n);
    assertEquals(2, bt.setAsideCount(0));
    assertEquals(0, bt.setAsideCount(1));
    BacktestResult got = bt.result();

    Backtest reference = backtest(cfg, horizons);
    ReplayDriver.run(reference, new FileSource(without), 1, null);
    BacktestResult wantAll = reference.result();
    BacktestResult.VariantResult want = wantAll.variant("throws");
    assertEquals(horizons.size(), got.horizons().size());
    for (int h = 0; h < horizons.size(); h++) {
      BacktestResult.HorizonVariant wh = wantAll.horizons().get(h).variants().get(0);
      BacktestResult.HorizonVariant gh = got.horizons().get(h).variants().get(0);
      assertTrue(wh.metrics().count() > 1000, wh.toString());
      assertEquals(wh.metrics(), gh.metrics());
      assertEquals(wh.warmingUp(), gh.warmingUp());
    }
    BacktestResult.VariantResult thrown = got.variant("throws");
    assertSameModelOutcome(want, thrown);
    assertEquals(want.records() + 2, thrown.records(), "the set-aside records are counted as read");
    assertEquals(want.rejected() + 2, thrown.rejected());
    assertEquals(2L, thrown.rejectsByReason().get("processing_failed"));
    // the other configuration processed the marked records as the valid records they are
    assertEquals(0L, got.variant("plain").rejectsByReason().getOrDefault("processing_failed", 0L));
    assertEquals(want.records() + 2, got.variant("plain").records());
  }
}
