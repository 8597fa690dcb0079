package dev.runnel.core.bench;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.OutputJson;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.pipeline.SettledForecast;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.security.MessageDigest;
import java.util.Arrays;
import java.util.HexFormat;
import java.util.List;

/**
 * A same-bits check for changes on the forecast path, beyond the tests' small sample: runs a feed
 * (e.g. a year from {@code dev.runnel.demo.DemoDataMain}) through one step and prints the SHA-256 of
 * every output line as {@link OutputJson} writes it (predictions, settled forecasts, snapshots) and
 * every reject with its text, of a checkpoint taken at the middle and at the end, and checks that a
 * step restored from the middle one continues to the same outputs and end checkpoint. Run it with
 * the build before and the build after first on the class path and compare the lines:
 *
 * <pre>{@code
 * java -cp /tmp/base/stream-core/target/classes:stream-core/target/benchmarks.jar \
 *     dev.runnel.core.bench.ForecastPathDigest --records year.jsonl --variant demo_forecast
 * }</pre>
 */
public final class ForecastPathDigest {
  private ForecastPathDigest() { }

  /** Every callback into one digest, in order. */
  static final class Run implements PipelineStep.Sink {
    final PipelineStep step;
    final OutputJson json;
    final MessageDigest outputs = sha256();
    long settled;
    long corrections;

    Run(PipelineConfig cfg) {
      step = new PipelineStep(cfg);
      json = OutputJson.of(cfg);
    }

    void feed(List<byte[]> recs, int from, int to) {
      for (int i = from; i < to; i++) {
        byte[] b = recs.get(i);
        step.process(b, 0, b.length, 0L, 0, i, this);
      }
    }

    @Override public void prediction(Prediction p, EventRecord r) {
      line('p', json.prediction(p, r));
    }

    @Override public void settled(SettledForecast s, EventRecord r) {
      settled++;
      if (s.correction()) {
        corrections++;
      }
      line('f', json.settled(s, r));
    }

    @Override public void reject(RejectReason reason, String detail) {
      line('r', (reason.id() + ": " + detail).getBytes(StandardCharsets.UTF_8));
    }

    @Override public void snapshotDue() {
      line('s', json.snapshot(step.snapshot(), 0));
    }

    private void line(char kind, byte[] b) {
      outputs.update((byte) kind);
      outputs.update(b);
      outputs.update((byte) '\n');
    }
  }

  static MessageDigest sha256() {
    try {
      return MessageDigest.getInstance("SHA-256");
    } catch (java.security.NoSuchAlgorithmException e) {
      throw new IllegalStateException(e);
    }
  }

  public static void main(String[] args) throws Exception {
    String variant = "demo_forecast";
    Path records = null;
    for (int i = 0; i < args.length; i++) {
      switch (args[i]) {
        case "--variant" -> variant = args[++i];
        case "--records" -> records = Path.of(args[++i]);
        default -> throw new IllegalArgumentException("unknown option " + args[i] + "; allowed: --variant NAME, --records FILE");
      }
    }
    if (records == null) {
      throw new IllegalArgumentException("--records FILE is required");
    }
    List<byte[]> recs = Files.readAllLines(records).stream().filter(l -> !l.isBlank())
        .map(l -> l.getBytes(StandardCharsets.UTF_8)).toList();
    PipelineConfig cfg = ConfigLoader.parse(BenchData.demoYamlWith(variant), variant);
    HexFormat hex = HexFormat.of();
    int half = recs.size() / 2;
    Run whole = new Run(cfg);
    whole.feed(recs, 0, half);
    byte[] mid = whole.step.checkpoint();
    Run restored = new Run(cfg);
    restored.step.restore(mid);
    if (!Arrays.equals(mid, restored.step.checkpoint())) {
      throw new IllegalStateException("a restored step does not write the checkpoint it read");
    }
    String first = hex.formatHex(whole.outputs.digest());
    whole.feed(recs, half, recs.size());
    restored.feed(recs, half, recs.size());
    String second = hex.formatHex(whole.outputs.digest());
    String again = hex.formatHex(restored.outputs.digest());
    byte[] end = whole.step.checkpoint();
    if (!second.equals(again) || !Arrays.equals(end, restored.step.checkpoint())) {
      throw new IllegalStateException("the step restored at the middle does not continue bit for bit");
    }
    System.out.println(variant + " on " + recs.size() + " records: " + whole.settled + " settled (" + whole.corrections + " corrections)");
    System.out.println("outputs, first half  " + first);
    System.out.println("outputs, second half " + second + " (the restored step's the same)");
    System.out.println("checkpoint, middle   " + hex.formatHex(sha256().digest(mid)));
    System.out.println("checkpoint, end      " + hex.formatHex(sha256().digest(end)) + " (the restored step's the same)");
  }
}
