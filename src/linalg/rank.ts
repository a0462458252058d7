/**
 * Rank decisions from singular values, with the stated tolerance and the gap around the cut.
 *
 * A singular value σ counts as nonzero when σ > tol, where tol = relative · σ_max.
 * The gap reports the smallest kept value, the largest dropped one and their ratio; a ratio
 * under AMBIGUOUS_RATIO means the rank is not clearly determined by the data.
 */
export const DEFAULT_RELATIVE_TOLERANCE = 1e-9;
/** Unit roundoff of IEEE doubles (2⁻⁵²). */
export const EPS = 2.220446049250313e-16;

/**
 * Absolute accuracy assumed for computed singular values of an m×n matrix: 8·max(m, n)·ε·σ_max
 * (backward-stable SVD algorithms perturb A by O(max(m, n)·ε·‖A‖) and singular values are
 * perfectly conditioned, by Weyl's inequality; common practice, with a safety factor of 8).
 */
export function svdBackwardError(m: number, n: number, sigmaMax: number): number {
  return 8 * Math.max(m, n, 1) * EPS * sigmaMax;
}
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

/** A kept σ under this factor × the cut, or a dropped σ over the cut ÷ this factor, is flagged. */
export const NEAR_CUT_FACTOR = 100;

/**
 * Why a decision deserves doubt, in words a user can act on: a narrow gap (ratio under
 * AMBIGUOUS_RATIO), a kept σ within NEAR_CUT_FACTOR above the cut (a larger --tol would drop it:
 * more flexes and self-stresses), or a dropped σ within NEAR_CUT_FACTOR below it (a smaller
 * --tol would keep it: fewer). Empty when none applies.
 */
export function gapConcerns(d: RankDecision): string[] {
  const out: string[] = [];
  const { kept, dropped, ratio } = d.gap;
  const tol = d.tolerance.absolute;
  const rel = (v: number) => (d.sigmaMax > 0 ? v / d.sigmaMax : 0);
  const fmt = (v: number) => v.toPrecision(3);
  if (ratio !== null && ratio < AMBIGUOUS_RATIO) out.push(`the gap ratio ${fmt(ratio)} is under ${AMBIGUOUS_RATIO}`);
  if (kept !== null && tol > 0 && kept < NEAR_CUT_FACTOR * tol) {
    out.push(`the smallest kept σ ${fmt(kept)} is within ${NEAR_CUT_FACTOR}× above the cut ${fmt(tol)}: --tol ${fmt(rel(kept) * 1.01)} or larger would drop it (one more flex and self-stress each)`);
  }
  if (dropped !== null && dropped > 0 && dropped * NEAR_CUT_FACTOR > tol) {
    out.push(`the largest dropped σ ${fmt(dropped)} is within ${NEAR_CUT_FACTOR}× below the cut ${fmt(tol)}: --tol ${fmt(rel(dropped) * 0.99)} or smaller would keep it (one flex and self-stress fewer)`);
  }
  return out;
}

/**
 * The decision with `gap.ambiguous` set from every concern (gapConcerns) and from an uncertified
 * count; the reasons come back beside it.
 */
export function flagDecision(d: RankDecision, certified: boolean, uncertifiedReasons: readonly string[]): { decision: RankDecision; reasons: string[] } {
  const reasons = [...uncertifiedReasons, ...gapConcerns(d)];
  const ambiguous = !certified || reasons.length > 0;
  return { decision: { ...d, gap: { ...d.gap, ambiguous } }, reasons };
}

/**
 * Certification of a decision made from computed singular values (dense SVD, Bloch block SVDs):
 * each is accurate to about `backwardError` (absolute), so the count is proved when no singular
 * value lies within that distance of the cut.
 */
export function certifyFromSingularValues(d: RankDecision, backwardError: number): { certified: boolean; reasons: string[] } {
  const tol = d.tolerance.absolute;
  const reasons: string[] = [];
  // relative figures: the caller may work in scaled units
  const rel = (v: number) => `${(d.sigmaMax > 0 ? v / d.sigmaMax : v).toPrecision(3)}·σ_max`;
  if (d.gap.kept !== null && d.gap.kept - tol <= backwardError) {
    reasons.push(`the smallest kept σ ${rel(d.gap.kept)} is within the rounding bound ${rel(backwardError)} of the cut`);
  }
  if (d.gap.dropped !== null && d.gap.dropped > 0 && tol - d.gap.dropped <= backwardError) {
    reasons.push(`the largest dropped σ ${rel(d.gap.dropped)} is within the rounding bound ${rel(backwardError)} of the cut`);
  }
  if (tol <= backwardError && d.sigmaMax > 0) reasons.push(`the cut ${rel(tol)} is below the rounding bound ${rel(backwardError)} of the singular values: raise --tol`);
  return { certified: reasons.length === 0, reasons };
}
