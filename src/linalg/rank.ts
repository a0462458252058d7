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

/**
 * One block's share of a rank decision, when a matrix is unitarily equivalent to a block
 * diagonal one and every block is cut at the same absolute tolerance: its singular values are
 * the union of the blocks'.
 */
export interface RankPart {
  /** Singular values of the block above the cut. */
  rank: number;
  /** Smallest of them, or null when none is kept (or it is unknown). */
  kept: number | null;
  /**
   * Largest singular value of the block at or below the cut; 0 when only the structural zeros
   * of a non-square block are dropped; null when nothing is dropped.
   */
  dropped: number | null;
}

/**
 * The part of a block whose min(rows, cols) singular values are known (any order), at the
 * absolute cut σ > absolute, with the conventions of decideRank.
 */
export function rankPartOf(sigma: ArrayLike<number>, rows: number, cols: number, absolute: number): RankPart {
  let rank = 0;
  let kept: number | null = null;
  let dropped: number | null = null;
  for (let i = 0; i < sigma.length; i++) {
    const v = sigma[i];
    if (v > absolute) {
      rank++;
      if (kept === null || v < kept) kept = v;
    } else if (dropped === null || v > dropped) dropped = v;
  }
  if (dropped === null && rank < Math.max(rows, cols)) dropped = 0;
  return { rank, kept, dropped };
}

/**
 * The decision for a rows×cols matrix whose singular values are the union of its blocks' (plus
 * structural zeros), every block cut at relative · sigmaMax with sigmaMax the largest over all
 * blocks: rank = Σ block ranks, kept = the smallest kept value of any block, dropped = the
 * largest dropped value of any block (0 when only structural zeros are dropped, null when
 * nothing is), ratio and ambiguity as in decideRank. It equals decideRank on the union.
 */
export function combineRankParts(parts: readonly RankPart[], rows: number, cols: number, relative: number, sigmaMax: number): RankDecision {
  if (!(relative >= 0 && relative < 1)) throw new RangeError(`relative tolerance must lie in [0, 1), got ${relative}`);
  if (!(sigmaMax >= 0 && Number.isFinite(sigmaMax))) throw new RangeError(`sigmaMax must be a finite number ≥ 0, got ${sigmaMax}`);
  let rank = 0;
  let kept: number | null = null;
  let dropped: number | null = null;
  for (const p of parts) {
    rank += p.rank;
    if (p.kept !== null && (kept === null || p.kept < kept)) kept = p.kept;
    if (p.dropped !== null && (dropped === null || p.dropped > dropped)) dropped = p.dropped;
  }
  if (rank > Math.min(rows, cols)) throw new RangeError(`the block ranks add up to ${rank}, more than min(rows, cols) = ${Math.min(rows, cols)}`);
  if (rank === 0) kept = null;
  if (dropped === null && rank < Math.max(rows, cols)) dropped = 0;
  const ratio = kept !== null && dropped !== null && dropped > 0 ? kept / dropped : null;
  return {
    rank,
    tolerance: { relative, absolute: relative * sigmaMax },
    sigmaMax,
    gap: { kept, dropped, ratio, ambiguous: ratio !== null && ratio < AMBIGUOUS_RATIO },
  };
}
