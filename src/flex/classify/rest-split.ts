/**
 * The near/far split of the rest by the nearest-side distance operator.
 */
import { allReal, combineColumns, hermitianEigen, normaliseInPlace, type Cx, type SpanPart } from './cvec-ops.js';
import type { Geometry } from './metrics.js';
import type { Axes } from './regions.js';
import { FAR_MARGIN } from './thresholds.js';
import { CHUNKS, inChunks, shareable, sharedFloats, SPLIT_WORK, triangleChunkStart } from '../../linalg/parallel/helper.js';

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
  const real = allReal(psi);
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
  const real = allReal(psi) && !parts.near.E.im && !parts.far.E.im;
  const form = ({ E, m }: SpanPart) => {
    const vectors = combineColumns(psi, E.re, E.im, m, real);
    for (const v of vectors) normaliseInPlace(v, real);
    return vectors;
  };
  return { near: form(parts.near), far: form(parts.far) };
}

/** Cᴴ·A·C for the Hermitian r×r A (row-major) and C = within.E (r×m): the operator compressed to Ψ·C. Exported for the tests. */
export function compress(A: { re: Float64Array; im: Float64Array; anyIm: boolean }, within: SpanPart, r: number): { re: Float64Array; im: Float64Array; anyIm: boolean } {
  const m = within.m;
  const Cre = within.E.re;
  const Cim = within.E.im;
  if (!A.anyIm && !Cim) return compressReal(A.re, Cre, r, m);
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

/**
 * `compress` for real A and C: the same sums without the zero products of the complex form (each
 * term ar·cr − ai·ci is ar·cr exactly when ai = ci = 0), in the same order; imaginary parts zero.
 */
function compressReal(A: Float64Array, C: Float64Array, r: number, m: number): { re: Float64Array; im: Float64Array; anyIm: boolean } {
  const T = new Float64Array(r * m);
  for (let a = 0; a < r; a++)
    for (let b = 0; b < r; b++) {
      const ar = A[a * r + b];
      const t0 = a * m;
      const c0 = b * m;
      for (let t = 0; t < m; t++) T[t0 + t] += ar * C[c0 + t];
    }
  const re = new Float64Array(m * m);
  for (let a = 0; a < r; a++)
    for (let s = 0; s < m; s++) {
      const cr = C[a * m + s];
      if (cr === 0) continue;
      const o = s * m;
      const t0 = a * m;
      for (let t = 0; t < m; t++) re[o + t] += cr * T[t0 + t];
    }
  for (let s = 0; s < m; s++)
    for (let t = s + 1; t < m; t++) re[s * m + t] = re[t * m + s] = (re[s * m + t] + re[t * m + s]) / 2;
  return { re, im: new Float64Array(m * m), anyIm: false };
}

/** Joints per chunk of `weightedGram`: the chunk of every vector, packed, stays in the core's cache. */
const GRAM_CHUNK = 128;

/**
 * The Hermitian r×r matrix A[a][b] = Σ_k d_k Σ_{i ∈ {2k, 2k+1}} conj(ψ_a[i]) ψ_b[i] (joints
 * with d_k = 0 skipped), row-major, and whether any imaginary part is nonzero. Summed chunk by
 * chunk of joints so that every pair reads the vectors from cache; the upper triangle is formed
 * and the lower filled from it. `real`: every ψ is real (only the real products are formed).
 * Exported for the tests (tests/classify-kernels.test.ts).
 */
export function weightedGram(d: Float64Array, psi: Cx[], real: boolean): { re: Float64Array; im: Float64Array; anyIm: boolean } {
  const r = psi.length;
  const J = d.length;
  const Are = sharedFloats(r * r, 0);
  const Aim = new Float64Array(r * r);
  const out: [number, number] = [0, 0];
  if (real) {
    const P = psi.map((v) => v.re);
    const w = shareable(d);
    // chunks of rows of about equal numbers of entries, in whole blocks of four rows
    inChunks('realWeightedGram', realWeightedGram, [w, P, Are], r * r * d.length < SPLIT_WORK ? 1 : CHUNKS);
  } else
    for (let k0 = 0; k0 < J; k0 += GRAM_CHUNK) {
      const k1 = Math.min(J, k0 + GRAM_CHUNK);
      for (let a = 0; a < r; a++)
        for (let b = a; b < r; b++) {
          weightedDot(d, k0, k1, psi[a], psi[b], out);
          Are[a * r + b] += out[0];
          Aim[a * r + b] += out[1];
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

/**
 * The upper triangle of the real `weightedGram` into A: A[a][b] = Σ_i (d_i·ψ_a[i])·ψ_b[i] over
 * the dofs i of joints with d ≠ 0 (d_i the weight of i's joint), in increasing i. By chunks of
 * joints: the chunk's dofs with d ≠ 0 are packed (P[a·L + ·] = ψ_a, Q = d·P), then blocks of
 * 4 rows × 4 columns (16 independent sums, 8 loads per 16 multiply-adds); the last r mod 4
 * columns one entry at a time. Folding d into one side takes one multiply of the three per term
 * (the sums differ from Σ_k d_k(x·u + y·v) by rounding only). Chunk `chunk` of `chunks` of the
 * rows (starting at multiples of 4), so that two threads can share the work; each entry is the
 * same sum either way.
 */
export function realWeightedGram(d: Float64Array, psi: Float64Array[], A: Float64Array, chunk: number, chunks: number): void {
  const r = psi.length;
  const a0 = triangleChunkStart(r, chunk, chunks, 4);
  const a1 = triangleChunkStart(r, chunk + 1, chunks, 4);
  const J = d.length;
  const P = new Float64Array(r * 2 * GRAM_CHUNK);
  const Q = new Float64Array(r * 2 * GRAM_CHUNK);
  const dofs = new Int32Array(2 * GRAM_CHUNK);
  const r4 = r - (r % 4);
  const aEnd = Math.min(a1, r4);
  for (let k0 = 0; k0 < J; k0 += GRAM_CHUNK) {
    const k1 = Math.min(J, k0 + GRAM_CHUNK);
    let L = 0;
    for (let k = k0; k < k1; k++)
      if (d[k] !== 0) {
        dofs[L++] = 2 * k;
        dofs[L++] = 2 * k + 1;
      }
    if (L === 0) continue;
    // the rows of this part (Q) and every column right of its first row (P)
    for (let a = a0; a < r; a++) {
      const v = psi[a];
      const o = a * L;
      for (let i = 0; i < L; i++) {
        const x = v[dofs[i]];
        P[o + i] = x;
        Q[o + i] = d[dofs[i] >> 1] * x;
      }
    }
    for (let a = a0; a < aEnd; a += 4)
      for (let b = a; b < r4; b += 4) {
        const qa = a * L;
        const pb = b * L;
        let s00 = 0, s01 = 0, s02 = 0, s03 = 0, s10 = 0, s11 = 0, s12 = 0, s13 = 0;
        let s20 = 0, s21 = 0, s22 = 0, s23 = 0, s30 = 0, s31 = 0, s32 = 0, s33 = 0;
        for (let i = 0; i < L; i++) {
          const w0 = Q[qa + i];
          const w1 = Q[qa + L + i];
          const w2 = Q[qa + 2 * L + i];
          const w3 = Q[qa + 3 * L + i];
          let u = P[pb + i];
          s00 += w0 * u;
          s10 += w1 * u;
          s20 += w2 * u;
          s30 += w3 * u;
          u = P[pb + L + i];
          s01 += w0 * u;
          s11 += w1 * u;
          s21 += w2 * u;
          s31 += w3 * u;
          u = P[pb + 2 * L + i];
          s02 += w0 * u;
          s12 += w1 * u;
          s22 += w2 * u;
          s32 += w3 * u;
          u = P[pb + 3 * L + i];
          s03 += w0 * u;
          s13 += w1 * u;
          s23 += w2 * u;
          s33 += w3 * u;
        }
        // the block's entries on or above the diagonal (b = a: the lower half is not stored)
        const o = a * r + b;
        A[o] += s00;
        A[o + 1] += s01;
        A[o + 2] += s02;
        A[o + 3] += s03;
        A[o + r + 1] += s11;
        A[o + r + 2] += s12;
        A[o + r + 3] += s13;
        A[o + 2 * r + 2] += s22;
        A[o + 2 * r + 3] += s23;
        A[o + 3 * r + 3] += s33;
        if (b !== a) {
          A[o + r] += s10;
          A[o + 2 * r] += s20;
          A[o + 2 * r + 1] += s21;
          A[o + 3 * r] += s30;
          A[o + 3 * r + 1] += s31;
          A[o + 3 * r + 2] += s32;
        }
      }
    // the last r mod 4 columns, every row above them
    for (let b = r4; b < r; b++)
      for (let a = a0; a <= b && a < a1; a++) {
        let s = 0;
        for (let i = 0, qa = a * L, pb = b * L; i < L; i++) s += Q[qa + i] * P[pb + i];
        A[a * r + b] += s;
      }
  }
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
