/**
 * det Φ(z) as a Laurent polynomial in the transverse variable, its coefficients recovered by a
 * discrete Fourier transform of det Φ sampled on the unit circle.
 *
 * Each row of Φ holds powers between min(0, s) and max(0, s) (s its transverse shift), so det Φ
 * holds powers in [Σ min, Σ max]; N ≥ that width + 1 samples give every coefficient without
 * aliasing, with an absolute error of about ε·max|det| (common practice for interpolation at
 * roots of unity). Non-square Φ has no determinant; there the square compression W·Φ (more bars
 * than columns) or Φ·V (fewer) with fixed pseudo-random W or V is used: its roots contain every
 * point where Φ loses rank, plus spurious ones that the caller removes by checking Φ itself.
 */
import { complexDeterminant, type LaurentSymbol } from './laurent.js';

export interface DeterminantPolynomial {
  /** Power of z of coeffRe[0]; the polynomial is Σ_k c_k z^(lo + k). */
  lo: number;
  hi: number;
  coeffRe: Float64Array;
  coeffIm: Float64Array;
  /** max |det| over the samples and the Hadamard bound Π‖row‖ there: the scale of "zero". */
  maxAbs: number;
  hadamard: number;
  /** det vanishes at every sample (to 1e-10 of the Hadamard bound): no roots to speak of. */
  identicallyZero: boolean;
  /** Whether Φ was compressed to a square matrix first (non-square Φ). */
  compressed: boolean;
}

/** Deterministic pseudo-random numbers in (−1, 1) (a fixed LCG: the compression must be reproducible). */
function fixedRandom(count: number, seed: number): Float64Array {
  const out = new Float64Array(count);
  let s = seed >>> 0;
  for (let i = 0; i < count; i++) {
    s = (Math.imul(s, 1664525) + 1013904223) >>> 0;
    out[i] = (s / 4294967296) * 2 - 1;
  }
  return out;
}

/**
 * The square matrix whose determinant is taken: Φ itself, W·Φ (rows > cols) or Φ·V
 * (rows < cols), with W, V fixed complex pseudo-random matrices. Row-major, size k×k.
 */
export function squareOf(L: LaurentSymbol, phi: { re: Float64Array; im: Float64Array }): { re: Float64Array; im: Float64Array; k: number } {
  const m = L.rows;
  const n = L.cols;
  if (m === n) return { re: phi.re, im: phi.im, k: n };
  const k = Math.min(m, n);
  const wr = fixedRandom(k * Math.max(m, n), 12345);
  const wi = fixedRandom(k * Math.max(m, n), 67890);
  const re = new Float64Array(k * k);
  const im = new Float64Array(k * k);
  if (m > n) {
    // (W Φ)_{ic} = Σ_r W_{ir} Φ_{rc}, W k×m
    for (let i = 0; i < k; i++)
      for (let r = 0; r < m; r++) {
        const ar = wr[i * m + r];
        const ai = wi[i * m + r];
        for (let c = 0; c < n; c++) {
          const br = phi.re[r * n + c];
          const bi = phi.im[r * n + c];
          re[i * k + c] += ar * br - ai * bi;
          im[i * k + c] += ar * bi + ai * br;
        }
      }
  } else {
    // (Φ V)_{rj} = Σ_c Φ_{rc} V_{cj}, V n×k
    for (let r = 0; r < m; r++)
      for (let c = 0; c < n; c++) {
        const ar = phi.re[r * n + c];
        const ai = phi.im[r * n + c];
        if (ar === 0 && ai === 0) continue;
        for (let j = 0; j < k; j++) {
          const br = wr[c * k + j];
          const bi = wi[c * k + j];
          re[r * k + j] += ar * br - ai * bi;
          im[r * k + j] += ar * bi + ai * br;
        }
      }
  }
  return { re, im, k };
}

/** Power span of det of the square matrix squareOf gives. */
function spanOf(L: LaurentSymbol): [number, number] {
  if (L.rows >= L.cols && L.rows !== L.cols) return [L.cols * L.lo, L.cols * L.hi];
  return L.determinantSpan();
}

/** det of the square matrix at z = exp(2πi t), and the Hadamard bound there. */
export function determinantOnCircle(L: LaurentSymbol, t: number): { det: [number, number]; hadamard: number } {
  const sq = squareOf(L, L.evaluateOnCircle(t));
  let h = 1;
  for (let r = 0; r < sq.k; r++) {
    let s = 0;
    for (let c = 0; c < sq.k; c++) s += sq.re[r * sq.k + c] ** 2 + sq.im[r * sq.k + c] ** 2;
    h *= Math.sqrt(s);
  }
  return { det: complexDeterminant(sq.re, sq.im, sq.k), hadamard: h };
}

/**
 * Coefficients of det Φ(z) (or of its square compression), trimmed of leading and trailing
 * coefficients below `relativeCut` × the largest one.
 */
export function determinantPolynomial(L: LaurentSymbol, relativeCut = 1e-10): DeterminantPolynomial {
  const [lo0, hi0] = spanOf(L);
  const width = hi0 - lo0 + 1;
  const N = Math.max(8, width);
  const dr = new Float64Array(N);
  const di = new Float64Array(N);
  let maxAbs = 0;
  let hadamard = 0;
  for (let j = 0; j < N; j++) {
    const { det, hadamard: h } = determinantOnCircle(L, j / N);
    dr[j] = det[0];
    di[j] = det[1];
    maxAbs = Math.max(maxAbs, Math.hypot(det[0], det[1]));
    hadamard = Math.max(hadamard, h);
  }
  const compressed = L.rows !== L.cols;
  const zero = { lo: 0, hi: 0, coeffRe: new Float64Array(0), coeffIm: new Float64Array(0), maxAbs, hadamard, identicallyZero: true, compressed };
  if (!(maxAbs > 1e-10 * hadamard)) return zero;
  // c_p = (1/N) Σ_j D_j exp(−2πi p j/N), p = lo0 … hi0
  const cr = new Float64Array(width);
  const ci = new Float64Array(width);
  for (let q = 0; q < width; q++) {
    const p = lo0 + q;
    let sr = 0;
    let si = 0;
    for (let j = 0; j < N; j++) {
      const a = (-2 * Math.PI * (((p * j) % N) + N)) / N;
      const c = Math.cos(a);
      const s = Math.sin(a);
      sr += dr[j] * c - di[j] * s;
      si += dr[j] * s + di[j] * c;
    }
    cr[q] = sr / N;
    ci[q] = si / N;
  }
  let big = 0;
  for (let q = 0; q < width; q++) big = Math.max(big, Math.hypot(cr[q], ci[q]));
  let a = 0;
  let b = width - 1;
  while (a < b && Math.hypot(cr[a], ci[a]) <= relativeCut * big) a++;
  while (b > a && Math.hypot(cr[b], ci[b]) <= relativeCut * big) b--;
  return { lo: lo0 + a, hi: lo0 + b, coeffRe: cr.slice(a, b + 1), coeffIm: ci.slice(a, b + 1), maxAbs, hadamard, identicallyZero: false, compressed };
}
