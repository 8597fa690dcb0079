package dev.runnel.core.corpus;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.pipeline.PipelineStep;
import dev.runnel.core.pipeline.Prediction;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.io.ByteArrayOutputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.EnumSet;
import java.util.HashSet;
import java.util.List;
import java.util.Set;
import org.junit.jupiter.api.Test;

/**
 * The corpus of bad and awkward records ({@link InputCorpus}) through the pipeline step, as
 * {@code replay} runs it: each kind gets its expected outcome (its reject reason, or a prediction),
 * and the final state (featurizer, model, metrics, drift alarms) is bit for bit that of the run
 * over the same feed without the rejected records. Also checks the table in docs/operations.md
 * against the corpus.
 */
class InputCorpusTest {

  static final Path OPERATIONS = Path.of("..", "docs", "operations.md");
  static final String TABLE_START = "<!-- input-kinds table: made from stream-core/src/test/resources/corpus/input-kinds.jsonl -->";
  static final String TABLE_END = "<!-- end of input-kinds table -->";

  @Test void corpusHasFortyKindsOrMoreWithUniqueNamesAndKnownReasons() throws IOException {
    List<InputCorpus.Kind> kinds = InputCorpus.load(InputCorpus.FILE);
    assertTrue(kinds.size() >= 40, kinds.size() + " kinds");
    Set<String> names = new HashSet<>();
    Set<RejectReason> seen = EnumSet.noneOf(RejectReason.class);
    for (InputCorpus.Kind k : kinds) {
      assertTrue(names.add(k.kind()), "kind " + k.kind() + " twice");
      assertTrue(InputCorpus.FEEDS.contains(k.feed()), k.kind() + ": feed " + k.feed());
      if (!k.expected().equals("accepted")) seen.add(reason(k.expected()));
    }
    // every reason that input data can cause appears (model_refused comes from the model, not from a
    // record's form; processing_failed from a defect in the code, tested with planted throws)
    Set<RejectReason> all = EnumSet.allOf(RejectReason.class);
    all.remove(RejectReason.MODEL_REFUSED);
    all.remove(RejectReason.PROCESSING_FAILED);
    assertEquals(all, seen, "reasons the corpus covers");
  }

  static RejectReason reason(String id) {
    for (RejectReason r : RejectReason.values()) if (r.id().equals(id)) return r;
    throw new AssertionError("no reject reason " + id);
  }

  /** Runs lines through a fresh step; returns it, with the outcome of each line in {@code outcomes}. */
  static PipelineStep run(PipelineConfig cfg, List<byte[]> lines, List<String> outcomes) {
    PipelineStep step = new PipelineStep(cfg);
    String[] last = new String[1];
    PipelineStep.Sink sink = new PipelineStep.Sink() {
      @Override public void prediction(Prediction p, EventRecord r) { last[0] = "accepted"; }
      @Override public void reject(RejectReason reason, String detail) { last[0] = reason.id() + ": " + detail; }
      @Override public void snapshotDue() { step.snapshot(); }
    };
    long offset = 0;
    for (byte[] b : lines) {
      last[0] = null;
      step.process(b, 0, b.length, 0L, 0, offset++, sink);
      if (outcomes != null) outcomes.add(last[0]);
    }
    return step;
  }

  static byte[] stateBytes(PipelineStep step) throws IOException {
    ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    DataOutputStream out = new DataOutputStream(bytes);
    step.featurizer().writeTo(out);
    step.model().writeTo(out);
    step.metrics().writeTo(out);
    step.drift().writeTo(out);
    out.flush();
    return bytes.toByteArray();
  }

  @Test void everyKindGetsItsOutcomeAndTheModelEqualsTheCleanRunsBitForBit() throws IOException {
    List<InputCorpus.Kind> all = InputCorpus.load(InputCorpus.FILE);
    int checked = 0;
    for (String feedName : InputCorpus.FEEDS) {
      PipelineConfig cfg = ConfigLoader.parse(InputCorpus.configYaml(feedName), "demo (" + feedName + ")");
      InputCorpus.Feed feed = InputCorpus.feed(feedName);
      List<InputCorpus.Kind> kinds = InputCorpus.ofFeed(all, feedName);
      InputCorpus.Mixed mixed = InputCorpus.mix(feed, kinds);
      List<String> outcomes = new ArrayList<>();
      PipelineStep dirty = run(cfg, mixed.lines(), outcomes);
      int expectedRejects = 0;
      for (int i = 0; i < outcomes.size(); i++) {
        InputCorpus.Kind k = mixed.kindAt().get(i);
        if (k == null) continue;
        String got = outcomes.get(i);
        String gotId = got.startsWith("accepted") ? "accepted" : got.substring(0, got.indexOf(':'));
        assertEquals(k.expected(), gotId, feedName + " kind " + k.kind() + ": " + got + "\n  record: "
            + new String(mixed.lines().get(i), 0, Math.min(200, mixed.lines().get(i).length), StandardCharsets.UTF_8));
        if (!k.expected().equals("accepted")) expectedRejects++;
        checked++;
      }
      List<String> cleanOutcomes = new ArrayList<>();
      PipelineStep clean = run(cfg, mixed.withoutRejected(), cleanOutcomes);
      assertTrue(clean.trained() > 1700 && clean.forecasts() > 3000, feedName + ": the clean feed trained on " + clean.trained() + " records, scored " + clean.forecasts());
      assertEquals(clean.rejected() + expectedRejects, dirty.rejected(), feedName + ": the corpus's rejects and the feed's own");
      assertEquals(clean.trained(), dirty.trained(), feedName);
      assertEquals(clean.forecasts(), dirty.forecasts(), feedName);
      assertArrayEquals(stateBytes(clean), stateBytes(dirty), feedName + ": the state equals the clean run's, bit for bit");
      // and the comparison can tell: the accepted kinds (with targets) moved the state away from the bare feed's
      PipelineStep bare = run(cfg, feed.lines(), null);
      assertTrue(!java.util.Arrays.equals(stateBytes(bare), stateBytes(clean)), feedName + ": the accepted kinds changed the state");
    }
    assertEquals(all.size(), checked, "every kind was run");
  }

  /** The table of docs/operations.md, as the corpus makes it. */
  static String table(List<InputCorpus.Kind> kinds) {
    StringBuilder b = new StringBuilder();
    b.append(TABLE_START).append('\n');
    b.append("| input kind | what it is | feed | outcome | reason |\n|---|---|---|---|---|\n");
    for (InputCorpus.Kind k : kinds) {
      boolean ok = k.expected().equals("accepted");
      b.append("| `").append(k.kind()).append("` | ").append(k.note().replace("|", "\\|")).append(" | ")
          .append(k.feed()).append(" | ").append(ok ? "accepted" : "rejected").append(" | ")
          .append(ok ? "—" : "`" + k.expected() + "`").append(" |\n");
    }
    b.append(TABLE_END);
    return b.toString();
  }

  /**
   * Every corpus kind is a row of docs/operations.md's table with the same outcome and reason.
   * {@code -Drunnel.writeDocs=true} rewrites the table from the corpus.
   */
  @Test void operationsDocTableMatchesTheCorpus() throws IOException {
    String doc = Files.readString(OPERATIONS);
    String want = table(InputCorpus.load(InputCorpus.FILE));
    int a = doc.indexOf(TABLE_START);
    int z = doc.indexOf(TABLE_END);
    if (Boolean.getBoolean("runnel.writeDocs") && a >= 0 && z > a) {
      doc = doc.substring(0, a) + want + doc.substring(z + TABLE_END.length());
      Files.writeString(OPERATIONS, doc);
      a = doc.indexOf(TABLE_START);
      z = doc.indexOf(TABLE_END);
    }
    assertTrue(a >= 0 && z > a, "docs/operations.md has the input-kinds table between its markers");
    assertEquals(want, doc.substring(a, z + TABLE_END.length()),
        "docs/operations.md's table differs from the corpus; run mvn -o -q -pl stream-core test -Dtest=InputCorpusTest -Drunnel.writeDocs=true");
  }
}
