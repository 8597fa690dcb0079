// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
package dev.runnel.demo;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.time.OffsetDateTime;
import java.time.format.DateTimeParseException;
import java.util.Iterator;
import java.util.Set;
import java.util.regex.Pattern;

/**
 * Test-side strict reader of the documented record schema, written independently of the generator.
 * Parsing is by Jackson databind with its default (strict JSON: no NaN tokens), as the reference parser.
 */
final class SchemaCheck {
  private static final ObjectMapper MAPPER = new ObjectMapper();
  private static final Pattern HUB = Pattern.compile("QM-\\d\\d");
  private static final Set<String> WEATHER = Set.of("clear", "cloudy", "rain", "snow");
  private static final Set<String> FIELDS = Set.of("kind", "hub", "issued_at", "observed_at", "weather", "temperature_c", "price_per_kwh", "sessions");

  /** A line that passed the schema. sessions is NaN for a forecast. */
  record Row(boolean forecast, String hub, OffsetDateTime observedAt, String weather, double temperature, double price, double sessions,
      OffsetDateTime issuedAt, boolean correction) {}

  private SchemaCheck() {}

  /** The row, or null if the line does not follow the documented schema. */
  static Row parse(String line) {
    JsonNode n;
    try {
      n = MAPPER.readTree(line);
    } catch (Exception e) {
      return null;
    }
    if (n == null || !n.isObject()) {
      return null;
    }
    for (Iterator<String> it = n.fieldNames(); it.hasNext(); ) {
      if (!FIELDS.contains(it.next())) {
        return null;
      }
    }
    JsonNode kind = n.get("kind");
    JsonNode hub = n.get("hub");
    JsonNode at = n.get("observed_at");
    JsonNode issued = n.get("issued_at");
    JsonNode weather = n.get("weather");
    JsonNode temp = n.get("temperature_c");
    JsonNode price = n.get("price_per_kwh");
    JsonNode sessions = n.get("sessions");
    if (kind == null || !kind.isTextual() || hub == null || !hub.isTextual() || at == null || !at.isTextual()
        || issued == null || !issued.isTextual()
        || weather == null || !weather.isTextual() || temp == null || !temp.isNumber() || price == null || !price.isNumber()) {
      return null;
    }
    boolean forecast;
    if (kind.asText().equals("forecast")) {
      forecast = true;
      if (sessions != null) {
        return null;
      }
    } else if (kind.asText().equals("actual") || kind.asText().equals("correction")) {
      forecast = false;
      if (sessions == null || !sessions.isNumber() || !Double.isFinite(sessions.asDouble())) {
        return null;
      }
    } else {
      return null;
    }
    if (!HUB.matcher(hub.asText()).matches() || !WEATHER.contains(weather.asText())) {
      return null;
    }
    OffsetDateTime t;
    OffsetDateTime i;
    try {
      t = OffsetDateTime.parse(at.asText());
      i = OffsetDateTime.parse(issued.asText());
    } catch (DateTimeParseException e) {
      return null;
    }
    if (t.getYear() < 2000 || t.getYear() > 2100 || i.getYear() < 2000 || i.getYear() > 2100) {   // plausibility bound chosen for this scenario
      return null;
    }
    double tv = temp.asDouble();
    double pv = price.asDouble();
    if (!Double.isFinite(tv) || !Double.isFinite(pv)) {
      return null;
    }
    return new Row(forecast, hub.asText(), t, weather.asText(), tv, pv, forecast ? Double.NaN : sessions.asDouble(), i,
        kind.asText().equals("correction"));
  }
}
