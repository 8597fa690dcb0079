package dev.runnel.core.feature;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.runnel.core.config.PipelineConfig;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.RecordSchema;
import dev.runnel.core.record.RejectReason;
import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.DataInputStream;
import java.io.DataOutputStream;
import java.io.IOException;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

class FeaturizerTest {

  static final String YAML = "name: f\n"
      + "input:\n"
      + "  fields: {hub: text, holiday: flag, temp: number, price: number, y: number, at: time}\n"
      + "  event_time: {field: at}\n"
      + "  time_zone: Europe/Amsterdam\n"
      + "target: y\n"
      + "features:\n"
      + "  - {kind: onehot, field: hub, max_levels: 6, min_count: 2, expire_after: PT30H, expire_after_records: 400}\n"
      + "  - {kind: onehot, field: holiday}\n"
      + "  - {kind: cyclic, cycle: hour_of_day, harmonics: 2}\n"
      + "  - {kind: cyclic, cycle: day_of_week}\n"
      + "  - {kind: numeric, field: temp, weighting_half_life_records: 200, clip: 6}\n"
      + "  - {kind: numeric, field: price, transform: log1p, scaling: scale}\n"
      + "  - {kind: polynomial, field: temp, name: tpoly, degree: 3}\n"
      + "  - {kind: cross, of: [hub, day_of_week]}\n"
      + "  - {kind: cross, of: [holiday, hub]}\n";

  static final long T0 = 1_774_000_000_000L;

  /** A seeded stream of records with churning hubs (new ones appear, old ones go quiet). */
  static final class Stream {
    final Random rnd;
    final RecordSchema s;
    int i;

    Stream(RecordSchema s, long seed) {
      this.s = s;
      this.rnd = new Random(seed);
    }

    long next(EventRecord r) {
      long t = T0 + i * 600_000L + rnd.nextInt(300_000);
      int span = 4 + (i / 300) % 5;
      String hub = "H" + ((i / 150) + rnd.nextInt(span));
      r.clear();
      r.setText(s.slot("hub"), hub);
      r.setFlag(s.slot("holiday"), rnd.nextInt(10) == 0);
      double temp = 10 + 8 * Math.sin(i / 100.0) + rnd.nextGaussian() * (1 + i / 2000.0);
      r.setNumber(s.slot("temp"), temp);
      r.setNumber(s.slot("price"), 0.2 + 0.1 * rnd.nextDouble() + (i > 1500 ? 0.3 : 0));
      r.setNumber(s.slot("y"), 3 + rnd.nextGaussian());
      r.setTimeMillis(s.slot("at"), t);
      r.setEventTimeMillis(t);
      i++;
      return t;
    }
  }

  private static Featurizer fresh() { return new Featurizer(TestConfigs.parse(YAML)); }

  @Test void checkpointRoundTrip_continuesBitForBitWithTheSameLayoutEvents() throws IOException {
    Featurizer a = fresh();
    RecordSchema s = a.config().input().schema();
    Stream stream = new Stream(s, 42L);
    EventRecord r = new EventRecord(s);
    double[] row = new double[a.maxDimension()];
    for (int n = 0; n < 1_700; n++) {
      long t = stream.next(r);
      assertNull(a.check(r, true), a.lastDetail());
      a.learnAndEncode(r, t, t, row);
    }
    ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    a.writeTo(new DataOutputStream(bytes));
    Featurizer b = fresh();
    b.readFrom(new DataInputStream(new ByteArrayInputStream(bytes.toByteArray())));
    assertEquals(a.columnNames(), b.columnNames());
    assertEquals(a.layoutVersion(), b.layoutVersion());
    assertEquals(a.trainingRecords(), b.trainingRecords());

    RecordingListener la = new RecordingListener(a.columnNames(), true, null);
    RecordingListener lb = new RecordingListener(b.columnNames(), true, null);
    a.setListener(la);
    b.setListener(lb);
    double[] rowA = new double[a.maxDimension()];
    double[] rowB = new double[b.maxDimension()];
    int removals = 0;
    int additions = 0;
    for (int n = 0; n < 1_500; n++) {
      long t = stream.next(r);
      boolean score = n % 7 == 3;
      if (score) {
        a.encode(r, t, rowA);
        b.encode(r, t, rowB);
      } else {
        a.learnAndEncode(r, t, t, rowA);
        b.learnAndEncode(r, t, t, rowB);
      }
      assertEquals(a.dimension(), b.dimension());
      for (int k = 0; k < a.dimension(); k++) {
        assertEquals(Double.doubleToRawLongBits(rowA[k]), Double.doubleToRawLongBits(rowB[k]), "record " + n + " column " + k);
      }
    }
    assertEquals(la.events, lb.events);
    for (String e : la.events) {
      if (e.startsWith("remove")) removals++;
      if (e.startsWith("add")) additions++;
    }
    assertTrue(removals > 3 && additions > 3, "the continuation exercised expiry and admission: " + removals + "/" + additions);
    ByteArrayOutputStream again = new ByteArrayOutputStream();
    ByteArrayOutputStream againB = new ByteArrayOutputStream();
    a.writeTo(new DataOutputStream(again));
    b.writeTo(new DataOutputStream(againB));
    assertArrayEquals(again.toByteArray(), againB.toByteArray());
  }

  @Test void readFrom_refusesAUsedFeaturizerAndAnotherConfiguration() throws IOException {
    Featurizer a = fresh();
    ByteArrayOutputStream bytes = new ByteArrayOutputStream();
    a.writeTo(new DataOutputStream(bytes));
    Featurizer used = fresh();
    EventRecord r = new EventRecord(used.config().input().schema());
    Stream st = new Stream(used.config().input().schema(), 1);
    long t0 = st.next(r);
    used.learnAndEncode(r, t0, t0, new double[used.maxDimension()]);
    assertThrows(IllegalStateException.class, () -> used.readFrom(new DataInputStream(new ByteArrayInputStream(bytes.toByteArray()))));
    Featurizer other = new Featurizer(TestConfigs.parse(YAML.replace("name: tpoly", "name: tp")));
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class,
        () -> other.readFrom(new DataInputStream(new ByteArrayInputStream(bytes.toByteArray()))));
    assertEquals("checkpoint feature polynomial tpoly does not match the configuration's polynomial tp", e.getMessage());
  }

  @Test void scalerRebasing_throughTheFeaturizer_leavesPredictionsUnchanged() {
    // Layout contract (LayoutListener javadoc): applying each columnRebased as specified keeps w . z
    // unchanged. Reference: the prediction of the same probe record before the training step.
    // Clipping is not linear, so this featurizer has none.
    Featurizer f = new Featurizer(TestConfigs.parse(YAML.replace(", clip: 6", "")));
    RecordSchema s = f.config().input().schema();
    Random w = new Random(5L);
    double[] init = new double[f.dimension()];
    for (int k = 0; k < init.length; k++) init[k] = w.nextGaussian();
    RecordingListener model = new RecordingListener(f.columnNames(), true, init);
    f.setListener(model);
    Stream stream = new Stream(s, 9L);
    EventRecord r = new EventRecord(s);
    EventRecord probe = new EventRecord(s);
    double[] row = new double[f.maxDimension()];
    int rebases = 0;
    for (int n = 0; n < 3_000; n++) {
      long t = stream.next(r);
      probe.clear();
      probe.setText(s.slot("hub"), "never-admitted");
      probe.setFlag(s.slot("holiday"), false);
      probe.setNumber(s.slot("temp"), -3.0 + n % 20);
      probe.setNumber(s.slot("price"), 0.25);
      f.encode(probe, T0, row);
      double before = scaledPart(f, model, row);
      int eventsBefore = model.events.size();
      f.learnAndEncode(r, t, t, new double[f.maxDimension()]);
      for (int k = eventsBefore; k < model.events.size(); k++) if (model.events.get(k).startsWith("rebase")) rebases++;
      f.encode(probe, T0, row);
      double after = scaledPart(f, model, row);
      assertEquals(before, after, 1e-12 * Math.max(1.0, Math.abs(before)), "record " + n);
      // give new columns a weight too, so later re-basings carry real weight
      for (int k = 0; k < model.weights.size(); k++) if (model.weights.get(k) == 0.0) model.weights.set(k, w.nextGaussian());
    }
    assertTrue(rebases > 3_000 * 4, "re-basings seen: " + rebases);
  }

  /**
   * The constant's and the scaled columns' share of w . z: the part re-basing acts on (admissions
   * and expiries of one-hot levels change the rest, legitimately).
   */
  private static double scaledPart(Featurizer f, RecordingListener model, double[] row) {
    double p = model.weights.get(0) * row[0];
    for (Featurizer.ScalerSnapshot x : f.scalers()) p += model.weights.get(x.index()) * row[x.index()];
    return p;
  }

  @Test void eventsOfOneRecord_comeInTheDocumentedOrder() {
    Featurizer f = fresh();
    RecordSchema s = f.config().input().schema();
    RecordingListener l = new RecordingListener(f.columnNames(), true, null);
    f.setListener(l);
    Stream stream = new Stream(s, 3L);
    EventRecord r = new EventRecord(s);
    double[] row = new double[f.maxDimension()];
    for (int n = 0; n < 3_000; n++) {
      int from = l.events.size();
      long tn = stream.next(r);
      f.learnAndEncode(r, tn, tn, row);
      List<String> ev = l.events.subList(from, l.events.size());
      int phase = 0;
      for (String e : ev) {
        int p = e.startsWith("remove") ? 0 : e.startsWith("add") ? 1 : 2;
        assertTrue(p >= phase, "order within one record: " + ev);
        phase = p;
      }
    }
  }

  @Test void check_reportsMissingAndInvalidInputs() {
    Featurizer f = fresh();
    RecordSchema s = f.config().input().schema();
    EventRecord r = new EventRecord(s);
    Stream stream = new Stream(s, 1L);
    stream.next(r);
    assertNull(f.check(r, true));
    r.setAbsent(s.slot("hub"));
    assertEquals(RejectReason.MISSING_FIELD, f.check(r));
    assertEquals("field hub: missing", f.lastDetail());
    stream.next(r);
    r.setNumber(s.slot("price"), -2.0);
    assertEquals(RejectReason.OUT_OF_RANGE, f.check(r));
    assertEquals("field price: -2.0 is outside the transform's domain (log1p needs a value above -1)", f.lastDetail());
    stream.next(r);
    r.setAbsent(s.slot("y"));
    assertNull(f.check(r));
    assertEquals(RejectReason.MISSING_FIELD, f.check(r, true));
    assertEquals("field y (the target): missing", f.lastDetail());
    stream.next(r);
    r.clearEventTime();
    // a missing event time is the pipeline step's one check (StreamClockPolicyTest), not the featurizer's
    assertNull(f.check(r));
  }

  @Test void check_withSeveralProblems_reportsTheFirstFeatureInDeclarationOrder() {
    Featurizer f = new Featurizer(TestConfigs.parse("name: t\n"
        + "input:\n  fields: {y: number, hub: text, price: number, temp: number}\n"
        + "target: y\n"
        + "features:\n"
        + "  - {kind: numeric, field: price, transform: log1p}\n"
        + "  - {kind: onehot, field: hub}\n"
        + "  - {kind: polynomial, field: temp, degree: 3}\n"));
    RecordSchema s = f.config().input().schema();
    EventRecord r = new EventRecord(s);
    // price (declared first) out of its domain, hub missing, temp^3 not finite: price is reported
    r.setNumber(s.slot("price"), -2.0);
    r.setNumber(s.slot("temp"), 1e200);
    assertEquals(RejectReason.OUT_OF_RANGE, f.check(r));
    assertEquals("field price: -2.0 is outside the transform's domain (log1p needs a value above -1)", f.lastDetail());
    // price fine: the missing hub comes before the polynomial
    r.setNumber(s.slot("price"), 0.5);
    assertEquals(RejectReason.MISSING_FIELD, f.check(r));
    assertEquals("field hub: missing", f.lastDetail());
    r.setText(s.slot("hub"), "H1");
    assertEquals(RejectReason.OUT_OF_RANGE, f.check(r));
    assertEquals("field temp: 1.0E200^3 is not finite", f.lastDetail());
    r.setNumber(s.slot("temp"), 20.0);
    assertNull(f.check(r));
    assertEquals("", f.lastDetail());
    r.setAbsent(s.slot("temp"));
    assertEquals(RejectReason.MISSING_FIELD, f.check(r));
    assertEquals("field temp: missing", f.lastDetail());
  }

  @Test void snapshots_listVocabulariesAndScalers() {
    Featurizer f = fresh();
    RecordSchema s = f.config().input().schema();
    Stream stream = new Stream(s, 8L);
    EventRecord r = new EventRecord(s);
    double[] row = new double[f.maxDimension()];
    for (int n = 0; n < 500; n++) {
      long tn = stream.next(r);
      f.learnAndEncode(r, tn, tn, row);
    }
    List<Featurizer.VocabularySnapshot> vs = f.vocabularies();
    assertEquals(2, vs.size());
    assertEquals("hub", vs.get(0).feature());
    for (Featurizer.LevelSnapshot l : vs.get(0).levels()) assertEquals("hub=" + l.level(), f.columnName(l.column()));
    assertEquals("hub=(other)", f.columnName(vs.get(0).otherColumn()));
    List<Featurizer.ScalerSnapshot> ss = f.scalers();
    List<String> names = new ArrayList<>();
    for (Featurizer.ScalerSnapshot x : ss) {
      names.add(x.column());
      assertEquals(x.centre(), f.centre(x.index()));
      assertEquals(x.scale(), f.scale(x.index()));
    }
    assertEquals(List.of("temp", "price", "tpoly^1", "tpoly^2", "tpoly^3"), names);
    assertEquals(0.0, f.centre(0));
    assertEquals(1.0, f.scale(0));
    assertEquals(0.0, f.centre(f.columnNames().indexOf("price")), "scale mode never centres");
  }

  @Test void warmTrainingPath_allocatesNothingWithAStableLayout() {
    // Measured with the JVM's per-thread allocation counter (com.sun.management.ThreadMXBean); 0 bytes measured here,
    // the bound leaves room for the counter itself.
    java.lang.management.ThreadMXBean tmx = java.lang.management.ManagementFactory.getThreadMXBean();
    if (!(tmx instanceof com.sun.management.ThreadMXBean sun) || !sun.isThreadAllocatedMemorySupported()) return;
    PipelineConfig c = TestConfigs.parse(YAML.replace("max_levels: 6, min_count: 2, expire_after: PT30H, expire_after_records: 400", "max_levels: 50"));
    Featurizer f = new Featurizer(c);
    RecordSchema s = c.input().schema();
    EventRecord[] recs = new EventRecord[64];
    long[] times = new long[64];
    Stream stream = new Stream(s, 4L);
    for (int k = 0; k < recs.length; k++) {
      recs[k] = new EventRecord(s);
      times[k] = stream.next(recs[k]);
      recs[k].setText(s.slot("hub"), "H" + (k % 8));
    }
    double[] row = new double[f.maxDimension()];
    for (int n = 0; n < 200_000; n++) f.learnAndEncode(recs[n & 63], times[n & 63], times[n & 63], row);
    long tid = Thread.currentThread().getId();
    long before = sun.getThreadAllocatedBytes(tid);
    for (int n = 0; n < 100_000; n++) {
      EventRecord rec = recs[n & 63];
      f.learnAndEncode(rec, times[n & 63], times[n & 63], row);
      f.encode(rec, times[n & 63], row);
    }
    long allocated = sun.getThreadAllocatedBytes(tid) - before;
    assertTrue(allocated < 1024, "allocated " + allocated + " bytes over 100000 training + scoring steps");
  }
}
