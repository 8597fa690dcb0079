// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
package dev.runnel.demo;

import java.time.DayOfWeek;
import java.time.LocalDate;
import java.time.ZoneId;
import java.util.ArrayList;
import java.util.List;

/**
 * The documented ground truth of the invented Quillmarsh Charging scenario: every number the
 * generator uses, as constants, so tests and demo summaries can compare a fitted model with them.
 *
 * <p>Target (one {@code actual} record of hub {@code j} at local hour {@code h}):
 * <pre>
 * sessions = BASE_SESSIONS + hubEffect(j)
 *          + sum_{k=1..3} ( HOUR_SIN[k-1] sin(2 pi k h / 24) + HOUR_COS[k-1] cos(2 pi k h / 24) )
 *          + WEEKEND_EFFECT * [local Saturday or Sunday]
 *          + weatherEffect(weather)                      (clear = 0, the reference)
 *          + TEMPERATURE_EFFECT_PER_C * temperature_c    (the true value in degrees Celsius)
 *          + priceEffect * price_per_kwh                 (PRICE_EFFECT_PER_EUR, doubled from the tariff change on)
 *          + HOLIDAY_EFFECT * [local public holiday]       ({@link #isHoliday(LocalDate)})
 *          + level(j, local day)                         (each hub's AR(1) daily level, below)
 *          + N(0, NOISE_SD^2)
 * </pre>
 * The hub's daily level changes at each local midnight: {@code level(d) = LEVEL_AR * level(d-1) + u},
 * started from its stationary distribution, where the innovations u of the 13 hubs are independent
 * normal draws of sd {@code LEVEL_INNOVATION_SD * sqrt(13/12)} less their mean: each u has sd
 * {@code LEVEL_INNOVATION_SD}, and the levels add no shock shared by all hubs on a day (which would
 * blur the day's price effect, whose day offset is shared too). It is hidden (no field
 * carries it) but persistent, so a hub's own recent actuals reveal it; the holidays are a documented
 * list of the region's public holidays. Both are there so that history and special-day features can
 * show a gain (issue 16).
 * then rounded to one decimal (adds variance 0.1^2/12 = 0.00083). {@code h} is the local hour of day
 * (0..23) in {@link #ZONE}; temperature and price are the published values (rounded to 0.1 degC and
 * 0.001 EUR/kWh) so a linear model on the published fields is exactly right. No clamp at 0 is
 * applied: the expected value stays far above 0 (see the module tests).
 *
 * <p>Planned changes are placed at fractions of the stream's length in hours ({@link ChangeSchedule}).
 */
public final class GroundTruth {
  private GroundTruth() {}

  /** Scenario name; the scenario is invented. */
  public static final String SCENARIO = "Quillmarsh Charging (invented)";
  /** Time zone of all local times (IANA). */
  public static final ZoneId ZONE = ZoneId.of("Europe/Amsterdam");

  // ---- target -------------------------------------------------------------------------------
  /** Expected sessions of the reference hub QM-01 at harmonics 0, weekday, clear, 0 degC, price 0. */
  public static final double BASE_SESSIONS = 40.0;
  /** Standard deviation of the Gaussian noise on sessions. */
  public static final double NOISE_SD = 1.5;
  /** Number of hour-of-day harmonics in the truth. */
  public static final int HOUR_HARMONICS = 3;
  /** Weight of sin(2 pi k h / 24), k = 1..3. */
  static final double[] HOUR_SIN = {-4.0, 1.5, -0.8};
  /** Weight of cos(2 pi k h / 24), k = 1..3. */
  static final double[] HOUR_COS = {-6.0, 2.0, 0.6};
  /** Effect of a local Saturday or Sunday. */
  public static final double WEEKEND_EFFECT = -4.0;
  /** Sessions per degree Celsius (cold reduces sessions). */
  public static final double TEMPERATURE_EFFECT_PER_C = 0.20;
  /** Sessions per EUR/kWh before the tariff change. */
  public static final double PRICE_EFFECT_PER_EUR = -18.0;
  /** Sessions per EUR/kWh from the tariff change on: twice {@link #PRICE_EFFECT_PER_EUR}. */
  public static final double PRICE_EFFECT_AFTER_TARIFF_PER_EUR = 2.0 * PRICE_EFFECT_PER_EUR;

  /**
   * One charging hub. All names are invented.
   * @param id the {@code hub} field value
   * @param name invented display name
   * @param sessionsEffect sessions relative to QM-01 (the reference, 0)
   * @param temperatureOffsetC fixed local offset of the hub's temperature, degC
   * @param priceMarkupPerKwh fixed markup on the regional tariff, EUR/kWh
   */
  public record Hub(String id, String name, double sessionsEffect, double temperatureOffsetC, double priceMarkupPerKwh) {}

  /** The 13 hubs in hub order; QM-13 opens mid-stream, QM-05 closes. Index = number - 1. */
  public static final List<Hub> HUBS = List.of(
      new Hub("QM-01", "Quillmarsh Quay", 0.0, 0.0, 0.000),
      new Hub("QM-02", "Reedhaven Market", 4.5, -0.3, 0.010),
      new Hub("QM-03", "Fenwick Lock", -2.0, 0.4, -0.010),
      new Hub("QM-04", "Alderdyke Depot", 7.0, 0.2, 0.020),
      new Hub("QM-05", "Marrow Staithe", -3.5, -0.6, -0.015),
      new Hub("QM-06", "Brackenmoor Halt", 1.5, 0.1, 0.005),
      new Hub("QM-07", "Tollgate Flats", 9.0, 0.5, 0.030),
      new Hub("QM-08", "Heronsend", -1.0, -0.4, -0.005),
      new Hub("QM-09", "Saltbridge Row", 3.0, 0.3, 0.015),
      new Hub("QM-10", "Withy Cross", -4.0, -0.8, -0.020),
      new Hub("QM-11", "Eelmere Park", 5.5, 0.6, 0.025),
      new Hub("QM-12", "Dunlin Green", 2.0, -0.2, 0.000),
      new Hub("QM-13", "Sedgefield Yard", 6.0, 0.0, 0.010));
  /** Index in {@link #HUBS} of the hub that opens mid-stream (QM-13). */
  public static final int OPENING_HUB = 12;
  /** Index in {@link #HUBS} of the hub that closes (QM-05). */
  public static final int CLOSING_HUB = 4;

  /** Effect of a weather category on sessions (clear is the reference). */
  public static double weatherEffect(Weather w) {
    switch (w) {
      case CLEAR: return 0.0;
      case CLOUDY: return -0.8;
      case RAIN: return -2.5;
      case SNOW: return -5.0;
      default: throw new IllegalArgumentException("weather " + w);
    }
  }

  // ---- planned changes (fractions of the stream's hours; see ChangeSchedule) ------------------
  /** QM-13 reports from hour floor(0.35 H) on. */
  public static final double OPENING_AT_FRACTION = 0.35;
  /** QM-05 reports before hour floor(0.65 H) only. */
  public static final double CLOSING_AT_FRACTION = 0.65;
  /** The tariff change takes effect at the first local midnight at or after hour floor(0.50 H). */
  public static final double TARIFF_CHANGE_AT_FRACTION = 0.50;
  /** The degF incident starts at hour floor(0.42 H). */
  public static final double FAHRENHEIT_AT_FRACTION = 0.42;
  /** The degF incident lasts this many consecutive hours. */
  public static final int FAHRENHEIT_HOURS = 6;
  /** The corrupt lines replace actual lines at hours floor(f H) for these f, in {@link CorruptKind} order. */
  static final double[] CORRUPT_AT_FRACTIONS = {0.15, 0.30, 0.45, 0.70, 0.85};
  /** A truncated line keeps this many characters. */
  public static final int TRUNCATE_AT_CHARS = 60;

  // ---- the generating processes of the features --------------------------------------------
  /** Probability that a hub's weather stays the same from one hour to the next. */
  public static final double WEATHER_STAY = 0.90;
  /** Category weights (clear, cloudy, rain, snow) in deep winter. */
  static final double[] WEATHER_WINTER = {0.25, 0.40, 0.20, 0.15};
  /** Category weights (clear, cloudy, rain, snow) in high summer. */
  static final double[] WEATHER_SUMMER = {0.45, 0.35, 0.20, 0.00};
  /** Day of year of the coldest point of the seasonal cycles. */
  public static final double COLDEST_DAY_OF_YEAR = 20.0;
  /** Mean temperature of the year, degC. */
  public static final double TEMP_ANNUAL_MEAN_C = 10.5;
  /** Seasonal amplitude of the temperature, degC (mean - amplitude on the coldest day). */
  public static final double TEMP_SEASONAL_AMPLITUDE_C = 7.5;
  /** Daily amplitude of the temperature, degC. */
  public static final double TEMP_DAILY_AMPLITUDE_C = 3.5;
  /** Local hour of the daily temperature peak. */
  public static final double TEMP_PEAK_HOUR = 15.0;
  /** AR(1) coefficient of the regional temperature anomaly (per hour). */
  public static final double TEMP_REGIONAL_AR = 0.97;
  /** Innovation sd of the regional anomaly, degC. */
  public static final double TEMP_REGIONAL_INNOVATION_C = 0.35;
  /** AR(1) coefficient of each hub's own temperature anomaly (per hour). */
  public static final double TEMP_HUB_AR = 0.90;
  /** Innovation sd of each hub's anomaly, degC. */
  public static final double TEMP_HUB_INNOVATION_C = 0.30;
  /** Temperature shift of a weather category (clear, cloudy, rain, snow), degC. */
  static final double[] TEMP_WEATHER_SHIFT_C = {0.0, -0.5, -1.0, -2.0};
  /** Regional tariff, EUR/kWh, by local hour: 00-06 night, 07-16 day, 17-20 peak, 21-23 evening. */
  public static final double TARIFF_NIGHT = 0.17;
  /** Day tariff, EUR/kWh (07:00-16:59). */
  public static final double TARIFF_DAY = 0.25;
  /** Peak tariff, EUR/kWh (17:00-20:59). */
  public static final double TARIFF_PEAK = 0.34;
  /** Evening tariff, EUR/kWh (21:00-23:59). */
  public static final double TARIFF_EVENING = 0.22;
  /** Sd of the offset shared by all hubs for one local calendar day, EUR/kWh. */
  public static final double PRICE_DAY_SD = 0.025;
  /** Sd of each hub's hourly price noise, EUR/kWh. */
  public static final double PRICE_HOUR_SD = 0.012;
  /** Published prices are never below this floor, EUR/kWh (a clamp on the price, not on sessions). */
  public static final double PRICE_FLOOR = 0.05;
  /** Sd of an hour-ahead request's temperature error per hour ahead, degC (k hours ahead: 0.4 k). Requests carry the true weather category. */
  public static final double FORECAST_TEMP_SD_PER_HOUR = 0.4;

  // ---- each hub's daily level and the region's public holidays -----------------------------
  /** AR(1) coefficient of each hub's daily level, from one local day to the next (the levels are centred across the 13 hubs). */
  public static final double LEVEL_AR = 0.8;
  /** Innovation sd of each hub's daily level, sessions. */
  public static final double LEVEL_INNOVATION_SD = 1.0;
  /** Effect of a public holiday of the demo's region on every hour of the local day, sessions. */
  public static final double HOLIDAY_EFFECT = -6.0;

  // ---- how records arrive (see QuillmarshGenerator and Settings for the shares) -------------
  /** An actual arrives this many hours after its hour ends (event time = hour start + 1 h + this). */
  public static final int ACTUAL_DELAY_HOURS = 1;
  /** A late actual arrives this many hours after it would have (a day late). */
  public static final int LATE_EXTRA_HOURS = 24;
  /** A correction arrives this many hours after the actual it corrects. */
  public static final int CORRECTION_AFTER_HOURS = 48;
  /** A correction revises the first reading by at least this many sessions (up or down). */
  public static final double CORRECTION_MIN_SESSIONS = 1.0;
  /** ... plus this many times |N(0, 1)| sessions. */
  public static final double CORRECTION_SCALE_SESSIONS = 3.0;
  /** Sd of a day-ahead forecast temperature's error, degC (a day-ahead request's {@code temperature_c}). */
  public static final double FORECAST_TEMP_SD_DAY_AHEAD_C = 1.5;

  /** Stationary sd of a hub's daily level: {@code LEVEL_INNOVATION_SD / sqrt(1 - LEVEL_AR^2)}. */
  public static double levelStationarySd() {
    return LEVEL_INNOVATION_SD / StrictMath.sqrt(1.0 - LEVEL_AR * LEVEL_AR);
  }

  /**
   * Expected RMSE of a perfect model's day-ahead forecasts, settled against the first actual: a model
   * that knows this whole truth and each hub's level on the issue day, and reads the request's fields
   * (its weather category is the true one; its temperature has an error of sd
   * {@link #FORECAST_TEMP_SD_DAY_AHEAD_C}). What it cannot know is the noise, the next day's level
   * innovation and the temperature error; they are independent normals, so
   * {@code RMSE = sqrt(NOISE_SD^2 + LEVEL_INNOVATION_SD^2 + (TEMPERATURE_EFFECT_PER_C * FORECAST_TEMP_SD_DAY_AHEAD_C)^2)}.
   * Leaves out the 0.1 rounding of sessions and temperatures (adds less than 0.001 to the square).
   */
  public static double dayAheadRmse() {
    double t = TEMPERATURE_EFFECT_PER_C * FORECAST_TEMP_SD_DAY_AHEAD_C;
    return StrictMath.sqrt(NOISE_SD * NOISE_SD + LEVEL_INNOVATION_SD * LEVEL_INNOVATION_SD + t * t);
  }

  /** Expected MAE of the perfect day-ahead model: {@code dayAheadRmse() * sqrt(2/pi)} (a normal error's mean absolute value; common practice). */
  public static double dayAheadMae() { return dayAheadRmse() * StrictMath.sqrt(2.0 / StrictMath.PI); }

  /** The noise floor no model beats, as RMSE: {@link #NOISE_SD}. */
  public static double noiseFloorRmse() { return NOISE_SD; }

  /** The noise floor as MAE: {@code NOISE_SD * sqrt(2/pi)} (common practice for a normal error). */
  public static double noiseFloorMae() { return NOISE_SD * StrictMath.sqrt(2.0 / StrictMath.PI); }

  /**
   * Whether a local date is one of the demo region's public holidays: New Year's Day (1 January),
   * Easter Monday, King's Day (27 April, or 26 April when the 27th is a Sunday), Ascension Day
   * (Easter + 39 days), Whit Monday (Easter + 50 days), Christmas Day and the day after (25 and 26
   * December). These are the Netherlands' general public holidays by their rules (from memory;
   * Good Friday and Liberation Day, not general days off, are left out); the effect on charging is
   * invented.
   */
  public static boolean isHoliday(LocalDate d) {
    int m = d.getMonthValue();
    int day = d.getDayOfMonth();
    if ((m == 1 && day == 1) || (m == 12 && (day == 25 || day == 26))) {
      return true;
    }
    if (m == 4 && (day == 26 || day == 27)) {
      LocalDate kings = LocalDate.of(d.getYear(), 4, 27);
      if (kings.getDayOfWeek() == DayOfWeek.SUNDAY) {
        kings = kings.minusDays(1);
      }
      if (d.equals(kings)) {
        return true;
      }
    }
    long fromEaster = d.toEpochDay() - easterSunday(d.getYear()).toEpochDay();
    return fromEaster == 1 || fromEaster == 39 || fromEaster == 50;
  }

  /** The holidays of {@link #isHoliday(LocalDate)} in one year, in date order. */
  public static List<LocalDate> holidays(int year) {
    List<LocalDate> out = new ArrayList<>();
    for (LocalDate d = LocalDate.of(year, 1, 1); d.getYear() == year; d = d.plusDays(1)) {
      if (isHoliday(d)) {
        out.add(d);
      }
    }
    return out;
  }

  /** Easter Sunday of a Gregorian year by the anonymous Gregorian algorithm (Meeus/Jones/Butcher; common practice). */
  public static LocalDate easterSunday(int year) {
    int a = year % 19;
    int b = year / 100;
    int c = year % 100;
    int d = b / 4;
    int e = b % 4;
    int f = (b + 8) / 25;
    int g = (b - f + 1) / 3;
    int h = (19 * a + b - d - g + 15) % 30;
    int i = c / 4;
    int k = c % 4;
    int l = (32 + 2 * e + 2 * i - h - k) % 7;
    int m = (a + 11 * h + 22 * l) / 451;
    int month = (h + l - 7 * m + 114) / 31;
    int day = (h + l - 7 * m + 114) % 31 + 1;
    return LocalDate.of(year, month, day);
  }

  /** A copy of {@link #HOUR_SIN}. */
  public static double[] hourSin() { return HOUR_SIN.clone(); }

  /** A copy of {@link #HOUR_COS}. */
  public static double[] hourCos() { return HOUR_COS.clone(); }

  /** A copy of {@link #CORRUPT_AT_FRACTIONS}. */
  public static double[] corruptAtFractions() { return CORRUPT_AT_FRACTIONS.clone(); }

  /** A copy of {@link #WEATHER_WINTER}. */
  public static double[] weatherWinter() { return WEATHER_WINTER.clone(); }

  /** A copy of {@link #WEATHER_SUMMER}. */
  public static double[] weatherSummer() { return WEATHER_SUMMER.clone(); }

  /** A copy of {@link #TEMP_WEATHER_SHIFT_C}. */
  public static double[] tempWeatherShiftC() { return TEMP_WEATHER_SHIFT_C.clone(); }

  /** The regional tariff at a local hour of day (0..23), EUR/kWh, before markup and noise. */
  public static double tariff(int localHour) {
    if (localHour < 0 || localHour > 23) {
      throw new IllegalArgumentException("localHour must be in 0..23, got " + localHour);
    }
    if (localHour <= 6) {
      return TARIFF_NIGHT;
    }
    if (localHour <= 16) {
      return TARIFF_DAY;
    }
    if (localHour <= 20) {
      return TARIFF_PEAK;
    }
    return TARIFF_EVENING;
  }

  /** Share of winter in the seasonal weather weights on a (fractional) day of year: (1 + cos(2 pi (d - 20)/365.25)) / 2. */
  public static double winterShare(double dayOfYear) {
    return 0.5 * (1.0 + StrictMath.cos(2.0 * StrictMath.PI * (dayOfYear - COLDEST_DAY_OF_YEAR) / 365.25));
  }

  /** The hour-of-day part of the expected sessions at a local hour (0..23). */
  public static double dailyCycle(int localHour) {
    double s = 0.0;
    for (int k = 1; k <= HOUR_HARMONICS; k++) {
      double a = 2.0 * StrictMath.PI * k * localHour / 24.0;
      s += HOUR_SIN[k - 1] * StrictMath.sin(a) + HOUR_COS[k - 1] * StrictMath.cos(a);
    }
    return s;
  }

  /**
   * The expected sessions (noise-free) of the truth, with the holiday effect and the hub's level.
   * @param holiday whether the local day is a public holiday ({@link #isHoliday(LocalDate)})
   * @param level the hub's daily level of that day
   * @see #expectedSessions(int, int, boolean, Weather, double, double, boolean)
   */
  public static double expectedSessions(int hubIndex, int localHour, boolean weekend, boolean holiday, Weather weather,
      double temperatureC, double pricePerKwh, boolean afterTariffChange, double level) {
    return expectedSessions(hubIndex, localHour, weekend, weather, temperatureC, pricePerKwh, afterTariffChange)
        + (holiday ? HOLIDAY_EFFECT : 0.0) + level;
  }

  /**
   * The part of the expected sessions that the record's published fields and its local time explain:
   * the truth without the holiday effect and the hub's daily level.
   * @param hubIndex index in {@link #HUBS}
   * @param localHour local hour of day 0..23
   * @param weekend whether the local day is Saturday or Sunday
   * @param weather weather category
   * @param temperatureC temperature in degC
   * @param pricePerKwh price in EUR/kWh
   * @param afterTariffChange whether the record is at or after the tariff change
   */
  public static double expectedSessions(int hubIndex, int localHour, boolean weekend, Weather weather,
      double temperatureC, double pricePerKwh, boolean afterTariffChange) {
    double beta = afterTariffChange ? PRICE_EFFECT_AFTER_TARIFF_PER_EUR : PRICE_EFFECT_PER_EUR;
    return BASE_SESSIONS + HUBS.get(hubIndex).sessionsEffect() + dailyCycle(localHour)
        + (weekend ? WEEKEND_EFFECT : 0.0) + weatherEffect(weather)
        + TEMPERATURE_EFFECT_PER_C * temperatureC + beta * pricePerKwh;
  }

  /**
   * The ground truth of one generation as JSON (parameters plus where the planned changes fall).
   * @param settings the settings. Not modified.
   */
  public static String toJson(Settings settings) { return TruthWriter.json(settings); }

  /**
   * The ground truth of one generation as Markdown.
   * @param settings the settings. Not modified.
   */
  public static String toMarkdown(Settings settings) { return TruthWriter.markdown(settings); }
}
