/**
 * Rank decisions from singular values, with the stated tolerance and the gap around the cut.
 *
 * A singular value σ counts as nonzero when σ > tol, where tol = relative · σ_max.
 * The gap reports the smallest kept value, the largest dropped one and their ratio; a ratio
 * under AMBIGUOUS_RATIO means the rank is not clearly determined by the data.
 */
export const DEFAULT_RELATIVE_TOLERANCE = 1e-9;
export const AMBIGUOUS_RATIO = 1e4;

export interface Gap {
  /** Smallest singular value above the cut, or null when none is kept (rank 0). */
  kept: number | null;
  /**
   * Largest singular value at or below the cut, or 0 when the only dropped values are the
   * structural zeros of a non-square matrix, or null when nothing is dropped.
   */
  dropped: number | null;
  /** kept / dropped; null when unbounded (nothing, or only exact zeros, dropped) or undefined. */
  ratio: number | null;
  /** True when ratio < AMBIGUOUS_RATIO. */
  ambiguous: boolean;
}

export interface RankDecision {
  rank: number;
  tolerance: { relative: number; absolute: number };
  sigmaMax: number;
  gap: Gap;
}

/**
 * @param sigma singular values (any order); there are min(rows, cols) of them
 * @param rows, cols the matrix shape (structural zeros fill up to max(rows, cols))
 */
export function decideRank(sigma: ArrayLike<number>, rows: number, cols: number, relative = DEFAULT_RELATIVE_TOLERANCE): RankDecision {
  if (!(relative >= 0 && relative < 1)) throw new RangeError(`relative tolerance must lie in [0, 1), got ${relative}`);
  const s = Float64Array.from(sigma).sort().reverse();
  const sigmaMax = s.length ? s[0] : 0;
  const absolute = relative * sigmaMax;
  let rank = 0;
  while (rank < s.length && s[rank] > absolute) rank++;
  const kept = rank > 0 ? s[rank - 1] : null;
  const structuralZeros = rank < Math.max(rows, cols);
  const dropped = rank < s.length ? s[rank] : structuralZeros && Math.max(rows, cols) > rank ? 0 : null;
  const ratio = kept !== null && dropped !== null && dropped > 0 ? kept / dropped : null;
  return {
    rank,
    tolerance: { relative, absolute },
    sigmaMax,
    gap: { kept, dropped, ratio, ambiguous: ratio !== null && ratio < AMBIGUOUS_RATIO },
  };
}
