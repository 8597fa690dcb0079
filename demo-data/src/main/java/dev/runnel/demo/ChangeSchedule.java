// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
package dev.runnel.demo;

import java.time.Instant;
import java.time.OffsetDateTime;
import java.time.ZonedDateTime;
import java.util.ArrayList;
import java.util.Collections;
import java.util.List;

/**
 * Where the planned changes of the invented Quillmarsh Charging scenario fall for one
 * {@link Settings}. Hours are indices from 0 (the start hour) to {@code totalHours - 1}, counted in
 * elapsed hours, so a spring-forward day has 23 and a fall-back day 25.
 *
 * @param totalHours H, hours in the stream
 * @param openingHour first hour QM-13 reports: floor(0.35 H)
 * @param closingHour first hour QM-05 no longer reports: floor(0.65 H)
 * @param tariffChangeHour first hour with doubled price sensitivity: the first local midnight at or
 *     after floor(0.50 H), or floor(0.50 H) itself if no midnight follows inside the stream
 * @param fahrenheitFirstHour first hour whose records carry degF in {@code temperature_c}: floor(0.42 H)
 * @param fahrenheitHours length of the degF incident (6), cut at the end of the stream
 * @param corrupt the five corrupt positions, in {@link CorruptKind} order
 */
public record ChangeSchedule(int totalHours, int openingHour, int closingHour, int tariffChangeHour,
    int fahrenheitFirstHour, int fahrenheitHours, List<CorruptPosition> corrupt) {

  /**
   * One planned corrupt line.
   * @param kind what is wrong
   * @param hour hour index whose actual line it replaces
   * @param hubIndex index in {@link GroundTruth#HUBS} of that line's hub: the active hub at position
   *     (2k + 1) mod n in hub order, k the kind's ordinal and n the active hubs at that hour
   */
  public record CorruptPosition(CorruptKind kind, int hour, int hubIndex) {
    /** The hub id of the replaced line. */
    public String hubId() { return GroundTruth.HUBS.get(hubIndex).id(); }
  }

  public ChangeSchedule {
    corrupt = Collections.unmodifiableList(new ArrayList<>(corrupt));
  }

  /** The schedule for {@code settings}. */
  public static ChangeSchedule of(Settings settings) {
    ZonedDateTime start = settings.start().atZone(GroundTruth.ZONE);
    ZonedDateTime end = settings.start().plusDays(settings.days()).atZone(GroundTruth.ZONE);
    long hours = (end.toEpochSecond() - start.toEpochSecond()) / 3600L;
    int total = Math.toIntExact(hours);
    int opening = (int) Math.floor(GroundTruth.OPENING_AT_FRACTION * total);
    int closing = (int) Math.floor(GroundTruth.CLOSING_AT_FRACTION * total);
    int half = (int) Math.floor(GroundTruth.TARIFF_CHANGE_AT_FRACTION * total);
    int tariff = half;
    for (int i = half; i < total; i++) {
      if (start.toInstant().plusSeconds(3600L * i).atZone(GroundTruth.ZONE).getHour() == 0) {
        tariff = i;
        break;
      }
    }
    int fFirst = (int) Math.floor(GroundTruth.FAHRENHEIT_AT_FRACTION * total);
    int fHours = Math.min(GroundTruth.FAHRENHEIT_HOURS, total - fFirst);
    List<CorruptPosition> list = new ArrayList<>();
    CorruptKind[] kinds = CorruptKind.values();
    for (int k = 0; k < kinds.length; k++) {
      int hour = (int) Math.floor(GroundTruth.CORRUPT_AT_FRACTIONS[k] * total);
      int[] active = new int[GroundTruth.HUBS.size()];
      int n = 0;
      for (int j = 0; j < GroundTruth.HUBS.size(); j++) {
        if (isActive(j, hour, opening, closing)) {
          active[n++] = j;
        }
      }
      list.add(new CorruptPosition(kinds[k], hour, active[(2 * k + 1) % n]));
    }
    return new ChangeSchedule(total, opening, closing, tariff, fFirst, fHours, list);
  }

  private static boolean isActive(int hubIndex, int hour, int opening, int closing) {
    if (hubIndex == GroundTruth.OPENING_HUB) {
      return hour >= opening;
    }
    if (hubIndex == GroundTruth.CLOSING_HUB) {
      return hour < closing;
    }
    return true;
  }

  /** Whether hub {@code hubIndex} reports at hour {@code hour}. */
  public boolean isActive(int hubIndex, int hour) {
    return isActive(hubIndex, hour, openingHour, closingHour);
  }

  /** Whether hour {@code hour} is at or after the tariff change. */
  public boolean isAfterTariffChange(int hour) { return hour >= tariffChangeHour; }

  /** Whether records emitted at hour {@code hour} carry degF in {@code temperature_c}. */
  public boolean isFahrenheitHour(int hour) {
    return hour >= fahrenheitFirstHour && hour < fahrenheitFirstHour + fahrenheitHours;
  }

  /** The corrupt position at {@code hour} for hub {@code hubIndex}, or null. */
  public CorruptPosition corruptAt(int hour, int hubIndex) {
    for (int k = 0; k < corrupt.size(); k++) {
      CorruptPosition c = corrupt.get(k);
      if (c.hour() == hour && c.hubIndex() == hubIndex) {
        return c;
      }
    }
    return null;
  }

  /** The local time (with offset) of hour {@code hour} for {@code settings}. */
  public static OffsetDateTime localTime(Settings settings, int hour) {
    Instant t = settings.start().atZone(GroundTruth.ZONE).toInstant().plusSeconds(3600L * hour);
    return t.atZone(GroundTruth.ZONE).toOffsetDateTime();
  }
}
