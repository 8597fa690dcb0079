/** The {@code drift} verb's reading of coefficient snapshots: weights that moved most since a baseline, in standard errors. */
package dev.runnel.connect.drift;
