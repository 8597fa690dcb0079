/**
 * Feature functions: each maps one decoded record to named columns of the model's row. The
 * {@link dev.runnel.core.feature.Featurizer} owns the versioned column layout and reports every
 * change of it to a {@link dev.runnel.core.layout.LayoutListener}; the building blocks
 * ({@link dev.runnel.core.feature.RunningScaler}, {@link dev.runnel.core.feature.RollingVocabulary},
 * {@link dev.runnel.core.feature.LocalCalendar}) are public so they can be tested and reused alone.
 */
package dev.runnel.core.feature;
