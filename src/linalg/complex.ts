/**
 * Complex vectors as separate real and imaginary parts, and the small set of operations the
 * flex spaces need: inner products, orthonormalisation, and the exact real embedding of a
 * complex matrix.
 */
export interface CVec {
  re: Float64Array;
  im: Float64Array;
}

export function cvec(n: number): CVec {
  return { re: new Float64Array(n), im: new Float64Array(n) };
}

/** ⟨a, b⟩ = Σ conj(a_i) b_i. */
export function cdot(a: CVec, b: CVec): [number, number] {
  let sr = 0;
  let si = 0;
  for (let i = 0; i < a.re.length; i++) {
    sr += a.re[i] * b.re[i] + a.im[i] * b.im[i];
    si += a.re[i] * b.im[i] - a.im[i] * b.re[i];
  }
  return [sr, si];
}

export function cnorm(a: CVec): number {
  let s = 0;
  for (let i = 0; i < a.re.length; i++) s += a.re[i] ** 2 + a.im[i] ** 2;
  return Math.sqrt(s);
}

/** a -= c · b for complex scalar c = (cr, ci). */
function caxpy(a: CVec, cr: number, ci: number, b: CVec): void {
  for (let i = 0; i < a.re.length; i++) {
    a.re[i] -= cr * b.re[i] - ci * b.im[i];
    a.im[i] -= cr * b.im[i] + ci * b.re[i];
  }
}

/**
 * Orthonormal basis of the complex span of `vectors`, by modified Gram–Schmidt with column
 * pivoting (largest remaining residual first) and one re-orthogonalisation pass.
 * Vectors whose residual falls to `dropBelow` × their original norm or less are dependent.
 */
export function complexOrthonormalSpan(vectors: CVec[], dropBelow = 1e-8, limit = Infinity): CVec[] {
  const work = vectors.map((v) => ({ re: Float64Array.from(v.re), im: Float64Array.from(v.im) }));
  const scale = vectors.map((v) => cnorm(v));
  const alive = work.map((_, i) => scale[i] > 0);
  const basis: CVec[] = [];
  while (basis.length < limit) {
    let best = -1;
    let bestRel = dropBelow;
    for (let i = 0; i < work.length; i++) {
      if (!alive[i]) continue;
      const rel = cnorm(work[i]) / scale[i];
      if (rel > bestRel) {
        bestRel = rel;
        best = i;
      }
    }
    if (best < 0) break;
    const q = work[best];
    alive[best] = false;
    for (let pass = 0; pass < 2; pass++) {
      for (const b of basis) {
        const [cr, ci] = cdot(b, q);
        caxpy(q, cr, ci, b);
      }
    }
    const nq = cnorm(q);
    for (let i = 0; i < q.re.length; i++) {
      q.re[i] /= nq;
      q.im[i] /= nq;
    }
    basis.push(q);
    for (let i = 0; i < work.length; i++) {
      if (!alive[i]) continue;
      const [cr, ci] = cdot(q, work[i]);
      caxpy(work[i], cr, ci, q);
    }
  }
  return basis;
}

/** exp(2πi t) for t in turns, exact at multiples of ¼ (so real phases give exactly real blocks). */
export function cis(t: number): [number, number] {
  const r = t - Math.floor(t);
  const q = 4 * r;
  if (Number.isInteger(q)) return ([[1, 0], [0, 1], [-1, 0], [0, -1]] as [number, number][])[q % 4];
  const a = 2 * Math.PI * r;
  return [Math.cos(a), Math.sin(a)];
}
