/**
 * Small helpers for real subspaces given by orthonormal vectors: inner products, combinations
 * and the orthonormal complement. Shared by the flexible-lattice analysis and the prestress check.
 */

export function dot(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i] * b[i];
  return s;
}

export function norm(a: ArrayLike<number>): number {
  return Math.sqrt(dot(a, a));
}

/** Σ_j c[j]·vectors[j] (vectors of equal length n). */
export function combine(vectors: readonly Float64Array[], c: ArrayLike<number>, n: number): Float64Array {
  const out = new Float64Array(n);
  for (let j = 0; j < vectors.length; j++) {
    const cj = c[j];
    if (cj === 0) continue;
    const v = vectors[j];
    for (let i = 0; i < n; i++) out[i] += cj * v[i];
  }
  return out;
}

/** x minus its projection on the orthonormal vectors q (two passes of modified Gram–Schmidt). */
function projectOut(x: Float64Array, q: readonly Float64Array[]): void {
  for (let pass = 0; pass < 2; pass++) {
    for (const b of q) {
      const c = dot(b, x);
      for (let i = 0; i < x.length; i++) x[i] -= c * b[i];
    }
  }
}

/**
 * `count` orthonormal vectors of ℝⁿ orthogonal to the orthonormal vectors `taken`: the unit
 * vectors e_1..e_n are orthogonalised against `taken` and against each other, the one with the
 * largest residual first (so the result does not depend on the order of near ties more than
 * rounding does).
 */
export function orthonormalComplement(taken: readonly Float64Array[], n: number, count: number): Float64Array[] {
  const basis = taken.slice();
  const out: Float64Array[] = [];
  const work = Array.from({ length: n }, (_, j) => {
    const e = new Float64Array(n);
    e[j] = 1;
    projectOut(e, basis);
    return e;
  });
  while (out.length < count) {
    let best = -1;
    let bestNorm = 1e-8;
    for (let j = 0; j < n; j++) {
      const r = norm(work[j]);
      if (r > bestNorm) {
        bestNorm = r;
        best = j;
      }
    }
    if (best < 0) break;
    const q = work[best];
    projectOut(q, basis);
    const r = norm(q);
    for (let i = 0; i < n; i++) q[i] /= r;
    basis.push(q);
    out.push(q);
    work[best] = new Float64Array(n);
    for (let j = 0; j < n; j++) {
      const c = dot(q, work[j]);
      if (c !== 0) for (let i = 0; i < n; i++) work[j][i] -= c * q[i];
    }
  }
  return out;
}

/**
 * Orthonormal vectors spanning the same space as the given linearly independent vectors, by
 * modified Gram–Schmidt in the given order; a vector whose residual falls to `dropBelow` × its
 * norm or less is left out.
 */
export function orthonormalise(vectors: readonly Float64Array[], dropBelow = 1e-8): Float64Array[] {
  const out: Float64Array[] = [];
  for (const v of vectors) {
    const x = Float64Array.from(v);
    const n0 = norm(x);
    if (n0 === 0) continue;
    projectOut(x, out);
    const r = norm(x);
    if (r <= dropBelow * n0) continue;
    for (let i = 0; i < x.length; i++) x[i] /= r;
    out.push(x);
  }
  return out;
}
