/**
 * The one seeded pseudo-random generator of the code base: deterministic start vectors for
 * Lanczos and subspace iteration, never anything that needs statistical quality.
 *
 * The state is one 32-bit word advanced by 0x6d2b79f5 per draw and mixed by xor-shifts and
 * multiplications (the "mulberry32" mix, T. Ettinger, public-domain code, from memory). Period
 * 2^32; every draw is a multiple of 2^-32.
 */

/** A seeded generator: each call draws one number; `fill` draws a.length of them into a, in order. */
export interface Uniform {
  (): number;
  /** The next a.length draws into a (the same numbers as a.length calls, without a call each). */
  fill(a: Float64Array): void;
}

/** A generator of uniform numbers in [lo, hi), default [0, 1); the same seed gives the same sequence. */
export function seededUniform(seed: number, lo = 0, hi = 1): Uniform {
  if (!Number.isFinite(seed)) throw new RangeError(`seededUniform: seed must be a finite number, got ${seed}`);
  if (!(Number.isFinite(lo) && Number.isFinite(hi) && lo < hi)) throw new RangeError(`seededUniform: need finite lo < hi, got [${lo}, ${hi})`);
  const width = hi - lo;
  const state = new Uint32Array([seed >>> 0]);
  const draw = (() => {
    const t = (state[0] = (state[0] + 0x6d2b79f5) >>> 0);
    return lo + width * mix(t);
  }) as Uniform;
  draw.fill = (a) => fillUniform(a, state, lo, width);
  return draw;
}

/** The mulberry32 output of state t, in [0, 1). */
function mix(t: number): number {
  let r = Math.imul(t ^ (t >>> 15), 1 | t);
  r = (r + Math.imul(r ^ (r >>> 7), 61 | r)) ^ r;
  return ((r ^ (r >>> 14)) >>> 0) / 4294967296;
}

function fillUniform(a: Float64Array, state: Uint32Array, lo: number, width: number): void {
  let t = state[0];
  for (let i = 0; i < a.length; i++) {
    t = (t + 0x6d2b79f5) >>> 0;
    let r = Math.imul(t ^ (t >>> 15), 1 | t);
    r = (r + Math.imul(r ^ (r >>> 7), 61 | r)) ^ r;
    a[i] = lo + width * (((r ^ (r >>> 14)) >>> 0) / 4294967296);
  }
  state[0] = t;
}
