/**
 * Drift alarms computed inside the pipeline and carried in the coefficient snapshots: a weight
 * that moved more than k standard errors from its baseline, and a change in the level of the
 * a priori errors found by a two-sided Page–Hinkley test. Pure and deterministic; the state is
 * part of the pipeline checkpoint.
 */
package dev.runnel.core.drift;
