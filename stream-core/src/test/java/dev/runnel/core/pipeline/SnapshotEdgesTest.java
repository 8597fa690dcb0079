package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.nio.charset.StandardCharsets;
import java.time.Instant;
import java.util.List;
import java.util.Locale;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Edges of the snapshot that the other tests leave open (survivors of mutation testing in
 * {@link Snapshot} and {@link Prediction}): a one-hot feature with exactly two levels has contrasts
 * (each level's raw weight minus the mean of the two, worked by hand from the snapshot's own
 * raw weights), {@code drift.contrast_levels: 0} gives none; an entity's values are read back
 * from its text when a field is empty or longer than 65,535 chars; the status ids on the output.
 */
class SnapshotEdgesTest {

  private static PipelineStep trained(int contrastLevels) {
    PipelineStep step = new PipelineStep(ConfigLoader.parse(ContrastsTest.CONFIG.formatted(contrastLevels), "contrasts.yaml"));
    PipelineStep.Sink sink = new PipelineStep.Sink() {
      @Override public void prediction(Prediction p, EventRecord r) { }
      @Override public void reject(RejectReason reason, String detail) { throw new AssertionError(detail); }
      @Override public void snapshotDue() { }
    };
    Random rnd = new Random(3);
    long t = Instant.parse("2026-03-01T00:00:00Z").toEpochMilli();
    for (int i = 0; i < 400; i++) {
      int g = rnd.nextInt(3) == 0 ? 1 : 0; // G0 recorded more often
      double x = 3 + rnd.nextGaussian();
      double y = 2 + 0.9 * g + 0.7 * x + 0.5 * rnd.nextGaussian();
      byte[] b = String.format(Locale.ROOT, "{\"gate\":\"G%d\",\"x\":%.17g,\"y\":%.17g,\"at\":\"%s\"}", g, x, y,
          Instant.ofEpochMilli(t + 60_000L * i)).getBytes(StandardCharsets.UTF_8);
      step.process(b, 0, b.length, 0L, 0, i, sink);
    }
    return step;
  }

  @Test
  void aFeatureOfExactlyTwoLevelsHasContrastsAndContrastLevelsZeroGivesNone() {
    Snapshot s = trained(4).snapshot();
    assertEquals(1, s.contrasts().size(), "two admitted levels are enough for a contrast");
    Snapshot.Contrasts c = s.contrasts().get(0);
    assertEquals(2, c.levelsTotal());
    assertEquals(List.of("G0", "G1"), c.levels().stream().map(Snapshot.LevelContrast::level).toList());
    double w0 = s.rawWeightOf("gate=G0");
    double w1 = s.rawWeightOf("gate=G1");
    double half = (w0 - w1) / 2; // each level minus the mean of the two
    assertEquals(half, c.levels().get(0).effect(), 1e-12 * (1 + Math.abs(half)));
    assertEquals(-half, c.levels().get(1).effect(), 1e-12 * (1 + Math.abs(half)));
    assertEquals(-0.45, half, 0.15, "the data's G1 - G0 is 0.9");
    // with two levels the two contrasts are the same difference: equal standard errors, correlation −1
    double se = c.levels().get(0).standardError();
    assertTrue(se > 0);
    assertEquals(se, c.levels().get(1).standardError(), 1e-12 * se);
    assertEquals(2 * se, c.differenceStandardError(0, 1), 1e-9 * se);

    assertEquals(List.of(), trained(0).snapshot().contrasts());
  }

  private static char[] entityText(String... fields) {
    StringBuilder b = new StringBuilder();
    for (String f : fields) {
      b.append((char) (f.length() >>> 16)).append((char) f.length()).append(f);
    }
    return b.toString().toCharArray();
  }

  @Test
  void anEntitysValuesReadBackWithAnEmptyLastFieldAndAFieldOverSixtyFiveThousandChars() {
    assertEquals(List.of("QM-03", ""), Snapshot.entityValues(entityText("QM-03", "")));
    assertEquals(List.of(""), Snapshot.entityValues(entityText("")));
    String longField = "x".repeat(70_000);
    List<String> back = Snapshot.entityValues(entityText(longField, "tail"));
    assertEquals(2, back.size());
    assertEquals(70_000, back.get(0).length());
    assertEquals("tail", back.get(1));
  }

  @Test
  void statusIdsAreTheOnesTheOutputDocuments() {
    // docs/formats.md: the predictions' "status"
    assertEquals("scored", Prediction.Status.SCORED.id());
    assertEquals("no_target", Prediction.Status.FORECAST.id());
    assertEquals("warming_up", Prediction.Status.WARMING_UP.id());
  }
}
