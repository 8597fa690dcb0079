/**
 * The online model: exponentially weighted recursive least squares in information (square-root)
 * form, with a ridge prior or an exactly diffuse start, a cyclic stabilized-forgetting guard
 * against covariance wind-up, exact marginalization of removed columns and exact re-basing of
 * re-standardized columns; and one model across partitions ({@code GlobalModel}, {@code ModelShare}):
 * each partition shares what its records contributed and folds in the others' shares. See
 * {@code docs/model.md}.
 */
package dev.runnel.core.model;
