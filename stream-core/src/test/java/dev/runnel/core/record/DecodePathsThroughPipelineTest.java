package dev.runnel.core.record;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.OutputJson;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * The whole step gives the same bytes whichever decode path a record takes. One pipeline takes the
 * raw bytes ({@link PipelineStep#process}: the fast decoder, char lookups in the vocabularies, one
 * reused output generator). The other gets each record decoded by a new Jackson parser
 * ({@link JsonRecordDecoder#decodeWithJackson}, the decoder as it was; texts set as {@code String}s)
 * through {@link PipelineStep#processRecord}, and writes each output with a new
 * {@link OutputJson}, i.e. a new generator. Predictions, rejects and snapshots must be equal byte
 * for byte, and so must the final checkpoints. Run on the recorded demo sample, twice over, and on
 * the sample with its hub names replaced by names with non-ASCII chars and escapes.
 */
class DecodePathsThroughPipelineTest {

  static final Path DEMO_CONFIG = Path.of("..", "demo-data", "src", "main", "resources", "dev", "runnel", "demo", "quillmarsh.yaml");

  static final String[] TRICKY_HUBS = {
    "Z\u00fcrich", "\u65e5\u672c", "\ud83d\ude00 hub", "Q\\\\M", "tab\\there", "\\u00e9t\\u00e9", "quote\\\"d", "\\ud83d\\ude00",
    "QM-04", "e\\u0301", "slash\\/", "x", "",
  };

  /** The sample with each hub QM-01 .. QM-13 renamed to one of {@link #TRICKY_HUBS} (JSON text). */
  static List<byte[]> trickySample(List<byte[]> lines) {
    List<byte[]> out = new ArrayList<>(lines.size());
    for (byte[] l : lines) {
      String s = new String(l, StandardCharsets.UTF_8);
      for (int h = 13; h >= 1; h--) {
        s = s.replace(String.format("\"hub\":\"QM-%02d\"", h), "\"hub\":\"" + TRICKY_HUBS[h - 1] + "\"");
      }
      out.add(s.getBytes(StandardCharsets.UTF_8));
    }
    return out;
  }

  private static final class Outputs implements PipelineStep.Sink {
    final PipelineStep step;
    final OutputJson shared;
    final boolean fresh;
    final ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    byte[] raw;
    long offset;
    RejectReason lastReason;
    String lastDetail;

    Outputs(PipelineStep step, boolean fresh) {
      this.step = step;
      this.fresh = fresh;
      this.shared = json(step);
    }

    static OutputJson json(PipelineStep s) { return new OutputJson(s.config().name(), s.config().model().intervalLevel()); }

    OutputJson out() { return fresh ? json(step) : shared; }

    @Override public void prediction(Prediction p, EventRecord r) { bytes.writeBytes(out().prediction(p, r)); }

    @Override public void reject(RejectReason reason, String detail) {
      lastReason = reason;
      lastDetail = detail;
      bytes.writeBytes(out().reject(reason, detail, 0, offset, raw, 0, raw.length));
    }

    @Override public void snapshotDue() { bytes.writeBytes(out().snapshot(step.snapshot(), 0)); }
  }

  static void runBoth(PipelineConfig cfg, List<byte[]> feed, int passes) {
    PipelineStep fast = new PipelineStep(cfg);
    PipelineStep reference = new PipelineStep(cfg);
    PipelineConfig.Input in = cfg.input();
    JsonRecordDecoder jackson = new JsonRecordDecoder(in.schema(), in.limits(), in.eventTime().get().field(), in.eventTime().get().format());
    Outputs a = new Outputs(fast, false);
    Outputs b = new Outputs(reference, true);
    int decodeRejects = 0;
    for (int pass = 0; pass < passes; pass++) {
      for (int i = 0; i < feed.size(); i++) {
        byte[] raw = feed.get(i);
        a.raw = raw;
        b.raw = raw;
        a.offset = i;
        b.offset = i;
        fast.process(raw, 0, raw.length, 0L, 0, i, a);
        RejectReason r = jackson.decodeWithJackson(raw, 0, raw.length, reference.record());
        if (r != null) {
          decodeRejects++;
          b.lastReason = null;
          reference.process(raw, 0, raw.length, 0L, 0, i, b);
          assertEquals(r, b.lastReason, "line " + i);
          assertEquals(jackson.lastDetail(), b.lastDetail, "line " + i);
        } else {
          reference.processRecord(0L, 0, i, b);
        }
      }
      assertArrayEquals(b.bytes.toByteArray(), a.bytes.toByteArray(), "outputs after pass " + pass);
    }
    assertArrayEquals(reference.checkpoint(), fast.checkpoint(), "final checkpoints");
    // the run exercised what it should
    assertTrue(decodeRejects >= 4 * passes, decodeRejects + " decode rejects");
    assertTrue(fast.trained() > 1500L * passes && fast.forecasts() > 1000L * passes && fast.snapshotsTaken() > 10,
        fast.trained() + " trained, " + fast.forecasts() + " forecasts, " + fast.snapshotsTaken() + " snapshots");
  }

  @Test void demoSample_sameBytesEitherWay() throws IOException {
    // two passes: the second repeats every actual, so the memory of learned actuals is off (it would reject them)
    runBoth(ConfigLoader.parse(dev.runnel.core.pipeline.StreamClockPolicyTest.withoutLearnedMemory(
        java.nio.file.Files.readString(DEMO_CONFIG)), "quillmarsh.yaml"), DecoderAgreementTest.sampleLines(), 2);
  }

  @Test void demoSampleWithTrickyHubNames_sameBytesEitherWay() throws IOException {
    PipelineConfig cfg = ConfigLoader.load(DEMO_CONFIG);
    List<byte[]> feed = trickySample(DecoderAgreementTest.sampleLines());
    runBoth(cfg, feed, 1);
    // the names really reached the vocabulary
    PipelineStep s = new PipelineStep(cfg);
    for (byte[] l : feed) s.process(l, 0, l.length, 0L, 0, 0, new PipelineStep.Sink() {
      @Override public void prediction(Prediction p, EventRecord r) { }
      @Override public void reject(RejectReason reason, String detail) { }
      @Override public void snapshotDue() { }
    });
    List<String> levels = new ArrayList<>();
    s.featurizer().vocabulary("hub").levelsInOrder().forEach(l -> levels.add(l.key()));
    // expected texts decoded by hand from the JSON escapes in TRICKY_HUBS
    assertTrue(levels.contains("Z\u00fcrich") && levels.contains("\u00e9t\u00e9") && levels.contains("quote\"d")
        && levels.contains("\ud83d\ude00") && levels.contains("Q\\M"), levels.toString());
  }
}
