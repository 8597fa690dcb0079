package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.io.ByteArrayOutputStream;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The pipeline's state survives a checkpoint exactly: a stream split at a random point, with the
 * second half run by a new pipeline restored from the first half's checkpoint, gives the same
 * predictions, rejects and snapshots, byte for byte, as the unsplit run.
 */
class PipelineCheckpointTest {

  static final String CONFIG = """
      name: checkpoint-test
      input:
        fields:
          hub: text
          weather: text
          temperature_c: number
          price: number
          sessions: number
          observed_at: time
        event_time: {field: observed_at, format: iso8601}
        time_zone: Europe/Amsterdam
      target: sessions
      features:
        - {kind: onehot, field: hub, max_levels: 6, expire_after: P2D}
        - {kind: onehot, field: weather, max_levels: 3, min_count: 3}
        - {kind: cyclic, cycle: hour_of_day, harmonics: 2}
        - {kind: cyclic, cycle: day_of_week}
        - {kind: numeric, field: temperature_c}
        - {kind: numeric, field: price, transform: log1p, weighting_half_life_records: 500}
      model:
        prior_variance: 10
        forgetting: {half_life: P3D}
        interval_level: 0.9
      outputs:
        snapshot_every_records: 250
        snapshot_every: P1D
      """;

  /** A synthetic feed with hubs coming and going, forecasts (no target) and bad records. */
  static List<byte[]> feed(long seed, int n) {
    Random rnd = new Random(seed);
    List<byte[]> out = new ArrayList<>(n);
    long t = Instant.parse("2026-03-20T00:00:00Z").toEpochMilli();
    String[] weathers = {"clear", "cloudy", "rain", "snow", "fog"};
    for (int i = 0; i < n; i++) {
      t += 60_000L * (1 + rnd.nextInt(20));
      int hubCount = i < n / 2 ? 5 : 8; // new hubs after the middle
      int hub = rnd.nextInt(hubCount);
      if (i > n * 3 / 4 && hub == 0) {
        hub = 1; // hub 0 stops reporting: it must expire
      }
      double temp = 8 + 6 * rnd.nextGaussian();
      double price = 0.2 + 0.1 * rnd.nextDouble();
      double y = 20 + 2 * hub - 0.3 * temp - 10 * price + rnd.nextGaussian();
      String line;
      int kind = rnd.nextInt(50);
      String time = Instant.ofEpochMilli(t).toString();
      if (kind == 0) {
        line = "{\"hub\":\"H" + hub + "\",\"temperature_c\":\"warm\"}"; // wrong type
      } else if (kind == 1) {
        line = "{\"hub\":\"H" + hub + "\",\"observed_at\":\"" + time + "\",\"weather\":\"rain\",\"temperature_c\":"
            + temp + ",\"price\":" + price + "}"; // forecast request: no target
      } else if (kind == 2) {
        line = "{not json";
      } else {
        line = String.format(Locale.ROOT,
            "{\"hub\":\"H%d\",\"observed_at\":\"%s\",\"weather\":\"%s\",\"temperature_c\":%s,\"price\":%s,\"sessions\":%s}",
            hub, time, weathers[rnd.nextInt(weathers.length)], temp, price, y);
      }
      out.add(line.getBytes(StandardCharsets.UTF_8));
    }
    return out;
  }

  /** Runs records [from, to) and returns every output as bytes, in order. */
  static byte[] run(PipelineStep step, List<byte[]> feed, int from, int to) {
    ByteArrayOutputStream all = new ByteArrayOutputStream();
    OutputJson json = new OutputJson(step.config().name(), step.config().model().intervalLevel());
    for (int i = from; i < to; i++) {
      byte[] b = feed.get(i);
      long offset = i;
      step.process(b, 0, b.length, 0L, 0, offset, new PipelineStep.Sink() {
        @Override public void prediction(Prediction p, EventRecord r) { all.writeBytes(json.prediction(p, r)); }
        @Override public void reject(RejectReason reason, String detail) {
          all.writeBytes(json.reject(reason, detail, 0, offset, b, 0, b.length));
        }
        @Override public void snapshotDue() { all.writeBytes(json.snapshot(step.snapshot(), 0)); }
      });
    }
    return all.toByteArray();
  }

  @Test
  void splitRunWithCheckpointEqualsUnsplitRunBitForBit() {
    PipelineConfig cfg = ConfigLoader.parse(CONFIG, "checkpoint-test.yaml");
    List<byte[]> feed = feed(11, 6000);
    PipelineStep whole = new PipelineStep(cfg);
    byte[] expected = run(whole, feed, 0, feed.size());
    Random rnd = new Random(5);
    for (int trial = 0; trial < 3; trial++) {
      int split = 1 + rnd.nextInt(feed.size() - 2);
      PipelineStep first = new PipelineStep(cfg);
      ByteArrayOutputStream got = new ByteArrayOutputStream();
      got.writeBytes(run(first, feed, 0, split));
      byte[] checkpoint = first.checkpoint();
      PipelineStep second = new PipelineStep(cfg);
      second.restore(checkpoint);
      got.writeBytes(run(second, feed, split, feed.size()));
      assertArrayEquals(expected, got.toByteArray(), "split at " + split);
      assertArrayEquals(whole.checkpoint(), second.checkpoint(), "final checkpoint, split at " + split);
    }
    // the feed exercised what it should: rejects, forecasts, hubs admitted and expired
    assertTrue(whole.rejected() > 0 && whole.forecasts() > 0);
    assertTrue(whole.featurizer().layoutVersion() > 8, "layout changed " + whole.featurizer().layoutVersion() + " times");
    assertEquals(Double.NaN, whole.snapshot().weightOf("hub=H0"), "hub H0 expired");
  }

  @Test
  void restoreRefusesACheckpointFromAnotherConfiguration() {
    PipelineConfig cfg = ConfigLoader.parse(CONFIG, "a.yaml");
    PipelineStep a = new PipelineStep(cfg);
    run(a, feed(3, 200), 0, 200);
    PipelineConfig other = ConfigLoader.parse(CONFIG.replace("harmonics: 2", "harmonics: 3"), "b.yaml");
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
        () -> new PipelineStep(other).restore(a.checkpoint()));
    assertTrue(e.getMessage().contains("different feature or model configuration"), e.getMessage());
    assertThrows(IllegalArgumentException.class, () -> new PipelineStep(cfg).restore(new byte[] {1, 2, 3}));
  }
}
