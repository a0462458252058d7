/**
 * All roots of a complex polynomial by the Aberth–Ehrlich simultaneous iteration, then Newton
 * polishing of each root on the polynomial itself.
 *
 * Aberth–Ehrlich: every approximation z_i moves by w_i = N_i / (1 − N_i Σ_{j≠i} 1/(z_i − z_j)),
 * N_i = p(z_i)/p'(z_i); it converges cubically to simple roots and linearly to multiple ones
 * (common practice). Start points lie on a circle of the radius given by the geometric mean of
 * the root moduli (|c_0/c_d|^(1/d)), turned off the real axis so that conjugate pairs separate.
 * A root of multiplicity k is found to about ε^(1/k) relative accuracy, as with any method
 * working on the coefficients.
 */

/** A complex number as [re, im]. */
export type Complex = [number, number];

/** p(z) and p'(z) for coefficients c[0] + c[1] z + … (Horner). */
export function polyEval(cr: Float64Array, ci: Float64Array, zr: number, zi: number): { p: Complex; dp: Complex } {
  let pr = 0;
  let pi = 0;
  let dr = 0;
  let di = 0;
  for (let k = cr.length - 1; k >= 0; k--) {
    // dp = dp·z + p ; p = p·z + c_k
    const ndr = dr * zr - di * zi + pr;
    const ndi = dr * zi + di * zr + pi;
    dr = ndr;
    di = ndi;
    const npr = pr * zr - pi * zi + cr[k];
    const npi = pr * zi + pi * zr + ci[k];
    pr = npr;
    pi = npi;
  }
  return { p: [pr, pi], dp: [dr, di] };
}

function cdiv(ar: number, ai: number, br: number, bi: number): Complex {
  // Smith's algorithm
  if (Math.abs(br) >= Math.abs(bi)) {
    const r = bi / br;
    const d = br + bi * r;
    return [(ar + ai * r) / d, (ai - ar * r) / d];
  }
  const r = br / bi;
  const d = br * r + bi;
  return [(ar * r + ai) / d, (ai * r - ar) / d];
}

export interface PolyRootsOptions {
  /** Iteration cap of the simultaneous phase (default 500). */
  maxIterations?: number;
}

/**
 * The d roots of c[0] + c[1] z + … + c[d] z^d (c[d] ≠ 0, c[0] ≠ 0 expected: strip zero
 * coefficients first; a zero c[0] gives roots at 0 found only approximately). Returned in no
 * particular order, repeated by multiplicity.
 */
export function polynomialRoots(cr: Float64Array, ci: Float64Array, options: PolyRootsOptions = {}): Complex[] {
  const d = cr.length - 1;
  if (d < 1) return [];
  if (cr[d] === 0 && ci[d] === 0) throw new Error('polynomialRoots: the leading coefficient is zero');
  if (d === 1) return [cdiv(-cr[0], -ci[0], cr[1], ci[1])];
  const maxIt = options.maxIterations ?? 500;
  const lead = Math.hypot(cr[d], ci[d]);
  const tail = Math.hypot(cr[0], ci[0]);
  const radius = tail > 0 ? Math.pow(tail / lead, 1 / d) : 1;
  const zr = new Float64Array(d);
  const zi = new Float64Array(d);
  for (let k = 0; k < d; k++) {
    const a = (2 * Math.PI * k) / d + 0.4;
    zr[k] = radius * Math.cos(a);
    zi[k] = radius * Math.sin(a);
  }
  const done = new Uint8Array(d);
  for (let it = 0; it < maxIt; it++) {
    let moving = 0;
    for (let i = 0; i < d; i++) {
      if (done[i]) continue;
      const { p, dp } = polyEval(cr, ci, zr[i], zi[i]);
      if (p[0] === 0 && p[1] === 0) {
        done[i] = 1;
        continue;
      }
      const [nr, ni] = cdiv(p[0], p[1], dp[0], dp[1]);
      let sr = 0;
      let si = 0;
      for (let j = 0; j < d; j++) {
        if (j === i) continue;
        const [qr, qi] = cdiv(1, 0, zr[i] - zr[j], zi[i] - zi[j]);
        sr += qr;
        si += qi;
      }
      // w = N / (1 − N·S)
      const [wr, wi] = cdiv(nr, ni, 1 - (nr * sr - ni * si), -(nr * si + ni * sr));
      if (!Number.isFinite(wr) || !Number.isFinite(wi)) {
        done[i] = 1;
        continue;
      }
      zr[i] -= wr;
      zi[i] -= wi;
      if (Math.hypot(wr, wi) <= 4 * Number.EPSILON * Math.hypot(zr[i], zi[i])) done[i] = 1;
      else moving++;
    }
    if (moving === 0) break;
  }
  const roots: Complex[] = [];
  for (let i = 0; i < d; i++) roots.push(polish(cr, ci, zr[i], zi[i]));
  return roots;
}

/** A few Newton steps, kept only while they lower |p|. */
function polish(cr: Float64Array, ci: Float64Array, zr: number, zi: number): Complex {
  let best = polyEval(cr, ci, zr, zi);
  let bestAbs = Math.hypot(best.p[0], best.p[1]);
  for (let k = 0; k < 5 && bestAbs > 0; k++) {
    const [sr, si] = cdiv(best.p[0], best.p[1], best.dp[0], best.dp[1]);
    if (!Number.isFinite(sr) || !Number.isFinite(si)) break;
    const nr = zr - sr;
    const ni = zi - si;
    const next = polyEval(cr, ci, nr, ni);
    const a = Math.hypot(next.p[0], next.p[1]);
    if (!(a < bestAbs)) break;
    zr = nr;
    zi = ni;
    best = next;
    bestAbs = a;
  }
  return [zr, zi];
}
