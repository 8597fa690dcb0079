// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
package dev.runnel.demo;

/**
 * Weather categories of the invented Quillmarsh Charging scenario. The label is the value written in
 * the {@code weather} field. Effects on sessions are in {@link GroundTruth#weatherEffect(Weather)}.
 */
public enum Weather {
  CLEAR("clear"),
  CLOUDY("cloudy"),
  RAIN("rain"),
  SNOW("snow");

  private final String label;

  Weather(String label) { this.label = label; }

  /** The value written in the {@code weather} field. */
  public String label() { return label; }
}
