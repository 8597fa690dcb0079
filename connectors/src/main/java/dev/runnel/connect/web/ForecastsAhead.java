package dev.runnel.connect.web;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.node.ArrayNode;
import com.fasterxml.jackson.databind.node.ObjectNode;
import java.time.Instant;
import java.util.Iterator;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.TreeMap;

/**
 * What the live page draws ahead of each entity's latest actual: per entity, its latest actuals and
 * the forecasts published for target times after the latest of them, read from the predictions of a
 * pipeline with {@code input.forecast} (records with {@code target_time}, docs/formats.md).
 *
 * <p>An actual is a prediction with an {@code actual} (status {@code scored} or {@code warming_up}),
 * placed at its target time; a second actual for the same target time (a correction) replaces the
 * first. A forecast is a {@code no_target} prediction with a point forecast; of several for the same
 * target time the one issued latest is kept (the freshest forecast is the one a planner reads), and a
 * forecast is forgotten once an actual for its target time or a later one has come: the page draws
 * forecasts ahead, and the settled ones are in the table by horizon.
 *
 * <p>Bounded: at most {@link LiveState#MAX_AHEAD_ENTITIES} entities (the one updated longest ago is
 * dropped for a new one, and counted), per entity the latest {@link LiveState#MAX_AHEAD_ACTUALS}
 * actuals by target time and the nearest {@link LiveState#MAX_AHEAD_FORECASTS} forecasts ahead.
 * Not thread safe: {@link LiveState} guards it.
 */
final class ForecastsAhead {

  /** One entity's actuals (target time → actual, predicted) and forecasts (target time → predicted, low, high, issue time, horizon). */
  private static final class Entity {
    final TreeMap<Long, double[]> actuals = new TreeMap<>();
    final TreeMap<Long, double[]> forecasts = new TreeMap<>();
  }

  // access order: the entity updated longest ago comes first
  private final LinkedHashMap<String, Entity> entities = new LinkedHashMap<>(64, 0.75f, true);
  private long entitiesDropped;
  private long forecastsDropped;

  /** Entities kept now. */
  int size() {
    return entities.size();
  }

  /** Takes one prediction record that has a {@code target_time}, for the entity named. */
  void take(JsonNode n, String entity) {
    long target;
    try {
      target = Instant.parse(n.path("target_time").asText()).toEpochMilli();
    } catch (RuntimeException e) {
      return;
    }
    JsonNode actual = n.get("actual");
    boolean isActual = actual != null && actual.isNumber();
    boolean isForecast = !isActual && "no_target".equals(n.path("status").asText()) && n.path("predicted").isNumber();
    if (!isActual && !isForecast) {
      return;
    }
    Entity e = entities.get(entity);
    if (e == null) {
      e = new Entity();
      entities.put(entity, e);
      if (entities.size() > LiveState.MAX_AHEAD_ENTITIES) {
        Iterator<Map.Entry<String, Entity>> it = entities.entrySet().iterator();
        it.next();
        it.remove();
        entitiesDropped++;
      }
    }
    if (isActual) {
      e.actuals.put(target, new double[] {actual.asDouble(), num(n, "predicted")});
      while (e.actuals.size() > LiveState.MAX_AHEAD_ACTUALS) {
        e.actuals.pollFirstEntry();
      }
      long last = e.actuals.lastKey();
      // forecasts for this target time or earlier are no longer ahead
      e.forecasts.headMap(last, true).clear();
      return;
    }
    if (!e.actuals.isEmpty() && target <= e.actuals.lastKey()) {
      return; // a forecast for an hour whose actual (or a later one) has come: not ahead
    }
    long issue = time(n, "issue_time");
    double[] had = e.forecasts.get(target);
    if (had != null && issue < had[3]) {
      return; // an earlier-issued forecast than the one kept
    }
    e.forecasts.put(target, new double[] {n.path("predicted").asDouble(), num(n, "low"), num(n, "high"), issue,
        num(n, "horizon_ms")});
    while (e.forecasts.size() > LiveState.MAX_AHEAD_FORECASTS) {
      e.forecasts.pollLastEntry();
      forecastsDropped++;
    }
  }

  /** Writes the {@code forecasts_ahead} object of {@code /api/state} (docs/formats.md). */
  void write(ObjectNode o) {
    o.put("max_entities", LiveState.MAX_AHEAD_ENTITIES);
    o.put("max_actuals", LiveState.MAX_AHEAD_ACTUALS);
    o.put("max_forecasts", LiveState.MAX_AHEAD_FORECASTS);
    o.put("entities_dropped", entitiesDropped);
    o.put("forecasts_dropped", forecastsDropped);
    ArrayNode list = o.putArray("entities");
    for (Map.Entry<String, Entity> en : new TreeMap<>(entities).entrySet()) {
      Entity e = en.getValue();
      ObjectNode eo = list.addObject();
      eo.put("entity", en.getKey());
      if (e.actuals.isEmpty()) {
        eo.putNull("last_actual");
      } else {
        eo.put("last_actual", Instant.ofEpochMilli(e.actuals.lastKey()).toString());
      }
      ArrayNode as = eo.putArray("actuals");
      for (Map.Entry<Long, double[]> a : e.actuals.entrySet()) {
        ArrayNode p = as.addArray();
        p.add(Instant.ofEpochMilli(a.getKey()).toString());
        add(p, a.getValue()[0]);
        add(p, a.getValue()[1]);
      }
      ArrayNode fs = eo.putArray("forecasts");
      for (Map.Entry<Long, double[]> f : e.forecasts.entrySet()) {
        double[] v = f.getValue();
        ArrayNode p = fs.addArray();
        p.add(Instant.ofEpochMilli(f.getKey()).toString());
        add(p, v[0]);
        add(p, v[1]);
        add(p, v[2]);
        if (v[3] == Long.MIN_VALUE) {
          p.addNull();
        } else {
          p.add(Instant.ofEpochMilli((long) v[3]).toString());
        }
        if (Double.isNaN(v[4])) {
          p.addNull();
        } else {
          p.add((long) v[4]);
        }
      }
    }
  }

  private static void add(ArrayNode a, double v) {
    if (Double.isNaN(v)) {
      a.addNull();
    } else {
      a.add(v);
    }
  }

  private static double num(JsonNode n, String k) {
    JsonNode v = n.get(k);
    return v == null || !v.isNumber() ? Double.NaN : v.asDouble();
  }

  private static long time(JsonNode n, String k) {
    try {
      return Instant.parse(n.path(k).asText()).toEpochMilli();
    } catch (RuntimeException e) {
      return Long.MIN_VALUE;
    }
  }
}
