package dev.runnel.connect.output;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.model.ModelShare;
import dev.runnel.core.pipeline.OutputJson;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;

/**
 * Snapshots of a {@code model.scope: global} pipeline with 4 partitions, made by real {@link PipelineStep}s that share
 * and fold through the shares' binary form (no Kafka): each partition has hubs of its own and a record every 10
 * minutes of event time, snapshots every 6 hours ({@code outputs.snapshot_every}, so the 4 partitions publish at the
 * same times), a share every 20 own records. Partitions 0 to 2 fold every share as soon as a round of records ends;
 * partition 3 folds until {@link #CUT_RECORD} and never after (its own records keep being shared), and its records
 * follow a price effect of −30 where the others' follow −10, so its view drifts away from the one model while the
 * others' agree. Seeded: the same snapshots every run.
 */
public final class GlobalViewsFeed {

  /** Partitions. */
  public static final int PARTITIONS = 4;
  /** Records per partition (3 days at one every 10 minutes). */
  public static final int RECORDS = 432;
  /** The record from which partition 3 folds nothing more (the end of the first day). */
  public static final int CUT_RECORD = 144;
  /** The partition whose view stops folding. */
  public static final int BEHIND = 3;

  static final String YAML = """
      name: global-views
      input:
        fields: {hub: text, temperature_c: number, price: number, sessions: number, observed_at: time}
        event_time: {field: observed_at, format: iso8601}
      target: sessions
      features:
        - {kind: onehot, field: hub, max_levels: 40}
        - {kind: numeric, field: temperature_c}
        - {kind: numeric, field: price}
      model:
        prior_variance: 4
        scope: global
        share_every_records: 20
      outputs:
        snapshot_every: PT6H
        snapshot_every_records: 0
        encoding: %s
      """;

  private static final ObjectMapper JSON = new ObjectMapper();

  /** The snapshots, in the order the partitions published them (round by round, partition 0 first). */
  public final List<JsonNode> snapshots = new ArrayList<>();
  /** The same snapshots in Avro binary ({@code snapshot.avsc}), in the same order. */
  public final List<byte[]> avro = new ArrayList<>();

  private GlobalViewsFeed() { }

  /** Runs the 4 partitions. */
  public static GlobalViewsFeed run() {
    GlobalViewsFeed f = new GlobalViewsFeed();
    PipelineConfig c = ConfigLoader.parse(String.format(YAML, "json"), "global-views.yaml");
    PipelineConfig ca = ConfigLoader.parse(String.format(YAML, "avro"), "global-views.yaml");
    OutputJson json = OutputJson.of(c);
    OutputAvro avroOut = OutputAvro.of(ca);
    OutputJson jsonA = OutputJson.of(ca);
    PipelineStep[] steps = new PipelineStep[PARTITIONS];
    List<List<byte[]>> inbox = new ArrayList<>();
    Random rnd = new Random(20261205L);
    for (int p = 0; p < PARTITIONS; p++) {
      steps[p] = new PipelineStep(c, p);
      inbox.add(new ArrayList<>());
    }
    long t0 = Instant.parse("2026-03-02T00:00:00Z").toEpochMilli();
    for (int i = 0; i < RECORDS; i++) {
      for (int p = 0; p < PARTITIONS; p++) {
        final int part = p;
        final PipelineStep step = steps[p];
        PipelineStep.Sink sink = new PipelineStep.Sink() {
          @Override public void prediction(Prediction pr, EventRecord r) { }

          @Override public void reject(RejectReason reason, String detail) {
            throw new AssertionError(reason + ": " + detail);
          }

          @Override public void snapshotDue() {
            try {
              f.snapshots.add(JSON.readTree(json.snapshot(step.snapshot(), part)));
              f.avro.add(avroOut.snapshot(jsonA, step.snapshot(), part));
            } catch (IOException e) {
              throw new UncheckedIOException(e);
            }
          }
        };
        int hub = 4 * p + rnd.nextInt(4);
        double temp = 8 + 3 * p + 6 * rnd.nextGaussian();
        double price = 0.2 + 0.2 * rnd.nextDouble();
        double priceEffect = p == BEHIND ? -30 : -10;
        double y = 20 + 0.5 * hub - 0.3 * temp + priceEffect * price + rnd.nextGaussian();
        byte[] r = ("{\"hub\":\"H" + hub + "\",\"observed_at\":\"" + Instant.ofEpochMilli(t0 + 600_000L * i)
            + "\",\"temperature_c\":" + temp + ",\"price\":" + price + ",\"sessions\":" + y + "}")
            .getBytes(StandardCharsets.UTF_8);
        step.process(r, 0, r.length, 0, p, i, sink);
        ModelShare s = step.shareIfDue();
        if (s != null) {
          byte[] b = s.toBytes();
          for (int q = 0; q < PARTITIONS; q++) {
            if (q != p) {
              inbox.get(q).add(b);
            }
          }
        }
      }
      for (int p = 0; p < PARTITIONS; p++) {
        if (p == BEHIND && i >= CUT_RECORD) {
          continue;
        }
        List<byte[]> waiting = new ArrayList<>();
        for (byte[] b : inbox.get(p)) {
          try {
            if (steps[p].fold(ModelShare.fromBytes(b)) == null) {
              waiting.add(b); // no stream clock yet: the share waits
            }
          } catch (IOException e) {
            throw new UncheckedIOException(e);
          }
        }
        inbox.set(p, waiting);
      }
    }
    return f;
  }

  /** The distinct snapshot times, ascending. */
  public List<String> times() {
    java.util.TreeSet<String> out = new java.util.TreeSet<>();
    snapshots.forEach(s -> out.add(s.path("event_time").asText()));
    return new ArrayList<>(out);
  }

  /** The snapshot of one partition at one time. */
  public JsonNode at(int partition, String time) {
    for (JsonNode s : snapshots) {
      if (s.path("partition").asInt() == partition && s.path("event_time").asText().equals(time)) {
        return s;
      }
    }
    throw new AssertionError("no snapshot of partition " + partition + " at " + time);
  }

  /** A column's raw weight and raw standard error in a snapshot (its own columns or the other partitions'). */
  public static double[] column(JsonNode s, String name) {
    List<JsonNode> cols = new ArrayList<>();
    s.path("columns").forEach(cols::add);
    s.path("global_model").path("other_partitions_columns").forEach(cols::add);
    for (JsonNode c : cols) {
      if (c.path("name").asText().equals(name)) {
        return new double[] {c.path("raw_weight").asDouble(), c.path("raw_std_error").asDouble()};
      }
    }
    throw new AssertionError("no column " + name + " in " + s.path("partition"));
  }
}
