package dev.runnel.core.pipeline;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.runnel.core.drift.DriftAlarm;
import dev.runnel.core.drift.DriftStatus;
import dev.runnel.core.feature.Featurizer;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.FieldType;
import dev.runnel.core.record.RecordSchema;
import dev.runnel.core.record.RejectReason;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.time.Instant;
import java.util.ArrayList;
import java.util.Iterator;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.junit.jupiter.api.Test;

/**
 * Every field of every published layout (docs/formats.md) read back by a JSON parser: each
 * output is parsed with Jackson's {@link ObjectMapper} (the reference reader), every number must
 * read back as the same bits (doubles) or the same value (whole numbers), every time as
 * {@link Instant#toString} of its millis (java.time), every duration as one that
 * {@link Duration#parse} reads back to the same span, NaN and infinities as {@code null}, and
 * each object must hold exactly the documented names (so a field written twice, under the
 * wrong name or not at all is caught). Every input value is distinct, so a field that shows
 * another field's value is caught too.
 */
class OutputJsonFieldsTest {

  private static final ObjectMapper JSON = new ObjectMapper();

  private static JsonNode parse(byte[] bytes) throws IOException {
    return JSON.readTree(new String(bytes, StandardCharsets.UTF_8));
  }

  /** A double field: a JSON number that reads back as the same bits, or null for NaN and infinities. */
  private static void num(JsonNode obj, String name, double expected) {
    JsonNode n = obj.get(name);
    assertNotNull(n, "field " + name + " missing in " + obj);
    if (!Double.isFinite(expected)) {
      assertTrue(n.isNull(), name + " should be null for " + expected + ", is " + n);
      return;
    }
    assertTrue(n.isNumber(), name + " is not a number: " + n);
    assertEquals(Double.doubleToRawLongBits(expected), Double.doubleToRawLongBits(Double.parseDouble(n.asText())),
        name + " written as " + n.asText() + ", expected " + expected);
  }

  /** A whole-number field. */
  private static void whole(JsonNode obj, String name, long expected) {
    JsonNode n = obj.get(name);
    assertNotNull(n, "field " + name + " missing in " + obj);
    assertTrue(n.isIntegralNumber(), name + " is not a whole number: " + n);
    assertEquals(expected, n.longValue(), name);
  }

  private static void text(JsonNode obj, String name, String expected) {
    JsonNode n = obj.get(name);
    assertNotNull(n, "field " + name + " missing in " + obj);
    if (expected == null) {
      assertTrue(n.isNull(), name + " should be null, is " + n);
    } else {
      assertTrue(n.isTextual(), name + " is not a string: " + n);
      assertEquals(expected, n.textValue(), name);
    }
  }

  private static void bool(JsonNode obj, String name, boolean expected) {
    JsonNode n = obj.get(name);
    assertNotNull(n, "field " + name + " missing in " + obj);
    assertTrue(n.isBoolean(), name + " is not a boolean: " + n);
    assertEquals(expected, n.booleanValue(), name);
  }

  /** The object's names, in order, are exactly these. */
  private static void names(JsonNode obj, String... expected) {
    List<String> got = new ArrayList<>();
    for (Iterator<String> it = obj.fieldNames(); it.hasNext(); ) {
      got.add(it.next());
    }
    assertEquals(List.of(expected), got, "names of " + obj);
  }

  private static String iso(long millis) {
    return Instant.ofEpochMilli(millis).toString(); // java.time, the reference
  }

  private static Snapshot.Metrics metrics(double base) {
    return new Snapshot.Metrics((long) base * 3 + 7, base + 0.125, base + 0.25, -(base + 0.375), 0.8125,
        base + 1.0625, base + 1.1875, -(base + 1.3125), 0.6875);
  }

  private static void checkMetrics(JsonNode obj, Snapshot.Metrics m) {
    names(obj, "count", "overall", "recent");
    whole(obj, "count", m.count());
    JsonNode o = obj.get("overall");
    names(o, "mae", "rmse", "bias", "coverage");
    num(o, "mae", m.mae());
    num(o, "rmse", m.rmse());
    num(o, "bias", m.bias());
    num(o, "coverage", m.coverage());
    JsonNode r = obj.get("recent");
    names(r, "mae", "rmse", "bias", "coverage");
    num(r, "mae", m.recentMae());
    num(r, "rmse", m.recentRmse());
    num(r, "bias", m.recentBias());
    num(r, "coverage", m.recentCoverage());
  }

  @Test void snapshot_everyFieldReadsBack() throws IOException {
    List<Snapshot.Column> cols = List.of(
        new Snapshot.Column("constant", 1.0 / 3, 0.01 / 7, 2.0 / 3, 0.02 / 7, 0.0, 1.0, Double.NaN),
        new Snapshot.Column("load", -4.0 / 9, 0.03 / 11, -5.0 / 9, 0.04 / 11, 12.5e-3, 3.25e7, -2.75));
    long t0 = 1_774_744_200_123L;
    List<Featurizer.VocabularySnapshot> vocs = List.of(new Featurizer.VocabularySnapshot("hub", "hub_id", 1, 41L,
        List.of(new Featurizer.LevelSnapshot("QM-01", 2, 17L, t0 - 86_400_000L, t0, 99L),
            new Featurizer.LevelSnapshot("Z\u00fcrich \"x\"", 3, 5L, Long.MIN_VALUE, Long.MAX_VALUE, 98L)), 6));
    List<Featurizer.ScalerSnapshot> scalers = List.of(
        new Featurizer.ScalerSnapshot("load", 4, "standardize", "log1p", 123L, 121.5, 0.1 + 0.2, Math.PI, -Math.E, 1e-300));
    List<DriftAlarm> alarms = List.of(
        new DriftAlarm(DriftAlarm.WEIGHT, "load", "up", t0 - 5000, 3, 1234, 4.0625, 4.0, -0.75, 0.5),
        new DriftAlarm("error_level", null, "down", t0 - 7000, 2, 1200, 51.5, 50.0, Double.POSITIVE_INFINITY, 0.3));
    DriftStatus drift = new DriftStatus("page_hinkley", 1.5, -2.5, 50.0, 0.7978, 321, 4, 2, "rolling", 4.0);
    List<Long> bounds = List.of(3_600_000L, 86_400_000L + 43_200_000L, Long.MAX_VALUE);
    List<Snapshot.Metrics> overall = List.of(metrics(10), metrics(20), metrics(30));
    Snapshot.Forecasting fc = new Snapshot.Forecasting(5, 600L, 550L, 7L, 8L, bounds, overall, List.of("hub_id", "plug"),
        List.of(new Snapshot.EntityHorizons(List.of("QM-01", "A"), List.of(metrics(40), metrics(50), metrics(60)))), 64, 9L,
        new Snapshot.ActualCounts(11, 1L, 2L, 3L, 4L, 5L, 6L));
    Snapshot.Metrics m = new Snapshot.Metrics(9876L, 0.5, 0.75, -0.0625, Double.NaN, 0.5625, 0.8, 0.03125, 0.875);
    Snapshot s = new Snapshot(t0, 10_001L, 9_000L, 900L, 101L, 17L, true, 0.1 + 0.7, 1.0 / 7, 456.25,
        cols, vocs, scalers, m, 12L, alarms, drift, fc, List.of());
    JsonNode n = parse(new OutputJson("pipe-1", 0.9).snapshot(s, 3));
    names(n, "format", "pipeline", "partition", "index", "event_time", "records", "trained", "no_target_records", "rejected",
        "columns_version", "ready", "noise_sd", "residual_sd", "effective_sample_size", "metrics", "forecast_counts",
        "horizon_metrics", "columns", "alarms", "drift", "vocabularies", "standardization");
    whole(n, "format", Snapshot.FORMAT_VERSION);
    text(n, "pipeline", "pipe-1");
    whole(n, "partition", 3);
    whole(n, "index", 12);
    text(n, "event_time", iso(t0));
    whole(n, "records", 10_001);
    whole(n, "trained", 9_000);
    whole(n, "no_target_records", 900);
    whole(n, "rejected", 101);
    whole(n, "columns_version", 17);
    bool(n, "ready", true);
    num(n, "noise_sd", 0.1 + 0.7);
    num(n, "residual_sd", 1.0 / 7);
    num(n, "effective_sample_size", 456.25);
    checkMetrics(n.get("metrics"), m);

    JsonNode counts = n.get("forecast_counts");
    names(counts, "pending", "remembered", "settled", "dropped_full", "dropped_expired", "learned_actuals",
        "learned_forgotten_early", "replaced_actuals", "resettled", "rejected_too_late", "rejected_repeated", "rejected_corrected");
    whole(counts, "pending", 5);
    whole(counts, "remembered", 600);
    whole(counts, "settled", 550);
    whole(counts, "dropped_full", 7);
    whole(counts, "dropped_expired", 8);
    JsonNode hm = n.get("horizon_metrics");
    names(hm, "buckets", "max_entities", "settled_not_kept", "entities");
    whole(hm, "max_entities", 64);
    whole(hm, "settled_not_kept", 9);
    JsonNode buckets = hm.get("buckets");
    assertEquals(3, buckets.size());
    checkBuckets(buckets, bounds, overall);
    JsonNode ents = hm.get("entities");
    assertEquals(1, ents.size());
    names(ents.get(0), "entity", "buckets");
    names(ents.get(0).get("entity"), "hub_id", "plug");
    text(ents.get(0).get("entity"), "hub_id", "QM-01");
    text(ents.get(0).get("entity"), "plug", "A");
    checkBuckets(ents.get(0).get("buckets"), bounds, fc.entities().get(0).buckets());

    JsonNode jc = n.get("columns");
    assertEquals(cols.size(), jc.size());
    for (int i = 0; i < cols.size(); i++) {
      Snapshot.Column c = cols.get(i);
      JsonNode o = jc.get(i);
      names(o, "name", "weight", "std_error", "raw_weight", "raw_std_error", "centre", "scale", "drift_score");
      text(o, "name", c.name());
      num(o, "weight", c.weight());
      num(o, "std_error", c.standardError());
      num(o, "raw_weight", c.rawWeight());
      num(o, "raw_std_error", c.rawStandardError());
      num(o, "centre", c.centre());
      num(o, "scale", c.scale());
      num(o, "drift_score", c.movedSe());
    }

    JsonNode ja = n.get("alarms");
    assertEquals(2, ja.size());
    for (int i = 0; i < alarms.size(); i++) {
      DriftAlarm a = alarms.get(i);
      JsonNode o = ja.get(i);
      if (a.column() != null) {
        names(o, "kind", "column", "direction", "fired_at", "fired_at_snapshot", "fired_at_record", "score", "threshold",
            "baseline_value", "current_value");
        text(o, "column", a.column());
      } else {
        names(o, "kind", "direction", "fired_at", "fired_at_snapshot", "fired_at_record", "score", "threshold",
            "baseline_value", "current_value");
      }
      text(o, "kind", a.kind());
      text(o, "direction", a.direction());
      text(o, "fired_at", iso(a.firedAtMillis()));
      whole(o, "fired_at_snapshot", a.firedAtSnapshot());
      whole(o, "fired_at_record", a.firedAtRecord());
      num(o, "score", a.score());
      num(o, "threshold", a.threshold());
      num(o, "baseline_value", a.baselineValue());
      num(o, "current_value", a.currentValue());
    }
    JsonNode jd = n.get("drift");
    names(jd, "baseline", "weight_alarm_se", "weight_alarms_fired", "error_test", "error_up", "error_down",
        "error_threshold", "error_mean_abs_z", "error_count", "error_alarms_fired");
    text(jd, "baseline", "rolling");
    num(jd, "weight_alarm_se", 4.0);
    whole(jd, "weight_alarms_fired", 4);
    text(jd, "error_test", "page_hinkley");
    num(jd, "error_up", 1.5);
    num(jd, "error_down", -2.5);
    num(jd, "error_threshold", 50.0);
    num(jd, "error_mean_abs_z", 0.7978);
    whole(jd, "error_count", 321);
    whole(jd, "error_alarms_fired", 2);

    JsonNode jv = n.get("vocabularies");
    assertEquals(1, jv.size());
    JsonNode v = jv.get(0);
    names(v, "feature", "field", "other_count", "below_min_count", "levels");
    text(v, "feature", "hub");
    text(v, "field", "hub_id");
    whole(v, "other_count", 41);
    whole(v, "below_min_count", 6);
    JsonNode lv = v.get("levels");
    assertEquals(2, lv.size());
    for (int i = 0; i < 2; i++) {
      Featurizer.LevelSnapshot l = vocs.get(0).levels().get(i);
      JsonNode o = lv.get(i);
      names(o, "level", "column", "count", "first_seen", "last_seen");
      text(o, "level", l.level());
      whole(o, "column", l.column());
      whole(o, "count", l.count());
      // Long.MIN_VALUE and Long.MAX_VALUE mean "never" and are written as null
      text(o, "first_seen", l.firstSeenMillis() == Long.MIN_VALUE ? null : iso(l.firstSeenMillis()));
      text(o, "last_seen", l.lastSeenMillis() == Long.MAX_VALUE ? null : iso(l.lastSeenMillis()));
    }
    JsonNode st = n.get("standardization");
    assertEquals(1, st.size());
    JsonNode sc = st.get(0);
    names(sc, "column", "scaling", "transform", "count", "mean", "sd", "centre", "scale");
    text(sc, "column", "load");
    text(sc, "scaling", "standardize");
    text(sc, "transform", "log1p");
    whole(sc, "count", 123);
    num(sc, "mean", 0.1 + 0.2);
    num(sc, "sd", Math.PI);
    num(sc, "centre", -Math.E);
    num(sc, "scale", 1e-300);
  }

  private static void checkBuckets(JsonNode arr, List<Long> bounds, List<Snapshot.Metrics> ms) {
    assertEquals(ms.size(), arr.size());
    for (int b = 0; b < ms.size(); b++) {
      JsonNode o = arr.get(b);
      long up = bounds.get(b);
      if (up == Long.MAX_VALUE) {
        // the open bucket: no upper bound, and the bound it is over
        names(o, "up_to", "over", "count", "overall", "recent");
        text(o, "up_to", null);
        assertEquals(Duration.ofMillis(bounds.get(b - 1)), Duration.parse(o.get("over").textValue()), "over");
      } else {
        names(o, "up_to", "count", "overall", "recent");
        assertEquals(Duration.ofMillis(up), Duration.parse(o.get("up_to").textValue()), "up_to of bucket " + b);
      }
      whole(o, "count", ms.get(b).count());
      num(o.get("overall"), "mae", ms.get(b).mae());
      num(o.get("overall"), "rmse", ms.get(b).rmse());
      num(o.get("overall"), "bias", ms.get(b).bias());
      num(o.get("overall"), "coverage", ms.get(b).coverage());
      num(o.get("recent"), "mae", ms.get(b).recentMae());
      num(o.get("recent"), "rmse", ms.get(b).recentRmse());
      num(o.get("recent"), "bias", ms.get(b).recentBias());
      num(o.get("recent"), "coverage", ms.get(b).recentCoverage());
    }
  }

  @Test void snapshot_withoutTimeDriftOrForecasting() throws IOException {
    Snapshot s = new Snapshot(Long.MIN_VALUE, 0, 0, 0, 0, 1, false, Double.NaN, Double.NaN, 0.0,
        List.of(), List.of(), List.of(), new Snapshot.Metrics(0, Double.NaN, Double.NaN, Double.NaN, Double.NaN,
        Double.NaN, Double.NaN, Double.NaN, Double.NaN));
    JsonNode n = parse(new OutputJson("p", 0.9).snapshot(s, -1));
    names(n, "format", "pipeline", "partition", "index", "event_time", "records", "trained", "no_target_records", "rejected",
        "columns_version", "ready", "noise_sd", "residual_sd", "effective_sample_size", "metrics", "columns", "alarms",
        "vocabularies", "standardization");
    text(n, "event_time", null);
    whole(n, "partition", -1);
    whole(n, "index", -1);
    bool(n, "ready", false);
    num(n, "noise_sd", Double.NaN);
    num(n, "effective_sample_size", 0.0);
  }

  @Test void isoDuration_readsBackAsTheSameSpan() {
    // reference: java.time.Duration.parse (ISO 8601 PnDTnHnMn.nS, a day read as 24 hours)
    long[] spans = {1, 999, 1000, 1500, 59_999, 60_000, 3_600_000, 86_399_999, 86_400_000, 86_400_001,
      86_400_000L + 43_200_000L, 7 * 86_400_000L, 400L * 86_400_000L + 3_723_004L};
    for (long ms : spans) {
      String iso = OutputJson.isoDuration(ms);
      assertEquals(Duration.ofMillis(ms), Duration.parse(iso), ms + " ms written as " + iso);
      assertEquals(ms >= 86_400_000L, iso.contains("D"), "days as the largest unit: " + iso);
      assertFalse(iso.endsWith("T"), "no empty time part: " + iso);
    }
    assertEquals("P1D", OutputJson.isoDuration(86_400_000L));
    assertEquals("PT6H", OutputJson.isoDuration(6 * 3_600_000L));
    assertEquals("P1DT12H", OutputJson.isoDuration(86_400_000L + 43_200_000L));
    assertEquals("PT0.5S", OutputJson.isoDuration(500));
  }

  private static EventRecord record() {
    Map<String, FieldType> m = new LinkedHashMap<>();
    m.put("hub", FieldType.TEXT);
    m.put("kwh", FieldType.NUMBER);
    m.put("open", FieldType.FLAG);
    m.put("plug", FieldType.TEXT);
    m.put("shut", FieldType.FLAG);
    return new EventRecord(new RecordSchema(m));
  }

  @Test void prediction_everyFieldReadsBack() throws IOException {
    EventRecord r = record();
    OutputJson out = new OutputJson("pp", 0.85);
    long t = 1_774_744_200_250L;
    for (int k = 0; k < 8; k++) {
      Prediction p = new Prediction();
      p.status = Prediction.Status.values()[k % 3];
      p.eventTimeMillis = t + k;
      p.predicted = 10.0 / 3 + k;
      p.low = p.predicted - 1.0 / 7;
      p.high = p.predicted + 2.0 / 7;
      p.actual = k % 2 == 0 ? Double.NaN : 4.2 + k;
      p.layoutVersion = 30 + k;
      p.sourcePartition = (k & 2) != 0 ? -1 : k; // partition 0 and offset 0 are written
      p.sourceOffset = (k & 4) != 0 ? -1 : k;
      p.stamped = k >= 3;
      p.targetTimeMillis = p.eventTimeMillis + 3_600_000L * k;
      p.targetPassed = k % 4 == 1 || k == 6;
      r.clear();
      r.setText(0, "QM-0" + k);
      r.setNumber(1, 2.5);
      r.setFlag(2, k % 2 == 1);
      if (k % 3 == 0) {
        r.setText(3, "plug-" + k);
      }
      JsonNode n = parse(out.prediction(p, r));
      List<String> expectNames = new ArrayList<>(List.of("status"));
      if (p.sourcePartition >= 0 || p.sourceOffset >= 0) {
        expectNames.add("source");
      }
      expectNames.add("event_time");
      if (p.stamped) {
        expectNames.addAll(List.of("issue_time", "target_time", "horizon_ms"));
        if (Double.isNaN(p.actual)) {
          expectNames.add("target_passed");
        }
      }
      expectNames.addAll(List.of("fields", "predicted", "low", "high", "level", "actual", "error", "columns_version"));
      names(n, expectNames.toArray(String[]::new));
      text(n, "status", p.status().id());
      if (n.has("source")) {
        checkSource(n.get("source"), p.sourcePartition, p.sourceOffset);
      }
      text(n, "event_time", iso(p.eventTimeMillis));
      if (p.stamped) {
        text(n, "issue_time", iso(p.eventTimeMillis));
        text(n, "target_time", iso(p.targetTimeMillis));
        whole(n, "horizon_ms", p.targetTimeMillis - p.eventTimeMillis);
        if (Double.isNaN(p.actual)) {
          bool(n, "target_passed", p.targetPassed);
        }
      }
      JsonNode f = n.get("fields");
      // text and flag fields are echoed, numbers are not, absent fields are left out
      if (k % 3 == 0) {
        names(f, "hub", "open", "plug");
        text(f, "plug", "plug-" + k);
      } else {
        names(f, "hub", "open");
      }
      text(f, "hub", "QM-0" + k);
      bool(f, "open", k % 2 == 1);
      num(n, "predicted", p.predicted);
      num(n, "low", p.low);
      num(n, "high", p.high);
      num(n, "level", 0.85);
      num(n, "actual", p.actual);
      num(n, "error", p.actual - p.predicted);
      whole(n, "columns_version", p.layoutVersion);
    }
  }

  private static void checkSource(JsonNode src, long partition, long offset) {
    List<String> expect = new ArrayList<>();
    if (partition >= 0) {
      expect.add("partition");
    }
    if (offset >= 0) {
      expect.add("offset");
    }
    names(src, expect.toArray(String[]::new));
    if (partition >= 0) {
      whole(src, "partition", partition);
    }
    if (offset >= 0) {
      whole(src, "offset", offset);
    }
  }

  @Test void settled_everyFieldReadsBack() throws IOException {
    EventRecord r = record();
    r.setText(0, "QM-07");
    r.setText(3, "B");
    r.setFlag(2, true);
    OutputJson out = new OutputJson("ss", 0.95);
    for (int k = 0; k < 4; k++) {
      SettledForecast s = new SettledForecast();
      s.entitySlots = new int[] {3, 0};
      s.issueTimeMillis = 1_774_744_200_000L + k;
      s.targetTimeMillis = s.issueTimeMillis + 86_400_000L + 7 * k;
      s.forecast = 1.0 / 3 + k;
      s.low = s.forecast - 0.75;
      s.high = s.forecast + 0.625;
      s.actual = k == 2 ? s.high + 1e-9 : s.forecast + 0.0625 * k;
      s.requestPartition = k == 1 ? -1 : k; // 0 is a partition and an offset
      s.requestOffset = k == 3 ? -1 : k;
      s.actualPartition = k == 0 ? -1 : k - 1;
      s.actualOffset = k == 0 ? -1 : k - 1;
      s.correction = k >= 2;
      s.replacedActual = s.correction ? -9.5 - k : Double.NaN;
      JsonNode n = parse(out.settled(s, r));
      if (s.correction) {
        names(n, "entity", "issue_time", "target_time", "horizon_ms", "forecast", "low", "high", "level",
            "actual", "error", "covered", "correction", "replaced_actual", "request", "actual_source");
        bool(n, "correction", true);
        num(n, "replaced_actual", s.replacedActual);
      } else {
        names(n, "entity", "issue_time", "target_time", "horizon_ms", "forecast", "low", "high", "level",
            "actual", "error", "covered", "request", "actual_source");
      }
      names(n.get("entity"), "plug", "hub");
      text(n.get("entity"), "plug", "B");
      text(n.get("entity"), "hub", "QM-07");
      text(n, "issue_time", iso(s.issueTimeMillis));
      text(n, "target_time", iso(s.targetTimeMillis));
      whole(n, "horizon_ms", s.targetTimeMillis - s.issueTimeMillis);
      num(n, "forecast", s.forecast);
      num(n, "low", s.low);
      num(n, "high", s.high);
      num(n, "level", 0.95);
      num(n, "actual", s.actual);
      num(n, "error", s.actual - s.forecast);
      bool(n, "covered", s.actual >= s.low && s.actual <= s.high);
      checkSource(n.get("request"), s.requestPartition, s.requestOffset);
      checkSource(n.get("actual_source"), s.actualPartition, s.actualOffset);
    }
  }

  @Test void reject_everyFieldReadsBack_andTheRawBytesAreCutAtTheLimit() throws IOException {
    OutputJson out = new OutputJson("rj", 0.9);
    int[] lengths = {0, 17, OutputJson.MAX_RAW_BYTES - 1, OutputJson.MAX_RAW_BYTES, OutputJson.MAX_RAW_BYTES + 1, 3 * OutputJson.MAX_RAW_BYTES};
    for (int len : lengths) {
      byte[] raw = new byte[len + 5];
      for (int i = 0; i < raw.length; i++) {
        raw[i] = (byte) ('a' + i % 26);
      }
      String detail = len == 17 ? null : "field kwh: " + len;
      long partition = len == 0 ? -1 : 0;
      long offset = len == 17 ? -1 : len;
      JsonNode n = parse(out.reject(RejectReason.WRONG_TYPE, detail, partition, offset, raw, 3, len));
      int keep = Math.min(len, OutputJson.MAX_RAW_BYTES);
      names(n, "reason", "detail", "source", "raw_length", "raw_truncated", "raw");
      text(n, "reason", RejectReason.WRONG_TYPE.id());
      text(n, "detail", detail == null ? "" : detail);
      checkSource(n.get("source"), partition, offset);
      whole(n, "raw_length", len);
      bool(n, "raw_truncated", len > OutputJson.MAX_RAW_BYTES);
      text(n, "raw", new String(raw, 3, keep, StandardCharsets.US_ASCII));
    }
    JsonNode none = parse(out.reject(RejectReason.WRONG_TYPE, "d", -1, -1, new byte[0], 0, 0));
    names(none, "reason", "detail", "raw_length", "raw_truncated", "raw");
  }
}
