/**
 * The near/far split of the rest by the nearest-side distance operator.
 */
import { cnorm as norm } from '../../linalg/complex.js';
import { combine, hermitianEigen, scaleInPlace, type Cx } from './cvec-ops.js';
import type { Geometry } from './metrics.js';
import type { Axes } from './regions.js';
import { FAR_MARGIN } from './thresholds.js';

/** Distance in whole cells from each cell to the nearest side, or null when every axis wraps. */
function sideDistance(ax: Axes): Int32Array | null {
  if (ax.px && ax.py) return null;
  const d = new Int32Array(ax.N1 * ax.N2);
  for (let j = 0; j < ax.N2; j++)
    for (let i = 0; i < ax.N1; i++) {
      let m = Infinity;
      if (!ax.px) m = Math.min(m, i, ax.N1 - 1 - i);
      if (!ax.py) m = Math.min(m, j, ax.N2 - 1 - j);
      d[j * ax.N1 + i] = m;
    }
  return d;
}

/**
 * The spectral decomposition of the nearest-side distance operator D (diagonal, in cells)
 * compressed to the rest, Ψᴴ D Ψ: eigenvectors whose mean distance reaches the head radius
 * h = max(1, ⌊E/4⌋) (E = number of distance rings) are `far` (candidates for bulk), the others
 * `near`. Basis-independent; with no side at all everything is `near`. Means are rational
 * numbers that can equal h exactly (a uniform field on a strip of 6 rows has mean 1 = h), so
 * the comparison allows 1e-9·h: rounding of the eigenvalues never decides the side.
 */
export function splitByBoundaryDistance(geo: Geometry, psi: { re: Float64Array; im: Float64Array }[]): { near: typeof psi; far: typeof psi } {
  const dist = sideDistance(geo.ax);
  const r = psi.length;
  if (!dist || r === 0) return { near: psi, far: [] };
  const J = geo.jointCell.length;
  const dJ = Float64Array.from({ length: J }, (_, k) => dist[geo.jointCell[k]]);
  let rings = 0;
  for (const x of dist) rings = Math.max(rings, x + 1);
  const head = Math.max(1, Math.floor(rings / 4));
  const Are = new Float64Array(r * r);
  const Aim = new Float64Array(r * r);
  let anyIm = false;
  const out: [number, number] = [0, 0];
  for (let a = 0; a < r; a++)
    for (let b = a; b < r; b++) {
      weightedDot(dJ, J, psi[a], psi[b], out);
      const [sr, si] = out;
      Are[a * r + b] = Are[b * r + a] = sr;
      Aim[a * r + b] = si;
      Aim[b * r + a] = -si;
      if (si !== 0) anyIm = true;
    }
  const eig = hermitianEigen(Are, anyIm ? Aim : null, r);
  const near: typeof psi = [];
  const far: typeof psi = [];
  const real = !anyIm && psi.every((v) => v.im.every((x) => x === 0));
  eig.values.forEach((mean, t) => {
    const v = combine(psi, eig.vectors[t], real);
    scaleInPlace(v, 1 / norm(v));
    (mean >= head * (1 - FAR_MARGIN) ? far : near).push(v);
  });
  return { near, far };
}

/**
 * Σ_k d_k Σ_{i ∈ {2k, 2k+1}} conj(a_i) b_i into out (joints with d_k = 0 skipped). A function of
 * its own so that V8 optimises the hot loop early (its callers run once).
 */
function weightedDot(d: Float64Array, J: number, pa: Cx, pb: Cx, out: [number, number]): void {
  let sr = 0;
  let si = 0;
  const ar = pa.re;
  const ai = pa.im;
  const br = pb.re;
  const bi = pb.im;
  for (let k = 0; k < J; k++) {
    const dk = d[k];
    if (dk === 0) continue;
    const i = 2 * k;
    sr += dk * (ar[i] * br[i] + ai[i] * bi[i]);
    si += dk * (ar[i] * bi[i] - ai[i] * br[i]);
    const j = i + 1;
    sr += dk * (ar[j] * br[j] + ai[j] * bi[j]);
    si += dk * (ar[j] * bi[j] - ai[j] * br[j]);
  }
  out[0] = sr;
  out[1] = si;
}
