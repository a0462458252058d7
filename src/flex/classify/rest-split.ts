/**
 * The near/far split of the rest by the nearest-side distance operator.
 */
import { cnorm as norm } from '../../linalg/complex.js';
import { combineColumns, hermitianEigen, scaleInPlace, type Cx, type SpanPart } from './cvec-ops.js';
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
 * The rest is Ψ·C for `within` = C (all of span Ψ when null); the operator is compressed as
 * Cᴴ(ΨᴴDΨ)C. The parts as coefficients of Ψ: near = Ψ·E_near, far = Ψ·E_far (orthonormal
 * columns, in the eigenvalue order); null when there is no side (everything near) or no rest.
 */
export function boundaryDistanceParts(geo: Geometry, psi: Cx[], within: SpanPart | null = null): { near: SpanPart; far: SpanPart } | null {
  const dist = sideDistance(geo.ax);
  const r = psi.length;
  if (!dist || r === 0 || within?.m === 0) return null;
  const J = geo.jointCell.length;
  const dJ = Float64Array.from({ length: J }, (_, k) => dist[geo.jointCell[k]]);
  let rings = 0;
  for (const x of dist) rings = Math.max(rings, x + 1);
  const head = Math.max(1, Math.floor(rings / 4));
  const real = psi.every((v) => v.im.every((x) => x === 0));
  const gram = weightedGram(dJ, psi, real);
  const { re: Are, im: Aim, anyIm } = within ? compress(gram, within, r) : gram;
  const k = within ? within.m : r;
  const eig = hermitianEigen(Are, anyIm ? Aim : null, k);
  const isFar = eig.values.map((mean) => mean >= head * (1 - FAR_MARGIN));
  const part = (far: boolean): SpanPart => {
    const cols = eig.vectors.filter((_, t) => isFar[t] === far);
    const m = cols.length;
    const cplx = anyIm || (within !== null && within.E.im !== null);
    const re = new Float64Array(r * m);
    const im = cplx ? new Float64Array(r * m) : null;
    cols.forEach((y, t) => {
      if (!within)
        for (let b = 0; b < r; b++) {
          re[b * m + t] = y.re[b];
          if (im) im[b * m + t] = y.im[b];
        }
      else {
        // C·y: the eigenvector as coefficients of Ψ
        const { re: Cre, im: Cim } = within.E;
        for (let b = 0; b < r; b++) {
          let sr = 0;
          let si = 0;
          for (let c = 0; c < k; c++) {
            const cr = Cre[b * k + c];
            const ci = Cim ? Cim[b * k + c] : 0;
            sr += cr * y.re[c] - ci * y.im[c];
            si += cr * y.im[c] + ci * y.re[c];
          }
          re[b * m + t] = sr;
          if (im) im[b * m + t] = si;
        }
      }
    });
    return { E: { re, im }, m };
  };
  return { near: part(false), far: part(true) };
}

/** `boundaryDistanceParts` with the parts formed: near and far as orthonormal vectors (the self-stress classifier's form). */
export function splitByBoundaryDistance(geo: Geometry, psi: { re: Float64Array; im: Float64Array }[]): { near: typeof psi; far: typeof psi } {
  const parts = boundaryDistanceParts(geo, psi);
  if (!parts) return { near: psi, far: [] };
  const real = psi.every((v) => v.im.every((x) => x === 0)) && !parts.near.E.im && !parts.far.E.im;
  const form = ({ E, m }: SpanPart) => {
    const vectors = combineColumns(psi, E.re, E.im, m, real);
    for (const v of vectors) scaleInPlace(v, 1 / norm(v));
    return vectors;
  };
  return { near: form(parts.near), far: form(parts.far) };
}

/** Cᴴ·A·C for the Hermitian r×r A (row-major) and C = within.E (r×m): the operator compressed to Ψ·C. */
function compress(A: { re: Float64Array; im: Float64Array; anyIm: boolean }, within: SpanPart, r: number): { re: Float64Array; im: Float64Array; anyIm: boolean } {
  const m = within.m;
  const Cre = within.E.re;
  const Cim = within.E.im;
  // T = A·C (r×m)
  const Tre = new Float64Array(r * m);
  const Tim = new Float64Array(r * m);
  for (let a = 0; a < r; a++)
    for (let b = 0; b < r; b++) {
      const ar = A.re[a * r + b];
      const ai = A.im[a * r + b];
      for (let t = 0; t < m; t++) {
        const cr = Cre[b * m + t];
        const ci = Cim ? Cim[b * m + t] : 0;
        Tre[a * m + t] += ar * cr - ai * ci;
        Tim[a * m + t] += ar * ci + ai * cr;
      }
    }
  // Cᴴ·T (m×m), made exactly Hermitian
  const re = new Float64Array(m * m);
  const im = new Float64Array(m * m);
  for (let a = 0; a < r; a++)
    for (let s = 0; s < m; s++) {
      const cr = Cre[a * m + s];
      const ci = Cim ? -Cim[a * m + s] : 0;
      if (cr === 0 && ci === 0) continue;
      for (let t = 0; t < m; t++) {
        re[s * m + t] += cr * Tre[a * m + t] - ci * Tim[a * m + t];
        im[s * m + t] += cr * Tim[a * m + t] + ci * Tre[a * m + t];
      }
    }
  let anyIm = false;
  for (let s = 0; s < m; s++) {
    im[s * m + s] = 0;
    for (let t = s + 1; t < m; t++) {
      const hr = (re[s * m + t] + re[t * m + s]) / 2;
      const hi = (im[s * m + t] - im[t * m + s]) / 2;
      re[s * m + t] = re[t * m + s] = hr;
      im[s * m + t] = hi;
      im[t * m + s] = -hi;
      if (hi !== 0) anyIm = true;
    }
  }
  return { re, im, anyIm };
}

/** Joints per chunk of `weightedGram`: a chunk of every vector stays in the core's cache. */
const GRAM_CHUNK = 256;

/**
 * The Hermitian r×r matrix A[a][b] = Σ_k d_k Σ_{i ∈ {2k, 2k+1}} conj(ψ_a[i]) ψ_b[i] (joints
 * with d_k = 0 skipped), row-major, and whether any imaginary part is nonzero. Summed chunk by
 * chunk of joints so that every pair reads the vectors from cache; `real`: every ψ is real
 * (only the real products are formed).
 */
function weightedGram(d: Float64Array, psi: Cx[], real: boolean): { re: Float64Array; im: Float64Array; anyIm: boolean } {
  const r = psi.length;
  const J = d.length;
  const Are = new Float64Array(r * r);
  const Aim = new Float64Array(r * r);
  const out: [number, number] = [0, 0];
  for (let k0 = 0; k0 < J; k0 += GRAM_CHUNK) {
    const k1 = Math.min(J, k0 + GRAM_CHUNK);
    let a0 = 0;
    if (real)
      // pairs of rows a, a + 1 against four columns b ≥ a + 2 at a time; the rest below
      for (; a0 + 1 < r; a0 += 2) {
        const a = a0;
        Are[a * r + a] += realWeightedDot(d, k0, k1, psi[a].re, psi[a].re);
        Are[a * r + a + 1] += realWeightedDot(d, k0, k1, psi[a].re, psi[a + 1].re);
        Are[(a + 1) * r + a + 1] += realWeightedDot(d, k0, k1, psi[a + 1].re, psi[a + 1].re);
        let b = a + 2;
        for (; b + 3 < r; b += 4) realWeightedDot2x4(d, k0, k1, psi[a].re, psi[a + 1].re, psi[b].re, psi[b + 1].re, psi[b + 2].re, psi[b + 3].re, Are, a * r + b, r);
        for (; b < r; b++) {
          Are[a * r + b] += realWeightedDot(d, k0, k1, psi[a].re, psi[b].re);
          Are[(a + 1) * r + b] += realWeightedDot(d, k0, k1, psi[a + 1].re, psi[b].re);
        }
      }
    // the last row when r is odd (real), or every row (complex)
    for (let a = a0; a < r; a++)
      for (let b = a; b < r; b++) {
        if (real) Are[a * r + b] += realWeightedDot(d, k0, k1, psi[a].re, psi[b].re);
        else {
          weightedDot(d, k0, k1, psi[a], psi[b], out);
          Are[a * r + b] += out[0];
          Aim[a * r + b] += out[1];
        }
      }
  }
  let anyIm = false;
  for (let a = 0; a < r; a++) {
    if (Aim[a * r + a] !== 0) anyIm = true;
    for (let b = a + 1; b < r; b++) {
      Are[b * r + a] = Are[a * r + b];
      Aim[b * r + a] = -Aim[a * r + b];
      if (Aim[a * r + b] !== 0) anyIm = true;
    }
  }
  return { re: Are, im: Aim, anyIm };
}

/** Σ_{k0 ≤ k < k1} d_k (a_2k b_2k + a_2k+1 b_2k+1) for real vectors (joints with d_k = 0 skipped). */
function realWeightedDot(d: Float64Array, k0: number, k1: number, ar: Float64Array, br: Float64Array): number {
  let s = 0;
  for (let k = k0; k < k1; k++) {
    const dk = d[k];
    if (dk === 0) continue;
    const i = 2 * k;
    s += dk * (ar[i] * br[i] + ar[i + 1] * br[i + 1]);
  }
  return s;
}

/** `realWeightedDot` of a0 and a1 with b0…b3 at once (eight independent sums), added to out[o…o+3] and out[o+r…o+r+3]. */
function realWeightedDot2x4(d: Float64Array, k0: number, k1: number, a0: Float64Array, a1: Float64Array, b0: Float64Array, b1: Float64Array, b2: Float64Array, b3: Float64Array, out: Float64Array, o: number, r: number): void {
  let s00 = 0;
  let s01 = 0;
  let s02 = 0;
  let s03 = 0;
  let s10 = 0;
  let s11 = 0;
  let s12 = 0;
  let s13 = 0;
  for (let k = k0; k < k1; k++) {
    const dk = d[k];
    if (dk === 0) continue;
    const i = 2 * k;
    const x0 = a0[i];
    const y0 = a0[i + 1];
    const x1 = a1[i];
    const y1 = a1[i + 1];
    const u0 = b0[i];
    const v0 = b0[i + 1];
    const u1 = b1[i];
    const v1 = b1[i + 1];
    const u2 = b2[i];
    const v2 = b2[i + 1];
    const u3 = b3[i];
    const v3 = b3[i + 1];
    s00 += dk * (x0 * u0 + y0 * v0);
    s01 += dk * (x0 * u1 + y0 * v1);
    s02 += dk * (x0 * u2 + y0 * v2);
    s03 += dk * (x0 * u3 + y0 * v3);
    s10 += dk * (x1 * u0 + y1 * v0);
    s11 += dk * (x1 * u1 + y1 * v1);
    s12 += dk * (x1 * u2 + y1 * v2);
    s13 += dk * (x1 * u3 + y1 * v3);
  }
  out[o] += s00;
  out[o + 1] += s01;
  out[o + 2] += s02;
  out[o + 3] += s03;
  out[o + r] += s10;
  out[o + r + 1] += s11;
  out[o + r + 2] += s12;
  out[o + r + 3] += s13;
}

/**
 * Σ_{k0 ≤ k < k1} d_k Σ_{i ∈ {2k, 2k+1}} conj(a_i) b_i into out (joints with d_k = 0 skipped).
 * A function of its own so that V8 optimises the hot loop early (its callers run once).
 */
function weightedDot(d: Float64Array, k0: number, k1: number, pa: Cx, pb: Cx, out: [number, number]): void {
  let sr = 0;
  let si = 0;
  const ar = pa.re;
  const ai = pa.im;
  const br = pb.re;
  const bi = pb.im;
  for (let k = k0; k < k1; k++) {
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
