// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
package dev.runnel.demo;

import java.time.LocalDate;
import java.time.format.DateTimeFormatter;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;

/** Writes the ground truth of one generation as JSON and as Markdown, by hand (deterministic bytes). */
final class TruthWriter {
  private static final DateTimeFormatter AT = DateTimeFormatter.ofPattern("uuuu-MM-dd'T'HH:mm:ssxxx", Locale.ROOT);

  static final String HOLIDAY_RULE = "New Year's Day, Easter Monday, King's Day (27 April, 26 April when the 27th is a Sunday),"
      + " Ascension Day (Easter + 39), Whit Monday (Easter + 50), 25 and 26 December: the Netherlands' general public holidays"
      + " by their rules (from memory); the effect on charging is invented.";

  private TruthWriter() {}

  /** The holidays whose local day falls inside the stream, in date order. */
  static List<LocalDate> holidaysIn(Settings s, ChangeSchedule c) {
    List<LocalDate> out = new ArrayList<>();
    LocalDate first = ChangeSchedule.localTime(s, 0).toLocalDate();
    LocalDate last = ChangeSchedule.localTime(s, c.totalHours() - 1).toLocalDate();
    for (LocalDate d = first; !d.isAfter(last); d = d.plusDays(1)) {
      if (GroundTruth.isHoliday(d)) {
        out.add(d);
      }
    }
    return out;
  }

  private static String n(double x) { return JsonText.compact(x, 6); }

  private static String q(String s) { return JsonText.quote(s); }

  private static String at(Settings s, int hour) { return AT.format(ChangeSchedule.localTime(s, hour)); }

  private static String array(double[] xs) {
    StringBuilder sb = new StringBuilder("[");
    for (int i = 0; i < xs.length; i++) {
      sb.append(i == 0 ? "" : ", ").append(n(xs[i]));
    }
    return sb.append(']').toString();
  }

  static String json(Settings s) {
    QuillmarshGenerator g = new QuillmarshGenerator(s);
    ChangeSchedule c = g.schedule();
    long[] corruptLines = g.corruptLineNumbers();
    StringBuilder b = new StringBuilder(8192);
    b.append("{\n");
    b.append("  \"scenario\": ").append(q(GroundTruth.SCENARIO)).append(",\n");
    b.append("  \"invented\": true,\n");
    b.append("  \"note\": ").append(q("Invented data: no real cooperative, hub, place or measurement is described.")).append(",\n");
    b.append("  \"zone\": ").append(q(GroundTruth.ZONE.getId())).append(",\n");
    b.append("  \"settings\": {\"start\": ").append(q(s.start().toString()))
        .append(", \"days\": ").append(s.days())
        .append(", \"seed\": ").append(s.seed())
        .append(", \"forecast_horizon_hours\": ").append(s.forecastHorizonHours())
        .append(", \"include_forecasts\": ").append(s.includeForecasts())
        .append(", \"include_corrupt\": ").append(s.includeCorrupt())
        .append(", \"day_ahead_issue_hour\": ").append(s.dayAheadIssueHour())
        .append(", \"late_share\": ").append(n(s.lateShare()))
        .append(", \"correction_share\": ").append(n(s.correctionShare())).append("},\n");
    b.append("  \"stream\": {\"total_hours\": ").append(c.totalHours())
        .append(", \"lines\": ").append(g.countRecords())
        .append(", \"first_hour\": ").append(q(at(s, 0)))
        .append(", \"last_hour\": ").append(q(at(s, c.totalHours() - 1))).append("},\n");
    b.append("  \"target\": {\n");
    b.append("    \"formula\": ").append(q("sessions = base + hub + sum_k (sin_k sin(2 pi k h/24) + cos_k cos(2 pi k h/24))"
        + " + weekend*[Sat|Sun] + weather + temperature_per_c*temperature_c + price_per_eur*price_per_kwh"
        + " + holiday*[public holiday] + level(hub, local day) + N(0, noise_sd^2),"
        + " h = local hour of day, rounded to 0.1, no clamp; the formula gives the first reading of an actual")).append(",\n");
    b.append("    \"base_sessions\": ").append(n(GroundTruth.BASE_SESSIONS)).append(",\n");
    b.append("    \"reference_levels\": {\"hub\": \"QM-01\", \"weather\": \"clear\"},\n");
    b.append("    \"noise_sd\": ").append(n(GroundTruth.NOISE_SD)).append(",\n");
    b.append("    \"sessions_rounding\": 0.1,\n");
    b.append("    \"hour_harmonics\": [");
    for (int k = 1; k <= GroundTruth.HOUR_HARMONICS; k++) {
      b.append(k == 1 ? "" : ", ").append("{\"k\": ").append(k).append(", \"sin\": ").append(n(GroundTruth.HOUR_SIN[k - 1]))
          .append(", \"cos\": ").append(n(GroundTruth.HOUR_COS[k - 1])).append('}');
    }
    b.append("],\n");
    b.append("    \"weekend_effect\": ").append(n(GroundTruth.WEEKEND_EFFECT)).append(",\n");
    b.append("    \"weather_effect\": {");
    Weather[] ws = Weather.values();
    for (int i = 0; i < ws.length; i++) {
      b.append(i == 0 ? "" : ", ").append(q(ws[i].label())).append(": ").append(n(GroundTruth.weatherEffect(ws[i])));
    }
    b.append("},\n");
    b.append("    \"temperature_effect_per_c\": ").append(n(GroundTruth.TEMPERATURE_EFFECT_PER_C)).append(",\n");
    b.append("    \"price_effect_per_eur\": ").append(n(GroundTruth.PRICE_EFFECT_PER_EUR)).append(",\n");
    b.append("    \"price_effect_after_tariff_per_eur\": ").append(n(GroundTruth.PRICE_EFFECT_AFTER_TARIFF_PER_EUR)).append(",\n");
    b.append("    \"holiday_effect\": ").append(n(GroundTruth.HOLIDAY_EFFECT)).append(",\n");
    b.append("    \"hub_level\": {\"rule\": \"level(d) = ar * level(d-1) + u at each local midnight, per hub, from the stationary distribution; u = the 13 hubs' normal draws of sd innovation_sd*sqrt(13/12) less their mean (sd innovation_sd, no shock shared by all hubs); hidden\"")
        .append(", \"ar\": ").append(n(GroundTruth.LEVEL_AR))
        .append(", \"innovation_sd\": ").append(n(GroundTruth.LEVEL_INNOVATION_SD))
        .append(", \"stationary_sd\": ").append(n(GroundTruth.levelStationarySd())).append("}\n");
    b.append("  },\n");
    b.append("  \"holidays\": {\"rule\": ").append(q(HOLIDAY_RULE)).append(", \"dates_in_stream\": [");
    List<LocalDate> hs = holidaysIn(s, c);
    for (int i = 0; i < hs.size(); i++) {
      b.append(i == 0 ? "" : ", ").append(q(hs.get(i).toString()));
    }
    b.append("]},\n");
    b.append("  \"arrivals\": {\"actual_delay_hours_after_hour_end\": ").append(GroundTruth.ACTUAL_DELAY_HOURS)
        .append(", \"late_share\": ").append(n(s.lateShare()))
        .append(", \"late_extra_hours\": ").append(GroundTruth.LATE_EXTRA_HOURS)
        .append(", \"correction_share\": ").append(n(s.correctionShare()))
        .append(", \"correction_after_hours\": ").append(GroundTruth.CORRECTION_AFTER_HOURS)
        .append(", \"correction_revision\": ").append(q("+/-(" + n(GroundTruth.CORRECTION_MIN_SESSIONS) + " + "
            + n(GroundTruth.CORRECTION_SCALE_SESSIONS) + " |N(0,1)|), sign even, rounded to 0.1"))
        .append(", \"day_ahead_issue_hour\": ").append(s.dayAheadIssueHour())
        .append(", \"hour_ahead_requests_hours\": ").append(s.forecastHorizonHours())
        .append(", \"order\": ").append(q("event time (issued_at) hour by hour: arrivals by target hour, hub, first reading before correction;"
            + " then hour-ahead requests; then, at the day-ahead hour, the next local day's requests"))
        .append("},\n");
    b.append("  \"perfect_model\": {\"day_ahead_rmse\": ").append(n(GroundTruth.dayAheadRmse()))
        .append(", \"day_ahead_mae\": ").append(n(GroundTruth.dayAheadMae()))
        .append(", \"day_ahead_rule\": ").append(q("sqrt(noise_sd^2 + level innovation_sd^2 + (temperature_per_c * day-ahead temperature error sd)^2);"
            + " MAE = RMSE sqrt(2/pi) for a normal error (common practice); a model that knows the truth and each hub's level on the issue day,"
            + " settled against first readings"))
        .append(", \"noise_floor_rmse\": ").append(n(GroundTruth.noiseFloorRmse()))
        .append(", \"noise_floor_mae\": ").append(n(GroundTruth.noiseFloorMae())).append("},\n");
    b.append("  \"hubs\": [\n");
    for (int j = 0; j < GroundTruth.HUBS.size(); j++) {
      GroundTruth.Hub h = GroundTruth.HUBS.get(j);
      b.append("    {\"id\": ").append(q(h.id())).append(", \"name\": ").append(q(h.name()))
          .append(", \"sessions_effect\": ").append(n(h.sessionsEffect()))
          .append(", \"temperature_offset_c\": ").append(n(h.temperatureOffsetC()))
          .append(", \"price_markup_per_kwh\": ").append(n(h.priceMarkupPerKwh()));
      if (j == GroundTruth.OPENING_HUB) {
        b.append(", \"reports_from\": ").append(q(at(s, c.openingHour())));
      }
      if (j == GroundTruth.CLOSING_HUB) {
        b.append(", \"reports_until_before\": ").append(q(at(s, Math.min(c.closingHour(), c.totalHours() - 1))));
      }
      b.append('}').append(j + 1 < GroundTruth.HUBS.size() ? "," : "").append('\n');
    }
    b.append("  ],\n");
    b.append("  \"changes\": {\n");
    b.append("    \"hub_opens\": {\"hub\": \"QM-13\", \"fraction\": ").append(n(GroundTruth.OPENING_AT_FRACTION))
        .append(", \"hour\": ").append(c.openingHour()).append(", \"at\": ").append(q(at(s, c.openingHour()))).append("},\n");
    b.append("    \"hub_closes\": {\"hub\": \"QM-05\", \"fraction\": ").append(n(GroundTruth.CLOSING_AT_FRACTION))
        .append(", \"first_hour_absent\": ").append(c.closingHour()).append(", \"at\": ").append(q(at(s, c.closingHour()))).append("},\n");
    b.append("    \"tariff_change\": {\"fraction\": ").append(n(GroundTruth.TARIFF_CHANGE_AT_FRACTION))
        .append(", \"rule\": \"first local midnight at or after floor(fraction * total_hours)\"")
        .append(", \"hour\": ").append(c.tariffChangeHour()).append(", \"at\": ").append(q(at(s, c.tariffChangeHour())))
        .append(", \"price_effect_before\": ").append(n(GroundTruth.PRICE_EFFECT_PER_EUR))
        .append(", \"price_effect_after\": ").append(n(GroundTruth.PRICE_EFFECT_AFTER_TARIFF_PER_EUR)).append("},\n");
    b.append("    \"fahrenheit_incident\": {\"fraction\": ").append(n(GroundTruth.FAHRENHEIT_AT_FRACTION))
        .append(", \"first_hour\": ").append(c.fahrenheitFirstHour()).append(", \"hours\": ").append(c.fahrenheitHours())
        .append(", \"from\": ").append(q(at(s, c.fahrenheitFirstHour())))
        .append(", \"last\": ").append(q(at(s, c.fahrenheitFirstHour() + c.fahrenheitHours() - 1)))
        .append(", \"rule\": \"every line whose issued_at is in these hours (actuals arriving and requests issued then) carries temperature_c = c*9/5+32 with 2 decimals; sessions follow c\"},\n");
    b.append("    \"corrupt_lines\": [\n");
    for (int k = 0; k < c.corrupt().size(); k++) {
      ChangeSchedule.CorruptPosition p = c.corrupt().get(k);
      b.append("      {\"kind\": ").append(q(p.kind().name().toLowerCase(Locale.ROOT)))
          .append(", \"expected_reject\": ").append(q(p.kind().expectedRejectId()))
          .append(", \"fraction\": ").append(n(GroundTruth.CORRUPT_AT_FRACTIONS[k]))
          .append(", \"hour\": ").append(p.hour()).append(", \"hub\": ").append(q(p.hubId()))
          .append(", \"observed_at\": ").append(q(at(s, p.hour())))
          .append(", \"line\": ").append(corruptLines[k])
          .append(", \"present\": ").append(s.includeCorrupt())
          .append('}').append(k + 1 < c.corrupt().size() ? "," : "").append('\n');
    }
    b.append("    ]\n");
    b.append("  },\n");
    b.append("  \"features\": {\n");
    b.append("    \"weather\": {\"stay_probability\": ").append(n(GroundTruth.WEATHER_STAY))
        .append(", \"categories\": [\"clear\", \"cloudy\", \"rain\", \"snow\"]")
        .append(", \"winter_weights\": ").append(array(GroundTruth.WEATHER_WINTER))
        .append(", \"summer_weights\": ").append(array(GroundTruth.WEATHER_SUMMER))
        .append(", \"winter_share\": \"(1 + cos(2 pi (day_of_year - 20) / 365.25)) / 2\"},\n");
    b.append("    \"temperature_c\": {\"annual_mean\": ").append(n(GroundTruth.TEMP_ANNUAL_MEAN_C))
        .append(", \"seasonal_amplitude\": ").append(n(GroundTruth.TEMP_SEASONAL_AMPLITUDE_C))
        .append(", \"coldest_day_of_year\": ").append(n(GroundTruth.COLDEST_DAY_OF_YEAR))
        .append(", \"daily_amplitude\": ").append(n(GroundTruth.TEMP_DAILY_AMPLITUDE_C))
        .append(", \"peak_hour\": ").append(n(GroundTruth.TEMP_PEAK_HOUR))
        .append(", \"regional_ar\": ").append(n(GroundTruth.TEMP_REGIONAL_AR))
        .append(", \"regional_innovation_sd\": ").append(n(GroundTruth.TEMP_REGIONAL_INNOVATION_C))
        .append(", \"hub_ar\": ").append(n(GroundTruth.TEMP_HUB_AR))
        .append(", \"hub_innovation_sd\": ").append(n(GroundTruth.TEMP_HUB_INNOVATION_C))
        .append(", \"weather_shift\": ").append(array(GroundTruth.TEMP_WEATHER_SHIFT_C))
        .append(", \"rounding\": 0.1},\n");
    b.append("    \"price_per_kwh\": {\"tariff\": {\"00-06\": ").append(n(GroundTruth.TARIFF_NIGHT))
        .append(", \"07-16\": ").append(n(GroundTruth.TARIFF_DAY))
        .append(", \"17-20\": ").append(n(GroundTruth.TARIFF_PEAK))
        .append(", \"21-23\": ").append(n(GroundTruth.TARIFF_EVENING)).append('}')
        .append(", \"day_offset_sd\": ").append(n(GroundTruth.PRICE_DAY_SD))
        .append(", \"hour_noise_sd\": ").append(n(GroundTruth.PRICE_HOUR_SD))
        .append(", \"floor\": ").append(n(GroundTruth.PRICE_FLOOR))
        .append(", \"rounding\": 0.001},\n");
    b.append("    \"forecasts\": {\"weather\": \"the true category\"")
        .append(", \"temperature_error_sd_per_hour_ahead\": ").append(n(GroundTruth.FORECAST_TEMP_SD_PER_HOUR))
        .append(", \"temperature_error_sd_day_ahead\": ").append(n(GroundTruth.FORECAST_TEMP_SD_DAY_AHEAD_C))
        .append(", \"price\": \"the published future price (day-ahead tariff)\"}\n");
    b.append("  }\n");
    b.append("}\n");
    return b.toString();
  }

  static String markdown(Settings s) {
    QuillmarshGenerator g = new QuillmarshGenerator(s);
    ChangeSchedule c = g.schedule();
    long[] corruptLines = g.corruptLineNumbers();
    StringBuilder b = new StringBuilder(8192);
    b.append("# Quillmarsh Charging: ground truth (invented data)\n\n");
    b.append("Quillmarsh Charging is an invented EV-charging cooperative. Every hub, name and number here is made up; ")
        .append("the data are generated by `dev.runnel.demo.QuillmarshGenerator`.\n\n");
    b.append("Settings: start `").append(s.start()).append("` (").append(GroundTruth.ZONE.getId()).append("), ")
        .append(s.days()).append(" days, seed `").append(s.seed()).append("`, forecast horizon ")
        .append(s.forecastHorizonHours()).append(" h, forecasts ").append(s.includeForecasts() ? "on" : "off")
        .append(", corrupt lines ").append(s.includeCorrupt() ? "on" : "off")
        .append(", day-ahead requests at ").append(s.dayAheadIssueHour() < 0 ? "none" : String.format(Locale.ROOT, "%02d:00", s.dayAheadIssueHour()))
        .append(", late share ").append(n(s.lateShare())).append(", correction share ").append(n(s.correctionShare())).append(". ")
        .append(c.totalHours()).append(" hours, ").append(g.countRecords()).append(" lines.\n\n");
    b.append("## Target\n\n");
    b.append("```\nsessions = base + hub + sum_{k=1..3} (sin_k sin(2 pi k h/24) + cos_k cos(2 pi k h/24))\n")
        .append("         + weekend * [local Saturday or Sunday] + weather + b_temp * temperature_c\n")
        .append("         + b_price * price_per_kwh + holiday * [public holiday] + level(hub, local day)\n")
        .append("         + N(0, sd^2)        rounded to 0.1, no clamp (the first reading of an actual)\n```\n\n");
    b.append("h is the local hour of day (0..23). temperature_c and price_per_kwh are the published values (true degC).\n\n");
    b.append("| parameter | value |\n|---|---|\n");
    b.append("| base (QM-01, clear, weekday) | ").append(n(GroundTruth.BASE_SESSIONS)).append(" |\n");
    for (int k = 1; k <= GroundTruth.HOUR_HARMONICS; k++) {
      b.append("| hour sin k=").append(k).append(" | ").append(n(GroundTruth.HOUR_SIN[k - 1])).append(" |\n");
      b.append("| hour cos k=").append(k).append(" | ").append(n(GroundTruth.HOUR_COS[k - 1])).append(" |\n");
    }
    b.append("| weekend | ").append(n(GroundTruth.WEEKEND_EFFECT)).append(" |\n");
    for (Weather w : Weather.values()) {
      b.append("| weather ").append(w.label()).append(" | ").append(n(GroundTruth.weatherEffect(w))).append(" |\n");
    }
    b.append("| temperature, per degC | ").append(n(GroundTruth.TEMPERATURE_EFFECT_PER_C)).append(" |\n");
    b.append("| price, per EUR/kWh, before the tariff change | ").append(n(GroundTruth.PRICE_EFFECT_PER_EUR)).append(" |\n");
    b.append("| price, per EUR/kWh, from the tariff change on | ").append(n(GroundTruth.PRICE_EFFECT_AFTER_TARIFF_PER_EUR)).append(" |\n");
    b.append("| public holiday | ").append(n(GroundTruth.HOLIDAY_EFFECT)).append(" |\n");
    b.append("| hub level: AR(1) per local day, coefficient | ").append(n(GroundTruth.LEVEL_AR)).append(" |\n");
    b.append("| hub level: innovation sd (stationary sd ").append(n(GroundTruth.levelStationarySd())).append(") | ")
        .append(n(GroundTruth.LEVEL_INNOVATION_SD)).append(" |\n");
    b.append("| noise sd | ").append(n(GroundTruth.NOISE_SD)).append(" |\n\n");
    b.append("Each hub's level is hidden: it changes at each local midnight (level(d) = ").append(n(GroundTruth.LEVEL_AR))
        .append(" level(d-1) + u, u the 13 hubs' normal draws of sd ").append(n(GroundTruth.LEVEL_INNOVATION_SD))
        .append(" sqrt(13/12) less their mean, so each u has sd ").append(n(GroundTruth.LEVEL_INNOVATION_SD))
        .append(" and no shock is shared by all hubs), so a hub's own recent actuals reveal it.\n\n");
    b.append("Public holidays: ").append(HOLIDAY_RULE).append(" In this stream: ");
    List<LocalDate> hs = holidaysIn(s, c);
    b.append(hs.isEmpty() ? "none" : hs.stream().map(LocalDate::toString).reduce((x, y) -> x + ", " + y).get()).append(".\n\n");
    b.append("## How records arrive\n\n");
    b.append("- Every line has `issued_at` (its event time: when it was issued or arrived) and `observed_at` (the start of the hour it is about). ")
        .append("The stream is in `issued_at` order.\n");
    b.append("- An actual arrives ").append(GroundTruth.ACTUAL_DELAY_HOURS).append(" h after its hour ends; a share ")
        .append(n(s.lateShare())).append(" arrives ").append(GroundTruth.LATE_EXTRA_HOURS).append(" h later (a day late).\n");
    b.append("- A share ").append(n(s.correctionShare())).append(" of actuals is followed, ").append(GroundTruth.CORRECTION_AFTER_HOURS)
        .append(" h after it arrived, by a `\"kind\":\"correction\"` line for the same hub and hour: the first reading +/-(")
        .append(n(GroundTruth.CORRECTION_MIN_SESSIONS)).append(" + ").append(n(GroundTruth.CORRECTION_SCALE_SESSIONS))
        .append(" |N(0,1)|). The formula above gives the first reading.\n");
    b.append("- Every hour, requests (no `sessions`) for each hub and the next ").append(s.forecastHorizonHours())
        .append(" hour(s); every day at ").append(s.dayAheadIssueHour() < 0 ? "(none)" : String.format(Locale.ROOT, "%02d:00", s.dayAheadIssueHour()))
        .append(" local, requests for each hub and every hour of the next local day.\n\n");
    b.append("## What a perfect model scores\n\n");
    b.append("| horizon | RMSE | MAE | rule |\n|---|---|---|---|\n");
    b.append("| day-ahead | ").append(n(GroundTruth.dayAheadRmse())).append(" | ").append(n(GroundTruth.dayAheadMae()))
        .append(" | sqrt(noise sd^2 + level innovation sd^2 + (b_temp * ").append(n(GroundTruth.FORECAST_TEMP_SD_DAY_AHEAD_C))
        .append(")^2); MAE = RMSE sqrt(2/pi) for a normal error (common practice) |\n");
    b.append("| noise floor (any horizon) | ").append(n(GroundTruth.noiseFloorRmse())).append(" | ").append(n(GroundTruth.noiseFloorMae()))
        .append(" | noise sd; no model beats it |\n\n");
    b.append("The perfect model knows this whole truth and each hub's level on the issue day, reads the request's fields, ")
        .append("and is settled against the first reading.\n\n");
    b.append("## Hubs\n\n| id | name (invented) | sessions effect | temperature offset degC | price markup EUR/kWh | reports |\n|---|---|---|---|---|---|\n");
    for (int j = 0; j < GroundTruth.HUBS.size(); j++) {
      GroundTruth.Hub h = GroundTruth.HUBS.get(j);
      String reports = j == GroundTruth.OPENING_HUB ? "from " + at(s, c.openingHour())
          : j == GroundTruth.CLOSING_HUB ? "before " + at(s, c.closingHour()) : "all along";
      b.append("| ").append(h.id()).append(" | ").append(h.name()).append(" | ").append(n(h.sessionsEffect()))
          .append(" | ").append(n(h.temperatureOffsetC())).append(" | ").append(n(h.priceMarkupPerKwh()))
          .append(" | ").append(reports).append(" |\n");
    }
    b.append("\n## Planned changes\n\nHours count elapsed hours from the start (H = ").append(c.totalHours()).append(").\n\n");
    b.append("| change | rule | hour | local time |\n|---|---|---|---|\n");
    b.append("| QM-13 opens | floor(0.35 H) | ").append(c.openingHour()).append(" | ").append(at(s, c.openingHour())).append(" |\n");
    b.append("| QM-05 closes (first hour absent) | floor(0.65 H) | ").append(c.closingHour()).append(" | ").append(at(s, c.closingHour())).append(" |\n");
    b.append("| tariff change: price effect ").append(n(GroundTruth.PRICE_EFFECT_PER_EUR)).append(" to ")
        .append(n(GroundTruth.PRICE_EFFECT_AFTER_TARIFF_PER_EUR)).append(" | first local midnight at or after floor(0.50 H) | ")
        .append(c.tariffChangeHour()).append(" | ").append(at(s, c.tariffChangeHour())).append(" |\n");
    b.append("| degF incident: ").append(c.fahrenheitHours()).append(" hours of temperature_c = c*9/5+32 (all lines emitted then) | floor(0.42 H) | ")
        .append(c.fahrenheitFirstHour()).append(" | ").append(at(s, c.fahrenheitFirstHour())).append(" |\n\n");
    b.append("Corrupt lines (each replaces the actual line of one hub; ").append(s.includeCorrupt() ? "present" : "absent: --no-corrupt")
        .append("):\n\n| kind | expected reject | rule | hour | hub | line |\n|---|---|---|---|---|---|\n");
    for (int k = 0; k < c.corrupt().size(); k++) {
      ChangeSchedule.CorruptPosition p = c.corrupt().get(k);
      b.append("| ").append(p.kind().name().toLowerCase(Locale.ROOT)).append(" | ").append(p.kind().expectedRejectId())
          .append(" | floor(").append(n(GroundTruth.CORRUPT_AT_FRACTIONS[k])).append(" H) | ").append(p.hour())
          .append(" | ").append(p.hubId()).append(" | ").append(corruptLines[k]).append(" |\n");
    }
    b.append("\n## Feature processes\n\n");
    b.append("- Weather, per hub, hourly Markov chain: stays with probability ").append(n(GroundTruth.WEATHER_STAY))
        .append(", else draws from seasonal weights w*winter + (1-w)*summer, winter (clear, cloudy, rain, snow) = ")
        .append(array(GroundTruth.WEATHER_WINTER)).append(", summer = ").append(array(GroundTruth.WEATHER_SUMMER))
        .append(", w = (1 + cos(2 pi (day_of_year - 20)/365.25))/2.\n");
    b.append("- Temperature degC = ").append(n(GroundTruth.TEMP_ANNUAL_MEAN_C)).append(" - ").append(n(GroundTruth.TEMP_SEASONAL_AMPLITUDE_C))
        .append(" cos(2 pi (day_of_year - 20)/365.25) + ").append(n(GroundTruth.TEMP_DAILY_AMPLITUDE_C))
        .append(" cos(2 pi (h - 15)/24) + hub offset + regional AR(1) (").append(n(GroundTruth.TEMP_REGIONAL_AR)).append(", sd ")
        .append(n(GroundTruth.TEMP_REGIONAL_INNOVATION_C)).append(") + hub AR(1) (").append(n(GroundTruth.TEMP_HUB_AR)).append(", sd ")
        .append(n(GroundTruth.TEMP_HUB_INNOVATION_C)).append(") + weather shift ").append(array(GroundTruth.TEMP_WEATHER_SHIFT_C))
        .append(", rounded to 0.1.\n");
    b.append("- Price EUR/kWh = tariff (00-06 ").append(n(GroundTruth.TARIFF_NIGHT)).append(", 07-16 ").append(n(GroundTruth.TARIFF_DAY))
        .append(", 17-20 ").append(n(GroundTruth.TARIFF_PEAK)).append(", 21-23 ").append(n(GroundTruth.TARIFF_EVENING))
        .append(") + hub markup + day offset N(0, ").append(n(GroundTruth.PRICE_DAY_SD)).append("^2) + hourly noise N(0, ")
        .append(n(GroundTruth.PRICE_HOUR_SD)).append("^2), floor ").append(n(GroundTruth.PRICE_FLOOR)).append(", rounded to 0.001.\n");
    b.append("- Requests issued at hour t for t+k (k = 1..").append(s.forecastHorizonHours()).append("): the true weather category; temperature = truth + N(0, (")
        .append(n(GroundTruth.FORECAST_TEMP_SD_PER_HOUR)).append(" k)^2); day-ahead requests: temperature = truth + N(0, ")
        .append(n(GroundTruth.FORECAST_TEMP_SD_DAY_AHEAD_C)).append("^2); price = the published future price; no sessions field.\n");
    return b.toString();
  }
}
