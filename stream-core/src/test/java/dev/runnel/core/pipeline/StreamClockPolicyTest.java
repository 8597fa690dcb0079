package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigLoader;
import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RejectReason;
import java.io.ByteArrayOutputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.OffsetDateTime;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;

/**
 * The event-time policy through the whole pipeline, on the demo sample (invented data) with the
 * demo configuration: a lone record dated years ahead is rejected as {@code time_jump} and the
 * model is bit-identical to the run without it; a wrong first record is overruled; a real outage
 * is accepted after {@code confirm_records} records; forgetting after a very long gap is floored.
 */
public class StreamClockPolicyTest {

  static final Path DEMO_CONFIG = Path.of("..", "demo-data", "src", "main", "resources", "dev", "runnel", "demo", "quillmarsh.yaml");
  static final Path DEMO_SAMPLE = Path.of("..", "demo-data", "samples", "quillmarsh-small.jsonl");
  static final Pattern TIME = Pattern.compile("\"issued_at\":\"([^\"]+)\"");   // the demo's event time
  static final Pattern TARGET = Pattern.compile("\"observed_at\":\"([^\"]+)\"");   // the demo's target time

  /**
   * The demo configuration without the memory of learned actuals: these tests are about the clock,
   * and they feed copies of the sample's actuals at other times, which the memory would reject as
   * repeats (LateRepeatedCorrectedActualsTest covers the memory).
   */
  static PipelineConfig demoConfig() {
    return ConfigLoader.parse(readConfig(), "quillmarsh.yaml");
  }

  static List<String> demoLines() {
    try {
      return Files.readAllLines(DEMO_SAMPLE, StandardCharsets.UTF_8);
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /** The line with its event time (issued_at) moved by {@code shift}, or set to the year {@code year} (if > 0). */
  static String redate(String line, java.time.Duration shift, int year) {
    Matcher m = TIME.matcher(line);
    if (!m.find()) return line;
    OffsetDateTime t = OffsetDateTime.parse(m.group(1));
    OffsetDateTime u = year > 0 ? t.withYear(year) : t.plus(shift);
    return line.substring(0, m.start(1)) + u + line.substring(m.end(1));
  }

  /** The line with both its event time and its target time moved by {@code shift}. */
  static String redateBoth(String line, java.time.Duration shift) {
    // a feed that resumes after an outage reports later hours too: the target time moves with it
    String out = redate(line, shift, 0);
    Matcher o = TARGET.matcher(out);
    if (!o.find()) return out;
    return out.substring(0, o.start(1)) + OffsetDateTime.parse(o.group(1)).plus(shift) + out.substring(o.end(1));
  }

  /** Everything one run produced. Offsets are the caller's (an inserted record gets a negative one). */
  static class Run implements PipelineStep.Sink {
    final PipelineStep step;
    final OutputJson json;
    final List<String> predictions = new ArrayList<>();
    final List<String> snapshots = new ArrayList<>();
    final List<String> rejects = new ArrayList<>();
    final List<Long> jumpRejectOffsets = new ArrayList<>();
    long offset;

    Run(PipelineConfig cfg) {
      step = new PipelineStep(cfg);
      json = new OutputJson(cfg.name(), cfg.model().intervalLevel());
    }

    Run feed(List<String> lines, List<Long> offsets) {
      for (int i = 0; i < lines.size(); i++) {
        byte[] b = lines.get(i).getBytes(StandardCharsets.UTF_8);
        offset = offsets.get(i);
        step.process(b, 0, b.length, 0L, 0, offset, this);
      }
      return this;
    }

    @Override public void prediction(Prediction p, EventRecord r) {
      predictions.add(new String(json.prediction(p, r), StandardCharsets.UTF_8));
    }

    @Override public void reject(RejectReason reason, String detail) {
      rejects.add(reason.id() + "@" + offset + ": " + detail);
      if (reason == RejectReason.TIME_JUMP) jumpRejectOffsets.add(offset);
    }

    @Override public void snapshotDue() {
      snapshots.add(new String(json.snapshot(step.snapshot(), 0), StandardCharsets.UTF_8));
    }

    /** The model's and the featurizer's whole state as bytes. */
    byte[] learnedState() {
      try {
        ByteArrayOutputStream b = new ByteArrayOutputStream();
        DataOutputStream out = new DataOutputStream(b);
        step.model().writeTo(out);
        step.featurizer().writeTo(out);
        step.metrics().writeTo(out);
        step.drift().writeTo(out);
        out.flush();
        return b.toByteArray();
      } catch (IOException e) {
        throw new UncheckedIOException(e);
      }
    }

    /** The snapshots without the counts that a rejected record changes. */
    List<String> snapshotsWithoutCounts() {
      List<String> out = new ArrayList<>();
      for (String s : snapshots) out.add(s.replaceAll("\"(records|rejected)\":\\d+,", ""));
      return out;
    }
  }

  /** Whether the line is a training record (it carries the target). */
  static boolean training(String line) {
    return line.contains("\"kind\":\"actual\"") && line.contains("\"sessions\":") && TIME.matcher(line).find();
  }

  static List<Long> indices(int n) {
    List<Long> o = new ArrayList<>(n);
    for (long i = 0; i < n; i++) o.add(i);
    return o;
  }

  @ParameterizedTest
  @ValueSource(ints = {2030, 2039, 2199})
  void loneRecordDatedYearsAhead_isATimeJumpRejectAndTheModelIsBitIdentical(int year) {
    PipelineConfig cfg = demoConfig();
    List<String> lines = demoLines();
    Run clean = new Run(cfg).feed(lines, indices(lines.size()));
    int at = 2000;
    while (!training(lines.get(at))) at++;   // an actual: a forecast request does not move the clock
    List<String> dirty = new ArrayList<>(lines);
    List<Long> offsets = indices(lines.size());
    dirty.add(at, redate(lines.get(at), null, year));
    offsets.add(at, -1L);
    Run got = new Run(cfg).feed(dirty, offsets);

    assertEquals(List.of(-1L), got.jumpRejectOffsets, String.join("\n", got.rejects));
    assertEquals(clean.rejects.size() + 1, got.rejects.size());
    assertEquals(clean.predictions, got.predictions, "every prediction, byte for byte");
    assertEquals(clean.snapshotsWithoutCounts(), got.snapshotsWithoutCounts());
    assertArrayEquals(clean.learnedState(), got.learnedState(), "model, featurizer, metrics and drift state");
    assertEquals(clean.step.featurizer().layoutVersion(), got.step.featurizer().layoutVersion());
    assertEquals(1, got.step.rejected(RejectReason.TIME_JUMP));
  }

  @ParameterizedTest
  @ValueSource(ints = {1970, 2039})
  void firstRecordDatedFarOff_isOverruledByTheRecordsAfterIt(int year) {
    PipelineConfig cfg = demoConfig();
    List<String> lines = demoLines();
    Run clean = new Run(cfg).feed(lines, indices(lines.size()));
    List<String> dirty = new ArrayList<>(lines);
    List<Long> offsets = indices(lines.size());
    int firstActual = 0;
    while (!training(lines.get(firstActual))) firstActual++;   // the sample starts with forecast requests, which do not set the clock
    dirty.add(0, redate(lines.get(firstActual), null, year));
    offsets.add(0, -1L);
    Run got = new Run(cfg).feed(dirty, offsets);

    int k = cfg.input().clock().confirmRecords();
    List<Long> heldBack = new ArrayList<>();
    for (int i = 0; heldBack.size() < k - 1; i++) if (training(lines.get(i))) heldBack.add((long) i);
    assertEquals(heldBack, got.jumpRejectOffsets.subList(0, Math.min(k - 1, got.jumpRejectOffsets.size())),
        "the records that disagree with the first are held back until " + k + " agree");
    assertEquals(k - 1, got.jumpRejectOffsets.size(), String.join("\n", got.rejects));
    assertEquals(clean.step.clock().nowMillis(), got.step.clock().nowMillis());
    assertEquals(1, got.step.clock().jumps());
    // not wiped, not thrashed: the layout moved about as often as in the clean run
    long cleanLayout = clean.step.featurizer().layoutVersion();
    long gotLayout = got.step.featurizer().layoutVersion();
    assertTrue(Math.abs(gotLayout - cleanLayout) <= 4, "layout versions " + cleanLayout + " and " + gotLayout);
    assertEquals(clean.step.featurizer().vocabulary("hub").size(), got.step.featurizer().vocabulary("hub").size());
    // the same periods, plus (1970) the one period the wrong first record opened, closed by the jump
    int extra = got.snapshots.size() - clean.snapshots.size();
    assertTrue(extra == (year == 1970 ? 1 : 0), extra + " more snapshots");
    double cleanMae = clean.step.metrics().recentMae();
    double gotMae = got.step.metrics().recentMae();
    assertTrue(Math.abs(gotMae - cleanMae) < 0.02 * cleanMae, "recent MAE " + gotMae + " against " + cleanMae);
  }

  @Test
  void weekLongOutage_isAcceptedAsRealAfterConfirmRecords() {
    PipelineConfig cfg = demoConfig();
    List<String> lines = demoLines();
    int at = 2500;
    List<String> shifted = new ArrayList<>(lines);
    for (int i = at; i < lines.size(); i++) shifted.set(i, redateBoth(lines.get(i), java.time.Duration.ofDays(7)));
    Run got = new Run(cfg).feed(shifted, indices(lines.size()));
    int k = cfg.input().clock().confirmRecords();
    List<Long> expected = new ArrayList<>();
    for (int i = at; expected.size() < k - 1; i++) if (training(lines.get(i))) expected.add((long) i);
    assertEquals(expected, got.jumpRejectOffsets, String.join("\n", got.rejects));
    assertEquals(1, got.step.clock().jumps());
    long last = OffsetDateTime.parse(TIME.matcher(shifted.get(shifted.size() - 1)).results().findFirst().get().group(1)).toInstant().toEpochMilli();
    assertEquals(last, got.step.clock().nowMillis());
    assertTrue(got.step.model().noiseSd() > 0 && Double.isFinite(got.step.metrics().recentMae()));
  }

  @Test
  void yearLongRealGapWithAShortHalfLife_fallsBackTowardsThePriorAndGoesOn() {
    // before the floor, 2^(-8760) is 0 and the model refused it with an exception
    PipelineConfig cfg = ConfigLoader.parse(readConfig().replace("half_life: P4D", "half_life: PT1H"), "quillmarsh.yaml");
    List<String> lines = demoLines();
    int at = 2500;
    List<String> shifted = new ArrayList<>(lines);
    for (int i = at; i < lines.size(); i++) shifted.set(i, redate(lines.get(i), java.time.Duration.ofDays(365), 0));
    double[] nEffAtJump = {Double.NaN};
    Run got = new Run(cfg) {
      @Override public void prediction(Prediction p, EventRecord r) {
        super.prediction(p, r);
        if (step.clock().jumps() == 1 && Double.isNaN(nEffAtJump[0])) nEffAtJump[0] = step.model().effectiveSampleSize();
      }
    }.feed(shifted, indices(lines.size()));
    // 8,760 half-lives: the model restarted from its prior, its effective sample size is this one record's
    assertEquals(1.0, nEffAtJump[0], "effective sample size after the jump");
    assertEquals(1, got.step.modelRestarts());
    assertEquals(1, got.step.clock().jumps());
    assertEquals(0, got.step.rejected(RejectReason.MODEL_REFUSED));
    assertTrue(Double.isFinite(got.step.metrics().recentMae()));
  }

  @Test
  void lateRecordIsScoredAndLearnedWithoutMovingTheClock() {
    PipelineConfig cfg = demoConfig();
    List<String> lines = new ArrayList<>(demoLines().subList(0, 1200));
    List<Long> offsets = indices(lines.size());
    int at = 1000;
    while (!training(lines.get(at))) at++;
    lines.add(at, redate(lines.get(at), java.time.Duration.ofDays(-30), 0));
    offsets.add(at, -1L);
    Run got = new Run(cfg).feed(lines, offsets);
    assertEquals(0, got.step.rejected(RejectReason.TIME_JUMP), String.join("\n", got.rejects));
    Run clean = new Run(cfg).feed(demoLines().subList(0, 1200), indices(1200));
    assertEquals(clean.step.clock().nowMillis(), got.step.clock().nowMillis());
    assertEquals(clean.step.trained() + 1, got.step.trained());
  }

  @Test
  void missingEventTimeIsOneRejectNamingTheField() {
    Run got = new Run(demoConfig()).feed(List.of(demoLines().get(0).replaceAll("\"issued_at\":\"[^\"]+\",", "")), List.of(0L));
    assertEquals(List.of("missing_field@0: field issued_at (the event time): missing"), got.rejects);
  }

  /**
   * Seeded fuzz: lone records dated from one millisecond past {@code max_ahead} to 170 years
   * ahead of the clock, dropped into the demo feed at random places (with an ordinary training
   * record between any two, else they could be the start of a real jump); every one is a {@code time_jump} reject and the model is
   * bit-identical to the clean run's.
   */
  @Test
  void fuzz_loneRecordsJustPastMaxAheadOrFarBeyond_changeNothing() {
    PipelineConfig cfg = demoConfig();
    long ahead = cfg.input().clock().maxAheadMillis();
    List<String> lines = demoLines().subList(0, 2400);
    Run clean = new Run(cfg).feed(lines, indices(lines.size()));
    Random rnd = new Random(77);
    for (int trial = 0; trial < 4; trial++) {
      List<String> dirty = new ArrayList<>();
      List<Long> offsets = new ArrayList<>();
      int inserted = 0;
      boolean lastWasOutlier = true;
      String prev = null;
      long prevMillis = 0;
      long clockMillis = Long.MIN_VALUE;
      for (int i = 0; i < lines.size(); i++) {
        if (!lastWasOutlier && prev != null && rnd.nextInt(40) == 0) {
          // the clock is the largest training time so far (the sample has late actuals)
          long extra = switch (rnd.nextInt(3)) {
            case 0 -> 1L;
            case 1 -> 1L + rnd.nextInt(1000);
            default -> (long) (rnd.nextDouble() * 170 * 365.25 * 86_400_000L);
          };
          dirty.add(redate(prev, java.time.Duration.ofMillis(clockMillis - prevMillis + ahead + extra), 0));
          offsets.add(-1L - inserted);
          inserted++;
          lastWasOutlier = true;
        }
        dirty.add(lines.get(i));
        offsets.add((long) i);
        if (training(lines.get(i)) && !lines.get(i).contains("NaN")) {
          prev = lines.get(i);
          prevMillis = millis(prev);
          clockMillis = Math.max(clockMillis, prevMillis);
          lastWasOutlier = false; // an ordinary training record in between: no run of two
        }
      }
      Run got = new Run(cfg).feed(dirty, offsets);
      assertEquals(inserted, got.jumpRejectOffsets.size(), "trial " + trial);
      assertEquals(clean.predictions, got.predictions, "trial " + trial);
      assertArrayEquals(clean.learnedState(), got.learnedState(), "trial " + trial);
      assertTrue(inserted > 20, "the trial inserted " + inserted);
    }
  }

  static long millis(String line) {
    Matcher m = TIME.matcher(line);
    m.find();
    return OffsetDateTime.parse(m.group(1)).toInstant().toEpochMilli();
  }

  static String readConfig() {
    try {
      return withoutLearnedMemory(Files.readString(DEMO_CONFIG));
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  /** The demo configuration's YAML with the memory of learned actuals off (and so no corrections: replace). */
  public static String withoutLearnedMemory(String yaml) {
    String memoryOff = yaml.replaceAll("(?m)^    corrections: replace.*$", "    max_learned_actuals: 0");
    if (memoryOff.equals(yaml)) throw new IllegalStateException("the demo configuration no longer says corrections: replace");
    return memoryOff;
  }
}
