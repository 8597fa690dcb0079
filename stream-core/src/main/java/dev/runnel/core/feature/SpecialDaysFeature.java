package dev.runnel.core.feature;

import de.focus_shift.jollyday.core.Holiday;
import de.focus_shift.jollyday.core.HolidayManager;
import de.focus_shift.jollyday.core.HolidayType;
import de.focus_shift.jollyday.core.ManagerParameters;
import dev.runnel.core.config.FeatureConfig;
import dev.runnel.core.record.EventRecord;
import dev.runnel.core.record.EventTimes;
import dev.runnel.core.record.RejectReason;
import java.time.Year;
import java.time.ZoneId;
import java.util.Arrays;
import java.util.Set;

/**
 * Days that behave differently ({@code kind: special_days}): fixed 0/1 columns {@code <name>} (the
 * local date of the record's target time is a special day), {@code <name>.before1 ..
 * <name>.before<B>} (the day k days later is one) and {@code <name>.after1 .. <name>.after<A>}
 * (the day k days earlier was one). A special day is a listed date ({@code dates},
 * {@code dates_file}) or a public holiday of {@code holiday_country} / {@code holiday_region} by
 * the holiday library (Jollyday, its calendar of public holidays, on the day they are kept).
 * The columns are not scaled. No state: the columns are a function of the date alone.
 *
 * <p>Cost: the row of the last local date is remembered, so a stream of hourly records looks a
 * date up once a day; a holiday year is asked of the library once and kept (the last
 * {@value #YEARS} years), so the warm path allocates nothing.
 */
final class SpecialDaysFeature extends Feature {

  private static final int YEARS = 4;

  final FeatureConfig.SpecialDays cfg;
  private final LocalCalendar calendar;
  /** Listed dates as local epoch days, sorted, each once. */
  private final long[] listed;
  private final HolidayManager holidays;
  private final String[] region;
  private final Column[] cols;
  /** Day offset of each column: 0, then +1..+B (before), then -1..-A (after). */
  private final int[] offsets;
  private long memoDay = Long.MIN_VALUE;
  private final double[] memo;
  private final long[] cachedYear = new long[YEARS];
  private final long[][] cachedDays = new long[YEARS][];

  SpecialDaysFeature(FeatureConfig.SpecialDays cfg, int position, ZoneId zone) {
    super(cfg.name(), position);
    this.cfg = cfg;
    this.calendar = new LocalCalendar(zone);
    this.listed = new long[cfg.dates().size()];
    for (int i = 0; i < listed.length; i++) listed[i] = cfg.dates().get(i).toEpochDay();
    Arrays.sort(listed);
    this.holidays = cfg.holidayCountry() == null ? null : HolidayManager.getInstance(ManagerParameters.create(cfg.holidayCountry()));
    this.region = cfg.holidayRegion() == null ? new String[0] : new String[] {cfg.holidayRegion()};
    int n = 1 + cfg.daysBefore() + cfg.daysAfter();
    this.cols = new Column[n];
    this.offsets = new int[n];
    for (int k = 1; k <= cfg.daysBefore(); k++) offsets[k] = k;
    for (int k = 1; k <= cfg.daysAfter(); k++) offsets[cfg.daysBefore() + k] = -k;
    this.memo = new double[n];
    Arrays.fill(cachedYear, Long.MIN_VALUE);
  }

  @Override String kind() { return cfg.kind(); }
  @Override int maxColumns() { return cols.length; }
  @Override int fixedColumns() { return cols.length; }

  @Override void createFixedColumns() {
    cols[0] = columns.append(new Column(name, null, this));
    for (int j = 1; j < cols.length; j++) {
      String c = offsets[j] > 0 ? name + ".before" + offsets[j] : name + ".after" + (-offsets[j]);
      cols[j] = columns.append(new Column(c, null, this));
    }
  }

  @Override RejectReason check(EventRecord r) { return null; }

  /** Whether the local date {@code day} (days since 1970-01-01) is a special day. */
  boolean isSpecial(long day) {
    if (Arrays.binarySearch(listed, day) >= 0) return true;
    return holidays != null && Arrays.binarySearch(holidaysOf(EventTimes.yearOfEpochDay(day)), day) >= 0;
  }

  /** The public holidays of {@code year} as sorted epoch days (asked of the library once per year kept). */
  private long[] holidaysOf(long year) {
    int slot = (int) Math.floorMod(year, (long) YEARS);
    if (cachedYear[slot] != year) {
      cachedDays[slot] = ask(year);
      cachedYear[slot] = year;
    }
    return cachedDays[slot];
  }

  private long[] ask(long year) {
    if (year < Year.MIN_VALUE || year > Year.MAX_VALUE) return new long[0];
    Set<Holiday> set = holidays.getHolidays(Year.of((int) year), HolidayType.PUBLIC_HOLIDAY, region);
    long[] days = new long[set.size()];
    int n = 0;
    for (Holiday h : set) days[n++] = h.getDate().toEpochDay(); // the day it is kept (moved off a Sunday, say); getActualDate() is the nominal day
    Arrays.sort(days); // the library gives a set: sorted here, so nothing depends on its order
    return days;
  }

  @Override void write(EventRecord r, long t, double[] out, boolean training) {
    long day = calendar.localEpochDay(t);
    double[] m = memo;
    if (day != memoDay) {
      for (int j = 0; j < m.length; j++) m[j] = isSpecial(day + offsets[j]) ? 1.0 : 0.0;
      memoDay = day;
    }
    Column[] c = cols;
    for (int j = 0; j < c.length; j++) out[c[j].index] = m[j];
  }
}
