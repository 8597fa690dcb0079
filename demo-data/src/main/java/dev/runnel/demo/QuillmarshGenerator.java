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
import java.util.TreeMap;
import java.util.Spliterator;
import java.util.Spliterators;
import java.util.stream.Stream;
import java.util.stream.StreamSupport;

/**
 * Seeded generator of the invented Quillmarsh Charging stream: JSON Lines records of 12 (later 13)
 * charging hubs in Europe/Amsterdam local time, run the way a cooperative runs its forecasts, with
 * planned changes ({@link ChangeSchedule}) on the documented ground truth ({@link GroundTruth}).
 *
 * <p>Each line has an event time {@code issued_at} (when it was issued or arrived) and the hour it is
 * about, {@code observed_at} (the target hour's start). The stream is in event-time order, hour by
 * hour; at each event hour T:
 * <ol>
 *   <li>the actuals arriving at T, by target hour, then hub, then first reading before correction: an
 *       actual of hour t arrives {@link GroundTruth#ACTUAL_DELAY_HOURS} after its hour ends (T = t + 2 h);
 *       a share {@link Settings#lateShare()} arrives {@link GroundTruth#LATE_EXTRA_HOURS} later; a share
 *       {@link Settings#correctionShare()} is followed {@link GroundTruth#CORRECTION_AFTER_HOURS} after
 *       its arrival by a correction ({@code "kind":"correction"}) with a revised value;</li>
 *   <li>the hour-ahead requests issued at T for T+1..T+{@link Settings#forecastHorizonHours()}, by
 *       target hour, then hub;</li>
 *   <li>at the local hour {@link Settings#dayAheadIssueHour()} (18:00 by default), the day-ahead requests
 *       for every hour of the next local day (23, 24 or 25 hours), by target hour, then hub.</li>
 * </ol>
 * Requests carry no sessions; their weather is the true category, their temperature a forecast with
 * an error, their price the target hour's published price. A request is written for a hub active at
 * both T and the target, and only for targets inside the stream; actuals due after the last on-time
 * arrival (hour H + 1) are not written. The planned corrupt lines replace first readings, which are
 * never late.
 *
 * <p>Determinism: every value comes from one {@link SplittableRandom} seeded with
 * {@link Settings#seed()}, split into five independent streams (features, noise, requests, arrivals,
 * hub levels) that draw for all 13 hubs every hour (or day) whether or not a hub reports, and every
 * function is from {@link StrictMath}. So the bytes depend only on the settings (no clock, locale or
 * hash order); the actual lines are the same with or without requests; and the corrupt lines replace
 * good lines without changing any other line. Only a few days' state is held, so millions of lines can
 * be streamed.
 *
 * <p>Not thread-safe per iteration; each call of {@link #records()} starts a new, independent pass.
 */
public final class QuillmarshGenerator {
  private static final DateTimeFormatter OBSERVED_AT =
      DateTimeFormatter.ofPattern("uuuu-MM-dd'T'HH:mm:ssxxx", Locale.ROOT);
  private static final int HUB_COUNT = GroundTruth.HUBS.size();
  private static final Weather[] WEATHERS = Weather.values();
  /** Hours from a day-ahead issue hour to the end of the next local day, at most (issued at 00:00: 24 + 25). */
  private static final int DAY_AHEAD_REACH_HOURS = 49;

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

  /** Number of lines the stream has, counted by a pass (about a second for a default year). */
  public long countRecords() {
    long n = 0;
    Iterator<GeneratedRecord> it = new Pass();
    while (it.hasNext()) {
      it.next();
      n++;
    }
    return n;
  }

  /**
   * 1-based line numbers of the planned corrupt lines, in {@link CorruptKind} order, found by a pass.
   * The positions are the same whether or not the corrupt lines are switched on.
   */
  public long[] corruptLineNumbers() {
    long[] out = new long[schedule.corrupt().size()];
    Iterator<GeneratedRecord> it = new QuillmarshGenerator(settings.withCorrupt(true)).recordIterator();
    while (it.hasNext()) {
      GeneratedRecord r = it.next();
      if (r.corrupt() != null) {
        out[r.corrupt().ordinal()] = r.lineNumber();
      }
    }
    return out;
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

  /** Feature state of one hour (all hubs). Mutable; reused through a ring. */
  private static final class HourState {
    OffsetDateTime localTime;
    String observedAt;
    int localHour;
    long localDay;
    boolean weekend;
    boolean holiday;
    final double[] weatherWeights = new double[4];
    final Weather[] weather = new Weather[HUB_COUNT];
    final double[] temperatureC = new double[HUB_COUNT];
    final double[] price = new double[HUB_COUNT];
    final double[] level = new double[HUB_COUNT];
  }

  /** An actual waiting for its arrival hour, with everything its line needs. */
  private record Arrival(int arrivalHour, int targetHour, int hubIndex, GeneratedRecord.Kind kind,
      OffsetDateTime observedAt, String observedAtText, Weather weather, double temperatureC, double price,
      double sessions, double expected, boolean holiday, double level, CorruptKind corrupt) {
    long key() {
      return ((long) arrivalHour << 26) | ((long) targetHour << 5) | ((long) hubIndex << 1)
          | (kind == GeneratedRecord.Kind.CORRECTION ? 1 : 0);
    }
  }

  /** One pass: simulates the features ahead of the event hour and emits event hour by event hour. */
  private final class Pass implements Iterator<GeneratedRecord> {
    private final SplittableRandom featureRng;
    private final SplittableRandom noiseRng;
    private final SplittableRandom forecastRng;
    private final SplittableRandom arrivalRng;
    private final SplittableRandom levelRng;
    private final int lookahead;
    private final int lastEventHour;
    private final HourState[] ring;
    private final ArrayDeque<GeneratedRecord> buffer = new ArrayDeque<>();
    private final TreeMap<Long, Arrival> arrivals = new TreeMap<>();
    private final double[] hubAnomaly = new double[HUB_COUNT];
    private final double[] levels = new double[HUB_COUNT];
    private final double[] draws = new double[HUB_COUNT];
    private double regionalAnomaly;
    private double dayOffset;
    private long lastLocalDay = Long.MIN_VALUE;
    private int simulated = 0;   // hours 0..simulated-1 have state
    private int nextEventHour = 0;
    private long lineNumber = 0;

    Pass() {
      SplittableRandom root = new SplittableRandom(settings.seed());
      featureRng = root.split();
      noiseRng = root.split();
      forecastRng = root.split();
      arrivalRng = root.split();
      levelRng = root.split();
      lookahead = Math.max(settings.forecastHorizonHours(), settings.dayAheadIssueHour() < 0 ? 0 : DAY_AHEAD_REACH_HOURS);
      lastEventHour = schedule.totalHours() + GroundTruth.ACTUAL_DELAY_HOURS;
      ring = new HourState[lookahead + GroundTruth.ACTUAL_DELAY_HOURS + 3];
      for (int i = 0; i < ring.length; i++) {
        ring[i] = new HourState();
      }
    }

    @Override public boolean hasNext() {
      while (buffer.isEmpty() && nextEventHour <= lastEventHour) {
        emitHour(nextEventHour++);
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
      s.holiday = GroundTruth.isHoliday(lt.toLocalDate());
      double doy = lt.getDayOfYear() + s.localHour / 24.0;
      long epochDay = lt.toLocalDate().toEpochDay();
      if (epochDay != lastLocalDay) {
        dayOffset = GroundTruth.PRICE_DAY_SD * gaussian(featureRng);
        // centred across the 13 hubs: no shock shared by all hubs on a day (it would blur the day's price
        // effect); drawn with sd * sqrt(13/12) so that the centred innovation has sd LEVEL_INNOVATION_SD
        double scale = StrictMath.sqrt(HUB_COUNT / (HUB_COUNT - 1.0));
        double mean = 0.0;
        for (int j = 0; j < HUB_COUNT; j++) {
          draws[j] = scale * gaussian(levelRng)
              * (lastLocalDay == Long.MIN_VALUE ? GroundTruth.levelStationarySd() : GroundTruth.LEVEL_INNOVATION_SD);
          mean += draws[j];
        }
        mean /= HUB_COUNT;
        for (int j = 0; j < HUB_COUNT; j++) {
          levels[j] = (lastLocalDay == Long.MIN_VALUE ? 0.0 : GroundTruth.LEVEL_AR * levels[j]) + draws[j] - mean;
        }
        lastLocalDay = epochDay;
      }
      s.localDay = epochDay;
      System.arraycopy(levels, 0, s.level, 0, HUB_COUNT);
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

    /** Draws the sessions of hour {@code a} and schedules its actuals (and corrections) for their arrival. */
    private void produceActuals(int a) {
      HourState s = state(a);
      boolean afterTariff = schedule.isAfterTariffChange(a);
      for (int j = 0; j < HUB_COUNT; j++) {
        double noise = GroundTruth.NOISE_SD * gaussian(noiseRng);
        double uLate = arrivalRng.nextDouble();
        double uCorrect = arrivalRng.nextDouble();
        double uSign = arrivalRng.nextDouble();
        double g = gaussian(arrivalRng);
        if (!schedule.isActive(j, a)) {
          continue;
        }
        double tempC = s.temperatureC[j];
        double expected = GroundTruth.expectedSessions(j, s.localHour, s.weekend, s.holiday, s.weather[j], tempC,
            s.price[j], afterTariff, s.level[j]);
        double sessions = round(expected + noise, 10.0);
        ChangeSchedule.CorruptPosition cp = schedule.corruptAt(a, j);
        CorruptKind corrupt = settings.includeCorrupt() && cp != null ? cp.kind() : null;
        boolean late = cp == null && uLate < settings.lateShare();
        int arrival = a + 1 + GroundTruth.ACTUAL_DELAY_HOURS + (late ? GroundTruth.LATE_EXTRA_HOURS : 0);
        if (arrival <= lastEventHour) {
          add(new Arrival(arrival, a, j, late ? GeneratedRecord.Kind.LATE_ACTUAL : GeneratedRecord.Kind.ACTUAL,
              s.localTime, s.observedAt, s.weather[j], tempC, s.price[j], sessions, expected, s.holiday, s.level[j], corrupt));
        }
        int corrected = arrival + GroundTruth.CORRECTION_AFTER_HOURS;
        if (uCorrect < settings.correctionShare() && corrected <= lastEventHour) {
          double revision = (uSign < 0.5 ? -1.0 : 1.0)
              * (GroundTruth.CORRECTION_MIN_SESSIONS + GroundTruth.CORRECTION_SCALE_SESSIONS * Math.abs(g));
          add(new Arrival(corrected, a, j, GeneratedRecord.Kind.CORRECTION, s.localTime, s.observedAt, s.weather[j],
              tempC, s.price[j], round(sessions + revision, 10.0), expected, s.holiday, s.level[j], null));
        }
      }
    }

    private void add(Arrival a) { arrivals.put(a.key(), a); }

    private void emitHour(int t) {
      simulateThrough(t + lookahead);
      int produced = t - 1 - GroundTruth.ACTUAL_DELAY_HOURS;
      if (produced >= 0 && produced < schedule.totalHours()) {
        produceActuals(produced);
      }
      boolean fahrenheit = schedule.isFahrenheitHour(t);
      OffsetDateTime issuedAt = ChangeSchedule.localTime(settings, t);
      String issuedText = OBSERVED_AT.format(issuedAt);
      while (!arrivals.isEmpty() && arrivals.firstEntry().getValue().arrivalHour() == t) {
        Arrival a = arrivals.pollFirstEntry().getValue();
        double published = fahrenheit ? round(a.temperatureC() * 9.0 / 5.0 + 32.0, 100.0) : a.temperatureC();
        String label = a.kind() == GeneratedRecord.Kind.CORRECTION ? "correction" : "actual";
        String line = line(label, a.hubIndex(), issuedText, a.observedAtText(), a.weather(), published, fahrenheit,
            a.price(), a.sessions(), a.corrupt());
        buffer.addLast(new GeneratedRecord(++lineNumber, t, a.targetHour(), false, a.hubIndex(), a.observedAt(),
            a.weather(), a.temperatureC(), published, a.price(), a.sessions(), a.expected(), a.corrupt(), line,
            issuedAt, a.kind(), a.holiday(), a.level()));
      }
      if (t >= schedule.totalHours() || !settings.includeForecasts()) {
        return;
      }
      HourState now = state(t);
      for (int k = 1; k <= settings.forecastHorizonHours(); k++) {
        double sd = GroundTruth.FORECAST_TEMP_SD_PER_HOUR * k;
        request(t, t + k, sd, GeneratedRecord.Kind.HOUR_AHEAD_REQUEST, now, issuedAt, issuedText, fahrenheit);
      }
      if (now.localHour == settings.dayAheadIssueHour()) {
        int first = t + 1;
        while (ChangeSchedule.localTime(settings, first).toLocalDate().toEpochDay() == now.localDay) {
          first++;
        }
        long nextDay = now.localDay + 1;
        for (int target = first; ChangeSchedule.localTime(settings, target).toLocalDate().toEpochDay() == nextDay; target++) {
          request(t, target, GroundTruth.FORECAST_TEMP_SD_DAY_AHEAD_C, GeneratedRecord.Kind.DAY_AHEAD_REQUEST, now,
              issuedAt, issuedText, fahrenheit);
        }
      }
    }

    /** The requests issued at {@code t} for {@code target}, in hub order; draws for all hubs. */
    private void request(int t, int target, double tempSd, GeneratedRecord.Kind kind, HourState now,
        OffsetDateTime issuedAt, String issuedText, boolean fahrenheit) {
      boolean inside = target < schedule.totalHours();
      HourState f = inside ? state(target) : null;
      for (int j = 0; j < HUB_COUNT; j++) {
        double g = gaussian(forecastRng);
        if (!inside || !schedule.isActive(j, t) || !schedule.isActive(j, target)) {
          continue;
        }
        Weather wx = f.weather[j];
        double tempC = round(f.temperatureC[j] + tempSd * g, 10.0);
        double published = fahrenheit ? round(tempC * 9.0 / 5.0 + 32.0, 100.0) : tempC;
        double price = f.price[j];
        double levelKnown = now.level[j] * StrictMath.pow(GroundTruth.LEVEL_AR, f.localDay - now.localDay);
        double expected = GroundTruth.expectedSessions(j, f.localHour, f.weekend, f.holiday, wx, tempC, price,
            schedule.isAfterTariffChange(target), levelKnown);
        String line = line("forecast", j, issuedText, f.observedAt, wx, published, fahrenheit, price, Double.NaN, null);
        buffer.addLast(new GeneratedRecord(++lineNumber, t, target, true, j, f.localTime, wx, tempC,
            published, price, Double.NaN, expected, null, line, issuedAt, kind, f.holiday, f.level[j]));
      }
    }
  }

  /** The JSON text of one record, or its planned corruption. */
  private static String line(String kind, int hubIndex, String issuedAt, String observedAt, Weather weather,
      double temperature, boolean fahrenheit, double price, double sessions, CorruptKind corrupt) {
    StringBuilder sb = new StringBuilder(192);
    sb.append("{\"kind\":\"").append(kind).append('"');
    if (corrupt != CorruptKind.MISSING_HUB) {
      sb.append(",\"hub\":\"").append(GroundTruth.HUBS.get(hubIndex).id()).append('"');
    }
    sb.append(",\"issued_at\":\"").append(corrupt == CorruptKind.ABSURD_YEAR ? absurd(issuedAt) : issuedAt).append('"');
    sb.append(",\"observed_at\":\"").append(corrupt == CorruptKind.ABSURD_YEAR ? absurd(observedAt) : observedAt).append('"');
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
    if (!Double.isNaN(sessions) || corrupt == CorruptKind.NAN_TOKEN) {
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

  /** The time with its year moved 7000 years on (the absurd-year corruption). */
  private static String absurd(String at) {
    return (Integer.parseInt(at.substring(0, 4)) + 7000) + at.substring(4);
  }
}
