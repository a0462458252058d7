/**
 * The classifier's thresholds, each with its meaning (every one is reported in
 * Classification.thresholds; the definitions they serve are in classify.ts).
 */

/** Largest square window, in cells, whose flexes are local (default of `window`). */
export const DEFAULT_WINDOW = 3;
/** Widest strip, in cells, whose flexes can be lines (default of `strip`). */
export const DEFAULT_STRIP = 2;
/** A strip flex is a line when its support runs along at least this fraction of the strip. */
export const LINE_COVERAGE = 2 / 3;
/**
 * Two subspaces of unit vectors are told apart at this residual: a vector whose distance to a
 * span is at most SPAN_TOLERANCE (relative to its norm) lies in that span.
 */
export const SPAN_TOLERANCE = 1e-5;
/** Joints whose amplitude is at least this fraction of the largest amplitude form the support. */
export const SUPPORT_AMPLITUDE = 1e-3;
/** Decaying: at least this share of the squared amplitude lies within the head radius. */
export const HEAD_WEIGHT = 0.8;
/** Decaying: the fit of log amplitude against distance must reach this R². */
export const MIN_R2 = 0.6;
/** Rings whose amplitude is below this fraction of the largest ring amplitude are left out of the fit. */
export const FIT_FLOOR = 1e-6;
/** Relative margin of the near/far comparison of mean distances (see splitByBoundaryDistance). */
export const FAR_MARGIN = 1e-9;
