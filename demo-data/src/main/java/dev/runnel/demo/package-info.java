// Part of the invented Quillmarsh Charging demo scenario: all names and numbers are made up.
/**
 * The invented Quillmarsh Charging demo scenario: a seeded generator of hourly EV-charging records
 * (JSON Lines) with a documented ground truth and planned changes, and a command to regenerate the
 * sample files. Everything here is invented; no real cooperative, hub or measurement is described.
 *
 * <p>Public API: {@link dev.runnel.demo.QuillmarshGenerator}, {@link dev.runnel.demo.Settings},
 * {@link dev.runnel.demo.GroundTruth}, {@link dev.runnel.demo.ChangeSchedule},
 * {@link dev.runnel.demo.GeneratedRecord}, {@link dev.runnel.demo.DemoDataMain}. {@code JsonText}
 * is package-private.
 */
package dev.runnel.demo;
