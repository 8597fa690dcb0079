/**
 * Feature functions: each maps one decoded record to named columns of the model's row. The
 * {@link dev.runnel.core.feature.Featurizer} runs the list of feature kinds (one package-private
 * file each, built by {@code Feature.build}); the kinds change the versioned column layout only
 * through {@code Columns}, which reports every change to a
 * {@link dev.runnel.core.layout.LayoutListener}. The building blocks
 * ({@link dev.runnel.core.feature.RunningScaler}, {@link dev.runnel.core.feature.RollingVocabulary},
 * {@link dev.runnel.core.feature.LocalCalendar}) are public so they can be tested and reused alone.
 */
package dev.runnel.core.feature;
