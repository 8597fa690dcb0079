// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
package dev.runnel.demo;

import java.io.BufferedWriter;
import java.io.IOException;
import java.io.OutputStream;
import java.io.OutputStreamWriter;
import java.io.UncheckedIOException;
import java.io.Writer;
import java.nio.charset.StandardCharsets;
import java.time.DayOfWeek;
import java.time.OffsetDateTime;
import java.time.format.DateTimeFormatter;
import java.util.ArrayDeque;
import java.util.Iterator;
import java.util.Locale;
import java.util.NoSuchElementException;
import java.util.SplittableRandom;
import java.util.Spliterator;
import java.util.Spliterators;
import java.util.stream.Stream;
import java.util.stream.StreamSupport;

/**
 * Seeded generator of the invented Quillmarsh Charging stream: hourly JSON Lines records of 12 (later
 * 13) charging hubs in Europe/Amsterdam local time, with forecasts and planned changes
 * ({@link ChangeSchedule}) on the documented ground truth ({@link GroundTruth}).
 *
 * <p>Order: for each hour t, the actual records of hour t in hub order, then the forecasts issued at
 * t, by target hour t+1..t+horizon and within each target in hub order. A forecast is written for a
 * hub active at both t and the target, and only for targets inside the stream.
 *
 * <p>Determinism: every value comes from one {@link SplittableRandom} seeded with
 * {@link Settings#seed()}, split into three independent streams (features, noise, forecasts) that
 * draw for all 13 hubs every hour whether or not a hub reports, and every function is from
 * {@link StrictMath}. So the bytes depend only on the settings (no clock, locale or hash order); the
 * actual lines are the same with or without forecasts; and the corrupt lines replace good lines
 * without changing any other line. Nothing is held in memory beyond a few hours' state, so millions of
 * lines can be streamed.
 *
 * <p>Not thread-safe per iteration; each call of {@link #records()} starts a new, independent pass.
 */
public final class QuillmarshGenerator {
  private static final DateTimeFormatter OBSERVED_AT =
      DateTimeFormatter.ofPattern("uuuu-MM-dd'T'HH:mm:ssxxx", Locale.ROOT);
  private static final int HUB_COUNT = GroundTruth.HUBS.size();
  private static final Weather[] WEATHERS = Weather.values();

  private final Settings settings;
  private final ChangeSchedule schedule;

  /**
   * @param settings the generation settings. Not modified.
   * @throws IllegalArgumentException if {@code settings} is null
   */
  public QuillmarshGenerator(Settings settings) {
    if (settings == null) {
      throw new IllegalArgumentException("settings must not be null");
    }
    this.settings = settings;
    this.schedule = ChangeSchedule.of(settings);
  }

  /** Where the planned changes fall. */
  public ChangeSchedule schedule() { return schedule; }

  /** A new pass over the stream: lines with their hidden values, in stream order. */
  public Iterator<GeneratedRecord> recordIterator() { return new Pass(); }

  /** A new lazy pass over the stream: lines with their hidden values, in stream order. Sequential. */
  public Stream<GeneratedRecord> records() {
    return StreamSupport.stream(
        Spliterators.spliteratorUnknownSize(new Pass(), Spliterator.ORDERED | Spliterator.NONNULL), false);
  }

  /** A new lazy pass over the JSON lines (without line separators), in stream order. */
  public Stream<String> lines() { return records().map(GeneratedRecord::line); }

  /**
   * Writes every line followed by {@code '\n'} as UTF-8 (all lines are ASCII).
   * @param out destination; flushed, not closed. Modified.
   * @return the number of lines written
   * @throws UncheckedIOException if writing fails
   */
  public long writeTo(OutputStream out) {
    Writer w = new BufferedWriter(new OutputStreamWriter(out, StandardCharsets.UTF_8), 1 << 16);
    long n = writeTo(w);
    try {
      w.flush();
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
    return n;
  }

  /**
   * Appends every line followed by {@code '\n'}.
   * @param out destination. Modified.
   * @return the number of lines written
   * @throws UncheckedIOException if appending fails
   */
  public long writeTo(Appendable out) {
    long n = 0;
    Iterator<GeneratedRecord> it = new Pass();
    try {
      while (it.hasNext()) {
        out.append(it.next().line()).append('\n');
        n++;
      }
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
    return n;
  }

  /** Number of lines the stream has, counted without generating values (O(hours x hubs)). */
  public long countRecords() {
    long n = 0;
    for (int t = 0; t < schedule.totalHours(); t++) {
      n += linesAt(t);
    }
    return n;
  }

  /**
   * 1-based line numbers of the planned corrupt lines, in {@link CorruptKind} order, counted without
   * generating values. The positions are the same whether or not the corrupt lines are switched on.
   */
  public long[] corruptLineNumbers() {
    long[] out = new long[schedule.corrupt().size()];
    for (int k = 0; k < out.length; k++) {
      ChangeSchedule.CorruptPosition c = schedule.corrupt().get(k);
      long before = 0;
      for (int t = 0; t < c.hour(); t++) {
        before += linesAt(t);
      }
      int pos = 0;
      for (int j = 0; j < c.hubIndex(); j++) {
        if (schedule.isActive(j, c.hour())) {
          pos++;
        }
      }
      out[k] = before + pos + 1;
    }
    return out;
  }

  private long linesAt(int t) {
    long n = 0;
    for (int j = 0; j < HUB_COUNT; j++) {
      if (schedule.isActive(j, t)) {
        n++;
      }
    }
    if (settings.includeForecasts()) {
      for (int k = 1; k <= settings.forecastHorizonHours() && t + k < schedule.totalHours(); k++) {
        for (int j = 0; j < HUB_COUNT; j++) {
          if (schedule.isActive(j, t) && schedule.isActive(j, t + k)) {
            n++;
          }
        }
      }
    }
    return n;
  }

  /** Standard normal draw by Marsaglia's polar method (common practice), StrictMath only. */
  static double gaussian(SplittableRandom r) {
    double u;
    double v;
    double s;
    do {
      u = 2.0 * r.nextDouble() - 1.0;
      v = 2.0 * r.nextDouble() - 1.0;
      s = u * u + v * v;
    } while (s >= 1.0 || s == 0.0);
    return u * StrictMath.sqrt(-2.0 * StrictMath.log(s) / s);
  }

  private static Weather draw(double[] weights, double u) {
    double total = 0.0;
    for (int c = 0; c < weights.length; c++) {
      total += weights[c];
    }
    double x = u * total;
    double acc = 0.0;
    for (int c = 0; c < weights.length; c++) {
      acc += weights[c];
      if (weights[c] > 0.0 && x < acc) {
        return WEATHERS[c];
      }
    }
    for (int c = weights.length - 1; c >= 0; c--) {
      if (weights[c] > 0.0) {
        return WEATHERS[c];
      }
    }
    throw new IllegalStateException("no positive weather weight");
  }

  private static double round(double x, double scale) { return Math.round(x * scale) / scale; }

  /** Feature state of one hour (all hubs). Mutable; reused through a ring of horizon + 1 slots. */
  private static final class HourState {
    OffsetDateTime localTime;
    String observedAt;
    int localHour;
    boolean weekend;
    final double[] weatherWeights = new double[4];
    final Weather[] weather = new Weather[HUB_COUNT];
    final double[] temperatureC = new double[HUB_COUNT];
    final double[] price = new double[HUB_COUNT];
  }

  /** One pass: simulates the features ahead by the horizon and emits hour by hour. */
  private final class Pass implements Iterator<GeneratedRecord> {
    private final SplittableRandom featureRng;
    private final SplittableRandom noiseRng;
    private final SplittableRandom forecastRng;
    private final HourState[] ring;
    private final ArrayDeque<GeneratedRecord> buffer = new ArrayDeque<>();
    private final double[] hubAnomaly = new double[HUB_COUNT];
    private final double[] noise = new double[HUB_COUNT];
    private double regionalAnomaly;
    private double dayOffset;
    private int lastLocalDayOfEpoch = Integer.MIN_VALUE;
    private int simulated = 0;   // hours 0..simulated-1 have state
    private int nextHour = 0;    // next hour to emit
    private long lineNumber = 0;

    Pass() {
      SplittableRandom root = new SplittableRandom(settings.seed());
      featureRng = root.split();
      noiseRng = root.split();
      forecastRng = root.split();
      ring = new HourState[settings.forecastHorizonHours() + 1];
      for (int i = 0; i < ring.length; i++) {
        ring[i] = new HourState();
      }
    }

    @Override public boolean hasNext() {
      while (buffer.isEmpty() && nextHour < schedule.totalHours()) {
        emitHour(nextHour++);
      }
      return !buffer.isEmpty();
    }

    @Override public GeneratedRecord next() {
      if (!hasNext()) {
        throw new NoSuchElementException("the stream has " + lineNumber + " lines and all were returned");
      }
      return buffer.removeFirst();
    }

    private HourState state(int hour) { return ring[hour % ring.length]; }

    private void simulateThrough(int hour) {
      int last = Math.min(hour, schedule.totalHours() - 1);
      while (simulated <= last) {
        simulate(simulated, state(simulated));
        simulated++;
      }
    }

    private void simulate(int t, HourState s) {
      OffsetDateTime lt = ChangeSchedule.localTime(settings, t);
      s.localTime = lt;
      s.observedAt = OBSERVED_AT.format(lt);
      s.localHour = lt.getHour();
      DayOfWeek dow = lt.getDayOfWeek();
      s.weekend = dow == DayOfWeek.SATURDAY || dow == DayOfWeek.SUNDAY;
      double doy = lt.getDayOfYear() + s.localHour / 24.0;
      int epochDay = (int) lt.toLocalDate().toEpochDay();
      if (epochDay != lastLocalDayOfEpoch) {
        dayOffset = GroundTruth.PRICE_DAY_SD * gaussian(featureRng);
        lastLocalDayOfEpoch = epochDay;
      }
      if (t == 0) {
        double sd = GroundTruth.TEMP_REGIONAL_INNOVATION_C
            / StrictMath.sqrt(1.0 - GroundTruth.TEMP_REGIONAL_AR * GroundTruth.TEMP_REGIONAL_AR);
        regionalAnomaly = sd * gaussian(featureRng);
      } else {
        regionalAnomaly = GroundTruth.TEMP_REGIONAL_AR * regionalAnomaly
            + GroundTruth.TEMP_REGIONAL_INNOVATION_C * gaussian(featureRng);
      }
      double w = GroundTruth.winterShare(doy);
      for (int c = 0; c < 4; c++) {
        s.weatherWeights[c] = w * GroundTruth.WEATHER_WINTER[c] + (1.0 - w) * GroundTruth.WEATHER_SUMMER[c];
      }
      double seasonal = GroundTruth.TEMP_ANNUAL_MEAN_C - GroundTruth.TEMP_SEASONAL_AMPLITUDE_C
          * StrictMath.cos(2.0 * StrictMath.PI * (doy - GroundTruth.COLDEST_DAY_OF_YEAR) / 365.25);
      double daily = GroundTruth.TEMP_DAILY_AMPLITUDE_C
          * StrictMath.cos(2.0 * StrictMath.PI * (s.localHour - GroundTruth.TEMP_PEAK_HOUR) / 24.0);
      double tariff = GroundTruth.tariff(s.localHour);
      double hubSd = GroundTruth.TEMP_HUB_INNOVATION_C
          / StrictMath.sqrt(1.0 - GroundTruth.TEMP_HUB_AR * GroundTruth.TEMP_HUB_AR);
      HourState prev = t == 0 ? null : state(t - 1);
      for (int j = 0; j < HUB_COUNT; j++) {
        GroundTruth.Hub hub = GroundTruth.HUBS.get(j);
        Weather wx;
        if (prev == null) {
          wx = draw(s.weatherWeights, featureRng.nextDouble());
        } else {
          wx = prev.weather[j];
          if (featureRng.nextDouble() >= GroundTruth.WEATHER_STAY) {
            wx = draw(s.weatherWeights, featureRng.nextDouble());
          }
          if (s.weatherWeights[wx.ordinal()] == 0.0) {   // snow cannot persist into a season without snow
            wx = draw(s.weatherWeights, featureRng.nextDouble());
          }
        }
        s.weather[j] = wx;
        hubAnomaly[j] = prev == null ? hubSd * gaussian(featureRng)
            : GroundTruth.TEMP_HUB_AR * hubAnomaly[j] + GroundTruth.TEMP_HUB_INNOVATION_C * gaussian(featureRng);
        double temp = seasonal + daily + hub.temperatureOffsetC() + regionalAnomaly + hubAnomaly[j]
            + GroundTruth.TEMP_WEATHER_SHIFT_C[wx.ordinal()];
        s.temperatureC[j] = round(temp, 10.0);
        double p = tariff + hub.priceMarkupPerKwh() + dayOffset + GroundTruth.PRICE_HOUR_SD * gaussian(featureRng);
        s.price[j] = round(Math.max(GroundTruth.PRICE_FLOOR, p), 1000.0);
      }
    }

    private void emitHour(int t) {
      simulateThrough(t + settings.forecastHorizonHours());
      HourState s = state(t);
      boolean fahrenheit = schedule.isFahrenheitHour(t);
      boolean afterTariff = schedule.isAfterTariffChange(t);
      for (int j = 0; j < HUB_COUNT; j++) {
        noise[j] = GroundTruth.NOISE_SD * gaussian(noiseRng);
      }
      for (int j = 0; j < HUB_COUNT; j++) {
        if (!schedule.isActive(j, t)) {
          continue;
        }
        double tempC = s.temperatureC[j];
        double expected = GroundTruth.expectedSessions(j, s.localHour, s.weekend, s.weather[j], tempC, s.price[j], afterTariff);
        double sessions = round(expected + noise[j], 10.0);
        double published = fahrenheit ? round(tempC * 9.0 / 5.0 + 32.0, 100.0) : tempC;
        CorruptKind corrupt = null;
        if (settings.includeCorrupt()) {
          ChangeSchedule.CorruptPosition c = schedule.corruptAt(t, j);
          if (c != null) {
            corrupt = c.kind();
          }
        }
        String line = line(false, j, s.observedAt, s.weather[j], published, fahrenheit, s.price[j], sessions, corrupt);
        buffer.addLast(new GeneratedRecord(++lineNumber, t, t, false, j, s.localTime, s.weather[j], tempC,
            published, s.price[j], sessions, expected, corrupt, line));
      }
      int horizon = settings.forecastHorizonHours();
      if (!settings.includeForecasts() || horizon == 0) {
        return;
      }
      for (int k = 1; k <= horizon; k++) {
        int target = t + k;
        boolean inside = target < schedule.totalHours();
        HourState f = inside ? state(target) : null;
        double keep = Math.max(0.0, GroundTruth.FORECAST_WEATHER_KEEP - GroundTruth.FORECAST_WEATHER_KEEP_DROP * k);
        for (int j = 0; j < HUB_COUNT; j++) {
          double u = forecastRng.nextDouble();
          double u2 = forecastRng.nextDouble();
          double g = gaussian(forecastRng);
          if (!inside || !schedule.isActive(j, t) || !schedule.isActive(j, target)) {
            continue;
          }
          Weather wx = u < keep ? f.weather[j] : draw(f.weatherWeights, u2);
          double tempC = round(f.temperatureC[j] + GroundTruth.FORECAST_TEMP_SD_PER_HOUR * k * g, 10.0);
          double published = fahrenheit ? round(tempC * 9.0 / 5.0 + 32.0, 100.0) : tempC;
          double price = f.price[j];
          double expected = GroundTruth.expectedSessions(j, f.localHour, f.weekend, wx, tempC, price,
              schedule.isAfterTariffChange(target));
          String line = line(true, j, f.observedAt, wx, published, fahrenheit, price, Double.NaN, null);
          buffer.addLast(new GeneratedRecord(++lineNumber, t, target, true, j, f.localTime, wx, tempC,
              published, price, Double.NaN, expected, null, line));
        }
      }
    }
  }

  /** The JSON text of one record, or its planned corruption. */
  private static String line(boolean forecast, int hubIndex, String observedAt, Weather weather,
      double temperature, boolean fahrenheit, double price, double sessions, CorruptKind corrupt) {
    StringBuilder sb = new StringBuilder(160);
    sb.append("{\"kind\":\"").append(forecast ? "forecast" : "actual").append('"');
    if (corrupt != CorruptKind.MISSING_HUB) {
      sb.append(",\"hub\":\"").append(GroundTruth.HUBS.get(hubIndex).id()).append('"');
    }
    String at = observedAt;
    if (corrupt == CorruptKind.ABSURD_YEAR) {
      int year = Integer.parseInt(at.substring(0, 4));
      at = (year + 7000) + at.substring(4);
    }
    sb.append(",\"observed_at\":\"").append(at).append('"');
    sb.append(",\"weather\":\"").append(weather.label()).append('"');
    sb.append(",\"temperature_c\":");
    boolean quoted = corrupt == CorruptKind.STRING_TEMPERATURE;
    if (quoted) {
      sb.append('"');
    }
    JsonText.appendFixed(sb, temperature, fahrenheit ? 2 : 1);
    if (quoted) {
      sb.append('"');
    }
    sb.append(",\"price_per_kwh\":");
    JsonText.appendFixed(sb, price, 3);
    if (!forecast) {
      sb.append(",\"sessions\":");
      if (corrupt == CorruptKind.NAN_TOKEN) {
        sb.append("NaN");
      } else {
        JsonText.appendFixed(sb, sessions, 1);
      }
    }
    sb.append('}');
    if (corrupt == CorruptKind.TRUNCATED_JSON) {
      return sb.substring(0, Math.min(GroundTruth.TRUNCATE_AT_CHARS, sb.length() - 1));
    }
    return sb.toString();
  }
}
