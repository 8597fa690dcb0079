/** The column layout shared by the featurizer and the model: how columns are added, removed and re-based. */
package dev.runnel.core.layout;
