package dev.runnel.core.feature;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.ConfigException;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RecordSchema;
import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.lang.management.ManagementFactory;
import java.time.Instant;
import java.time.ZoneId;
import java.time.ZonedDateTime;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The history kinds (lag, smoothed): values against scanning references over every actual
 * remembered, the missing indicator and its imputation, the bounds on entities (cap and expiry),
 * no allocation once warm, a restored checkpoint that continues bit for bit, and re-basing of a
 * history column that leaves predictions as they were.
 */
class HistoryFeatureTest {

  static final String YAML = """
      name: history
      input:
        fields:
          hub: text
          sessions: number
          load: number
          issued_at: time
          hour_start: time
        event_time: {field: issued_at, format: iso8601}
        time_zone: Europe/Amsterdam
        forecast: {entity_fields: [hub], target_time_field: hour_start}
      target: sessions
      features:
        - {kind: lag, name: day, offset: P1D, tolerance: TOL, max_entities: CAP, expire_after: P10D}
        - {kind: lag, name: load_week, field: load, offset: P7D}
        - {kind: smoothed, name: mean, half_life: P2D, max_entities: CAP}
        - {kind: smoothed, name: hourly, half_life: P3D, season: hour_of_day}
        - {kind: smoothed, name: weekly, half_life: P14D, season: hour_of_week}
      model:
        prior_variance: 10
      """;

  static final long H = 3_600_000L;
  static final long T0 = Instant.parse("2026-03-20T00:00:00Z").toEpochMilli(); // spans the switch to summer time (29 March)

  /** The test configuration with the day lag's tolerance ({@code PT0S}: the key left out, the offset's cell only) and cap. */
  static Featurizer featurizer(String tolerance, int cap) {
    String yaml = tolerance.equals("PT0S") ? YAML.replace(", tolerance: TOL", "") : YAML.replace("TOL", tolerance);
    return new Featurizer(TestConfigs.parse(yaml.replace("CAP", Integer.toString(cap))));
  }

  /** One remembered actual, as the references keep it. */
  record Actual(String hub, long target, long known, double sessions, double load) { }

  /** The hub, target time, issue time and (for an actual) the values of one record. */
  static void fill(EventRecord r, String hub, long target, long issue, Double sessions, Double load) {
    RecordSchema s = r.schema();
    r.clear();
    r.setText(s.slot("hub"), hub);
    r.setTimeMillis(s.slot("hour_start"), target);
    r.setTimeMillis(s.slot("issued_at"), issue);
    r.setEventTimeMillis(issue);
    if (sessions != null) r.setNumber(s.slot("sessions"), sessions);
    if (load != null) r.setNumber(s.slot("load"), load);
  }

  static HistoryFeature history(Featurizer f, String name) { return (HistoryFeature) f.feature(name); }

  /**
   * Lag reference by scanning every actual: the latest cell from (T − offset)'s back to
   * {@code lookBack} cells earlier that holds an actual known by s; within a cell, the latest target
   * time, and for equal target times the one processed last (the documented rule, docs/features.md).
   */
  static Double lagReference(List<Actual> all, String hub, long target, long issue, long offset, long grid, int lookBack,
                             boolean load) {
    long wanted = Math.floorDiv(target - offset, grid);
    for (int k = 0; k <= lookBack; k++) {
      Actual best = null;
      for (Actual a : all) {
        if (!a.hub.equals(hub) || Math.floorDiv(a.target, grid) != wanted - k) continue;
        if (best == null || a.target >= best.target) best = a; // the latest processed wins a tie
      }
      // the cell keeps one value: the latest in it; known by s or not at all
      if (best != null && best.known <= issue) return load ? best.load : best.sessions;
    }
    return null;
  }

  /**
   * Smoothed reference, straight from the definition of the exponentially weighted mean (common
   * practice): Σ w_i y_i / Σ w_i with w_i = 2^(−(τ_max − τ_i) / half_life) over the entity's actuals in
   * the record's season slot; null when there are none.
   */
  static Double smoothedReference(List<Actual> all, String hub, long target, long halfLife, int season) {
    int slot = slot(target, season);
    long latest = Long.MIN_VALUE;
    for (Actual a : all) if (a.hub.equals(hub) && slot(a.target, season) == slot) latest = Math.max(latest, a.target);
    if (latest == Long.MIN_VALUE) return null;
    double sw = 0;
    double swy = 0;
    for (Actual a : all) {
      if (!a.hub.equals(hub) || slot(a.target, season) != slot) continue;
      double w = Math.pow(2.0, -(double) (latest - a.target) / halfLife);
      sw += w;
      swy += w * a.sessions;
    }
    return swy / sw;
  }

  /** The season slot by java.time (reference for the local hour and ISO day of week). */
  static int slot(long t, int season) {
    ZonedDateTime z = Instant.ofEpochMilli(t).atZone(ZoneId.of("Europe/Amsterdam"));
    if (season == 1) return 0;
    if (season == 24) return z.getHour();
    return (z.getDayOfWeek().getValue() - 1) * 24 + z.getHour();
  }

  static Double entityMean(List<Actual> all, String hub) {
    double s = 0;
    int n = 0;
    for (Actual a : all) if (a.hub.equals(hub)) { s += a.sessions; n++; }
    return n == 0 ? null : s / n;
  }

  @Test void valuesAndMissing_matchScanningReferences_overARandomStream() {
    for (String tol : new String[] {"PT0S", "PT3H"}) {
      Featurizer f = featurizer(tol, 1000);
      int lookBack = tol.equals("PT0S") ? 0 : 3;
      RecordSchema s = f.config().input().schema();
      EventRecord r = new EventRecord(s);
      double[] row = new double[f.maxDimension()];
      Random rnd = new Random(17L);
      List<Actual> all = new ArrayList<>();
      String[] hubs = {"QM-01", "QM-02", "QM-03", "QM-04"};
      int present = 0;
      int missing = 0;
      long hour = T0;
      for (int n = 0; n < 4_000; n++) {
        if (rnd.nextInt(4) == 0) hour += H;
        String hub = hubs[rnd.nextInt(hubs.length)];
        boolean actual = rnd.nextInt(3) > 0;
        long target;
        long issue;
        if (actual) {
          target = hour - (rnd.nextInt(5) == 0 ? H : 0) + rnd.nextInt(2) * 30 * 60_000L; // late by an hour now and then, off the grid at times
          issue = hour + H + rnd.nextInt(40) * 60_000L - (rnd.nextInt(8) == 0 ? 4 * H : 0); // a few known early
        } else {
          target = hour + H * rnd.nextInt(40);
          issue = hour + rnd.nextInt(50) * 60_000L - (rnd.nextInt(6) == 0 ? 30 * H : 0); // some issued before known values
        }
        if (rnd.nextInt(300) == 0) continue;
        Double y = actual ? (double) rnd.nextInt(30) : null;
        Double load = actual && rnd.nextInt(4) > 0 ? rnd.nextDouble() : null;
        fill(r, hub, target, issue, y, load);
        assertNull(f.check(r), f.lastDetail());
        if (actual) f.learnAndEncode(r, target, issue, hour + H, row);
        else f.encode(r, target, issue, row);
        // the row was made from the actuals processed before this record
        Double day = lagReference(all, hub, target, issue, 24 * H, H, lookBack, false);
        HistoryFeature d = history(f, "day");
        assertEquals(day == null, d.missing, "record " + n);
        if (day != null) {
          assertEquals(day, d.value, 0.0, "record " + n);
          present++;
        } else {
          missing++;
          Double m = entityMean(all, hub);
          double overall = all.stream().mapToDouble(Actual::sessions).average().orElse(0.0);
          assertEquals(m != null ? m : overall, d.value, 1e-12, "imputed, record " + n);
        }
        assertEquals(1.0 * (d.missing ? 1 : 0), row[d.missingColumn.index], "record " + n);
        List<Actual> withLoad = all.stream().filter(a -> !Double.isNaN(a.load)).toList();
        Double lw = lagReference(withLoad, hub, target, issue, 7 * 24 * H, H, 0, true);
        assertEquals(lw == null, history(f, "load_week").missing, "record " + n);
        if (lw != null) assertEquals(lw, history(f, "load_week").value, 0.0);
        String[] names = {"mean", "hourly", "weekly"};
        long[] halfLives = {48 * H, 72 * H, 14 * 24 * H};
        int[] seasons = {1, 24, 168};
        for (int k = 0; k < 3; k++) {
          Double e = smoothedReference(all, hub, target, halfLives[k], seasons[k]);
          HistoryFeature h = history(f, names[k]);
          assertEquals(e == null, h.missing, names[k] + ", record " + n);
          if (e != null) assertEquals(e, h.value, 1e-12 * Math.max(1, Math.abs(e)), names[k] + ", record " + n);
        }
        if (actual) all.add(new Actual(hub, target, issue, y, load == null ? Double.NaN : load));
      }
      assertTrue(present > 600 && missing > 200, "present " + present + ", missing " + missing);
    }
  }

  @Test void aValueKnownOnlyAfterTheIssueTime_isMissing_andTheRecordsOwnTargetIsNeverItsHistory() {
    Featurizer f = featurizer("PT0S", 10);
    EventRecord r = new EventRecord(f.config().input().schema());
    double[] row = new double[f.maxDimension()];
    long day0 = T0 + 10 * H;
    // the actual of day0 10:00 becomes known at 11:05
    fill(r, "A", day0, day0 + H + 5 * 60_000L, 7.0, null);
    f.learnAndEncode(r, day0, day0 + H + 5 * 60_000L, day0 + H, row);
    // a forecast of the next day's 10:00 issued at 11:00, before the actual was known (processed late)
    fill(r, "A", day0 + 24 * H, day0 + H, null, null);
    f.encode(r, day0 + 24 * H, day0 + H, row);
    assertTrue(history(f, "day").missing);
    // issued at 11:05 it is known
    f.encode(r, day0 + 24 * H, day0 + H + 5 * 60_000L, row);
    assertFalse(history(f, "day").missing);
    assertEquals(7.0, history(f, "day").value);
    // a second actual of A: its own row's smoothed mean is that of the first actual only
    fill(r, "A", day0 + H, day0 + 2 * H, 100.0, null);
    f.learnAndEncode(r, day0 + H, day0 + 2 * H, day0 + 2 * H, row);
    assertEquals(7.0, history(f, "mean").value);
    f.encode(r, day0 + H, day0 + 2 * H, row);
    assertTrue(history(f, "mean").value > 7.0, "remembered after its row");
  }

  @Test void entities_areCapped_andExpireByTheClock() {
    Featurizer f = featurizer("PT0S", 3);
    HistoryFeature day = history(f, "day");
    HistoryFeature mean = history(f, "mean");
    EventRecord r = new EventRecord(f.config().input().schema());
    double[] row = new double[f.maxDimension()];
    long t = T0;
    for (String hub : new String[] {"A", "B", "C", "A"}) {
      fill(r, hub, t, t, 5.0, null);
      f.learnAndEncode(r, t, t, t, row);
      t += H;
    }
    assertEquals(3, day.entityCount());
    // D needs room: B, the least recently updated, is dropped; A (updated again) stays
    fill(r, "D", t, t, 5.0, null);
    f.learnAndEncode(r, t, t, t, row);
    assertEquals(3, day.entityCount());
    assertEquals(1, day.entities.droppedFull());
    fill(r, "B", t + 23 * H, t, null, null);
    f.encode(r, t + 23 * H, t, row);
    assertTrue(mean.missing, "B was dropped");
    fill(r, "A", t + 23 * H, t, null, null);
    f.encode(r, t + 23 * H, t, row);
    assertFalse(mean.missing, "A stays");
    // eleven days later only the entity with an actual then is left (expire_after P10D for day; P30D for mean)
    long later = t + 11 * 24 * H;
    fill(r, "E", later, later, 1.0, null);
    f.learnAndEncode(r, later, later, later, row);
    assertEquals(1, day.entityCount());
    assertEquals(3, day.entities.droppedExpired());
    assertEquals(3, mean.entityCount(), "P30D has not passed for the smoothed feature");
  }

  @Test void onceWarm_trainingAndScoringAllocateNothing() {
    Featurizer f = featurizer("PT2H", 100);
    EventRecord r = new EventRecord(f.config().input().schema());
    double[] row = new double[f.maxDimension()];
    String[] hubs = new String[20];
    for (int i = 0; i < hubs.length; i++) hubs[i] = "hub-" + i;
    long t = T0;
    com.sun.management.ThreadMXBean bean = (com.sun.management.ThreadMXBean) ManagementFactory.getThreadMXBean();
    long before = 0;
    for (int n = 0; n < 60_000; n++) {
      if (n == 40_000) before = bean.getCurrentThreadAllocatedBytes();
      if (n % 20 == 0) t += H;
      r.setText(0, hubs[n % 20]); // fill without making Strings: the hub texts are made once above
      RecordSchema s = r.schema();
      r.setTimeMillis(s.slot("hour_start"), t);
      r.setNumber(s.slot("sessions"), n % 13);
      r.setNumber(s.slot("load"), n % 7);
      f.learnAndEncode(r, t, t + H, t + H, row);
      f.encode(r, t + 24 * H, t + H, row);
    }
    long allocated = bean.getCurrentThreadAllocatedBytes() - before;
    assertTrue(allocated < 4_096, "bytes allocated by 20000 warm trainings and scorings: " + allocated);
  }

  static byte[] bytes(Featurizer f) throws IOException {
    ByteArrayOutputStream b = new ByteArrayOutputStream();
    f.writeTo(new DataOutputStream(b));
    return b.toByteArray();
  }

  @Test void aRestoredCheckpoint_continuesBitForBit() throws IOException {
    Featurizer a = featurizer("PT2H", 5);
    Featurizer b = null;
    EventRecord r = new EventRecord(a.config().input().schema());
    double[] rowA = new double[a.maxDimension()];
    double[] rowB = new double[a.maxDimension()];
    Random rnd = new Random(3L);
    long t = T0;
    for (int n = 0; n < 4_000; n++) {
      if (n == 1_500) {
        byte[] cp = bytes(a);
        b = featurizer("PT2H", 5);
        b.readFrom(new DataInputStream(new ByteArrayInputStream(cp)));
        assertArrayEquals(cp, bytes(b), "the restored state writes the same bytes");
      }
      if (rnd.nextInt(3) == 0) t += H;
      String hub = "h" + rnd.nextInt(8); // more hubs than the cap of 5: drops happen
      boolean actual = rnd.nextBoolean();
      fill(r, hub, t, t + H, actual ? (double) rnd.nextInt(20) : null, rnd.nextDouble());
      if (actual) {
        a.learnAndEncode(r, t, t + H, t + H, rowA);
        if (b != null) b.learnAndEncode(r, t, t + H, t + H, rowB);
      } else {
        a.encode(r, t + 24 * H, t, rowA);
        if (b != null) b.encode(r, t + 24 * H, t, rowB);
      }
      if (b != null) assertArrayEquals(rowA, rowB, "record " + n);
    }
    assertArrayEquals(bytes(a), bytes(b));
    assertTrue(history(a, "day").entities.droppedFull() > 100);
  }

  @Test void rebasingAHistoryColumn_leavesThePredictionUnchanged() {
    // Layout contract (LayoutListener javadoc): applying each columnRebased keeps w . z unchanged.
    // Reference: the probe's scaled part before the training step (as FeaturizerTest does for numeric columns).
    Featurizer f = featurizer("PT0S", 100);
    RecordSchema s = f.config().input().schema();
    Random w = new Random(5L);
    double[] init = new double[f.dimension()];
    for (int k = 0; k < init.length; k++) init[k] = w.nextGaussian();
    RecordingListener model = new RecordingListener(f.columnNames(), true, init);
    f.setListener(model);
    EventRecord r = new EventRecord(s);
    EventRecord probe = new EventRecord(s);
    double[] row = new double[f.maxDimension()];
    long t = T0;
    // the probe's entity P gets a week of history, then no more actuals: its values stay put
    for (int n = 0; n < 24 * 8; n++) {
      fill(r, "P", t, t, 10.0 + n % 24, 1.0 + n % 5);
      f.learnAndEncode(r, t, t, t, row);
      t += H;
    }
    long probeTarget = t - 2 * H;
    int rebases = 0;
    Random rnd = new Random(9L);
    for (int n = 0; n < 1_500; n++) { // 214 hours: P stays within every expire_after (P10D the shortest)
      fill(probe, "P", probeTarget, t, null, null);
      f.encode(probe, probeTarget, t, row);
      assertFalse(history(f, "day").missing || history(f, "mean").missing || history(f, "load_week").missing);
      double before = scaledPart(f, model, row);
      int eventsBefore = model.events.size();
      fill(r, "Q" + rnd.nextInt(30), t, t, rnd.nextGaussian() * 50, rnd.nextGaussian() * 3);
      f.learnAndEncode(r, t, t, t, new double[f.maxDimension()]);
      for (int k = eventsBefore; k < model.events.size(); k++) if (model.events.get(k).startsWith("rebase")) rebases++;
      f.encode(probe, probeTarget, t, row);
      double after = scaledPart(f, model, row);
      assertEquals(before, after, 1e-12 * Math.max(1.0, Math.abs(before)), "record " + n);
      if (n % 7 == 0) t += H;
    }
    assertTrue(rebases > 1_500 * 4, "re-basings seen: " + rebases);
  }

  private static double scaledPart(Featurizer f, RecordingListener model, double[] row) {
    double p = model.weights.get(0) * row[0];
    for (Featurizer.ScalerSnapshot x : f.scalers()) p += model.weights.get(x.index()) * row[x.index()];
    return p;
  }

  /** A history state cut short or with any byte changed: refused with a message, or read back as written (as FeaturizerCheckpointTest). */
  @Test void aTamperedHistoryCheckpoint_isRefusedCleanly_orReadsBackConsistently() throws IOException {
    Featurizer a = featurizer("PT2H", 5);
    EventRecord r = new EventRecord(a.config().input().schema());
    double[] row = new double[a.maxDimension()];
    Random rnd = new Random(8L);
    long t = T0;
    for (int n = 0; n < 300; n++) {
      if (n % 3 == 0) t += H;
      fill(r, "h" + rnd.nextInt(7), t, t + H, (double) rnd.nextInt(20), rnd.nextDouble());
      a.learnAndEncode(r, t, t + H, t + H, row);
    }
    byte[] b = bytes(a);
    for (int len = 0; len < b.length; len += 7) {
      byte[] cut = java.util.Arrays.copyOf(b, len);
      assertThrows(java.io.EOFException.class, () -> read(cut), "cut at " + len);
    }
    int refused = 0;
    int accepted = 0;
    for (int i = 0; i < b.length; i++) {
      for (int variant = i % 2; variant < 2; variant += 2) { // 0xFF at even places, the lowest bit flipped at odd ones
        byte[] c = b.clone();
        c[i] = variant == 0 ? (byte) 0xFF : (byte) (b[i] ^ 0x01);
        if (c[i] == b[i]) continue;
        Featurizer f;
        try {
          f = read(c);
        } catch (IOException | IllegalArgumentException e) {
          assertTrue(e.getMessage() != null && !e.getMessage().isEmpty(), "byte " + i + ": an error without a message");
          refused++;
          continue;
        } catch (RuntimeException e) {
          throw new AssertionError("byte " + i + " variant " + variant + ": " + e, e);
        }
        accepted++;
        byte[] back = bytes(f);
        assertArrayEquals(back, bytes(read(back)), "byte " + i + ": an accepted state reads back as written");
      }
    }
    assertTrue(refused > 300 && accepted > 300, refused + " refused, " + accepted + " accepted");
  }

  private static final dev.runnel.core.config.PipelineConfig TAMPER_CONFIG = featurizer("PT2H", 5).config();

  private static Featurizer read(byte[] b) throws IOException {
    Featurizer f = new Featurizer(TAMPER_CONFIG);
    f.readFrom(new DataInputStream(new ByteArrayInputStream(b)));
    return f;
  }

  @Test void aHistoryFeatureWithoutAnEntity_isRefused_namingTheKey() {
    String yaml = """
        name: h
        input:
          fields: {hub: text, sessions: number}
        target: sessions
        features:
          - {kind: lag, offset: P1D}
        """;
    ConfigException e = assertThrows(ConfigException.class, () -> TestConfigs.parse(yaml));
    assertTrue(e.getMessage().startsWith("features[0].kind: lag reads each entity's own history, and no entity is declared;"
        + " add input.forecast with entity_fields"), e.getMessage());
    String badOffset = YAML.replace("offset: P1D, tolerance: TOL", "offset: PT90M").replace("CAP", "10");
    ConfigException o = assertThrows(ConfigException.class, () -> TestConfigs.parse(badOffset));
    assertTrue(o.getMessage().startsWith("features[0].offset: "), o.getMessage());
    assertTrue(o.getMessage().contains("whole number of grid steps"), o.getMessage());
    String shortExpiry = YAML.replace("tolerance: TOL", "tolerance: PT2H").replace("expire_after: P10D", "expire_after: PT12H").replace("CAP", "10");
    ConfigException x = assertThrows(ConfigException.class, () -> TestConfigs.parse(shortExpiry));
    assertTrue(x.getMessage().startsWith("features[0].expire_after: "), x.getMessage());
    String tooMany = YAML.replace("offset: P1D, tolerance: TOL, max_entities: CAP, expire_after: P10D",
        "offset: P100D, max_entities: 10000000, expire_after: P200D").replace("CAP", "10");
    ConfigException m = assertThrows(ConfigException.class, () -> TestConfigs.parse(tooMany));
    assertTrue(m.getMessage().startsWith("features[0].max_entities: 10000000 is not allowed; use at most 894039 with 2402 cells"), m.getMessage());
  }
}
