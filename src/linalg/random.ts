/**
 * The one seeded pseudo-random generator of the code base: deterministic start vectors for
 * Lanczos and subspace iteration, never anything that needs statistical quality.
 *
 * The state is one 32-bit word advanced by 0x6d2b79f5 per draw and mixed by xor-shifts and
 * multiplications (the "mulberry32" mix, T. Ettinger, public-domain code, from memory). Period
 * 2^32; every draw is a multiple of 2^-32.
 */

/** A generator of uniform numbers in [lo, hi), default [0, 1); the same seed gives the same sequence. */
export function seededUniform(seed: number, lo = 0, hi = 1): () => number {
  if (!Number.isFinite(seed)) throw new RangeError(`seededUniform: seed must be a finite number, got ${seed}`);
  if (!(Number.isFinite(lo) && Number.isFinite(hi) && lo < hi)) throw new RangeError(`seededUniform: need finite lo < hi, got [${lo}, ${hi})`);
  const width = hi - lo;
  let t = seed >>> 0;
  return () => {
    t = (t + 0x6d2b79f5) >>> 0;
    let r = Math.imul(t ^ (t >>> 15), 1 | t);
    r = (r + Math.imul(r ^ (r >>> 7), 61 | r)) ^ r;
    const u = ((r ^ (r >>> 14)) >>> 0) / 4294967296;
    return lo + width * u;
  };
}
