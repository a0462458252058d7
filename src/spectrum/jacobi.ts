/**
 * Singular values of a small dense complex matrix by one-sided (Hestenes) Jacobi.
 *
 * The columns of the working matrix are rotated in pairs by unitary plane rotations until every
 * pair is numerically orthogonal; the singular values are then the column norms. Each rotation
 * is applied to the matrix itself (never to AᴴA), so the backward error stays at a few ulps of
 * ‖A‖ and singular values near zero come out with an absolute error of about 1e-15 · ‖A‖_F.
 * Forming AᴴA instead would square the condition number and lose every σ below ~1e-8 · σ_max.
 *
 * Meant for the unit-cell symbol Φ(z) (a few bars × a few joints), evaluated thousands of times;
 * it has no allocation-heavy setup. A wide matrix is handled through Aᴴ (same singular values).
 */

/** Column-pair orthogonality threshold: |a_pᴴ a_q| ≤ EPS · ‖a_p‖ ‖a_q‖. */
const EPS = 1e-15;
/**
 * Absolute floor: a pair is also left alone when the component of the smaller column along the
 * larger one, |a_pᴴ a_q| / max(‖a_p‖, ‖a_q‖), is at most FLOOR · ‖A‖_F. Rotating it would move
 * a singular value by no more than that, and without the floor a column that is zero up to
 * rounding never passes the relative test (its rounding noise is not orthogonal to anything).
 */
const FLOOR = 1e-15;
const MAX_SWEEPS = 80;

/**
 * The working copy the sweeps rotate: k = min(m, n) columns of length L — A itself when tall,
 * Aᴴ when wide (column r of Aᴴ is the conjugate of row r of A).
 */
function workingColumns(re: Float64Array, im: Float64Array, m: number, n: number, work?: JacobiWork) {
  const tall = m >= n;
  const k = tall ? n : m;
  const L = tall ? m : n;
  const reuse = work && work.wr.length >= k * L;
  const wr = reuse ? work.wr.subarray(0, k * L) : new Float64Array(k * L);
  const wi = reuse ? work.wi.subarray(0, k * L) : new Float64Array(k * L);
  if (tall) {
    wr.set(re.subarray(0, m * n));
    wi.set(im.subarray(0, m * n));
  } else {
    for (let c = 0; c < n; c++)
      for (let r = 0; r < m; r++) {
        wr[r * L + c] = re[c * m + r];
        wi[r * L + c] = -im[c * m + r];
      }
  }
  return { tall, k, L, wr, wi };
}

/** Scratch space reused across calls of the same size (the Bloch solver's thousands of blocks). */
export interface JacobiWork {
  wr: Float64Array;
  wi: Float64Array;
}

export function jacobiWork(m: number, n: number): JacobiWork {
  return { wr: new Float64Array(m * n), wi: new Float64Array(m * n) };
}

/**
 * The min(m, n) singular values of the complex m×n matrix A, in DESCENDING order.
 * `re` and `im` hold A column by column: entry (r, c) at index c·m + r.
 * The input arrays are not modified.
 */
export function jacobiSingularValues(re: Float64Array, im: Float64Array, m: number, n: number, work?: JacobiWork): Float64Array {
  if (m === 0 || n === 0) return new Float64Array(0);
  const { k, L, wr, wi } = workingColumns(re, im, m, n, work);
  let fro2 = 0;
  for (let i = 0; i < wr.length; i++) fro2 += wr[i] * wr[i] + wi[i] * wi[i];
  rotateToOrthogonal(wr, wi, k, L, Math.sqrt(fro2));
  const s = new Float64Array(k);
  for (let c = 0; c < k; c++) {
    let t = 0;
    for (let i = c * L; i < (c + 1) * L; i++) t += wr[i] * wr[i] + wi[i] * wi[i];
    s[c] = Math.sqrt(t);
  }
  return s.sort().reverse();
}

/**
 * The min(m, n) singular values of A (as jacobiSingularValues, the same arithmetic) written into
 * out[offset], …, out[offset + k − 1] in no particular order, without allocating: `work` must
 * hold at least min(m, n)·max(m, n) entries. Returns k = min(m, n).
 */
export function jacobiSingularValuesInto(re: Float64Array, im: Float64Array, m: number, n: number, work: JacobiWork, out: Float64Array, offset: number): number {
  if (m === 0 || n === 0) return 0;
  const tall = m >= n;
  const k = tall ? n : m;
  const L = tall ? m : n;
  const { wr, wi } = work;
  if (wr.length < k * L) throw new RangeError(`jacobi: work holds ${wr.length} entries, ${k * L} needed`);
  if (tall) {
    for (let i = 0; i < m * n; i++) {
      wr[i] = re[i];
      wi[i] = im[i];
    }
  } else {
    for (let c = 0; c < n; c++)
      for (let r = 0; r < m; r++) {
        wr[r * L + c] = re[c * m + r];
        wi[r * L + c] = -im[c * m + r];
      }
  }
  let fro2 = 0;
  for (let i = 0; i < k * L; i++) fro2 += wr[i] * wr[i] + wi[i] * wi[i];
  rotateToOrthogonal(wr, wi, k, L, Math.sqrt(fro2));
  for (let c = 0; c < k; c++) {
    let t = 0;
    for (let i = c * L; i < (c + 1) * L; i++) t += wr[i] * wr[i] + wi[i] * wi[i];
    out[offset + c] = Math.sqrt(t);
  }
  return k;
}

/**
 * One-sided Jacobi sweeps on k columns of length L, in place; with qr/qi (k×k) the same
 * rotations are applied to their columns too.
 */
function rotateToOrthogonal(wr: Float64Array, wi: Float64Array, k: number, L: number, normA: number, qr?: Float64Array, qi?: Float64Array): void {
  for (let sweep = 0; sweep < MAX_SWEEPS; sweep++) {
    let rotated = false;
    for (let p = 0; p < k - 1; p++) {
      const op = p * L;
      for (let q = p + 1; q < k; q++) {
        const oq = q * L;
        let alpha = 0;
        let beta = 0;
        let gr = 0;
        let gi = 0;
        for (let i = 0; i < L; i++) {
          const xr = wr[op + i];
          const xi = wi[op + i];
          const yr = wr[oq + i];
          const yi = wi[oq + i];
          alpha += xr * xr + xi * xi;
          beta += yr * yr + yi * yi;
          // conj(x) · y
          gr += xr * yr + xi * yi;
          gi += xr * yi - xi * yr;
        }
        const g = Math.sqrt(gr * gr + gi * gi);
        if (g === 0 || g <= EPS * Math.sqrt(alpha * beta) || g <= FLOOR * normA * Math.sqrt(Math.max(alpha, beta))) continue;
        rotated = true;
        // Turn a_q by the unit phase conj(g)/|g| so that a_pᴴ a_q = |g| is real, then apply the
        // real rotation that zeroes the off-diagonal of the 2×2 Gram matrix [[α, |g|], [|g|, β]].
        const cr = gr / g;
        const ci = gi / g;
        const zeta = (beta - alpha) / (2 * g);
        const t = (zeta >= 0 ? 1 : -1) / (Math.abs(zeta) + Math.sqrt(1 + zeta * zeta));
        const c = 1 / Math.sqrt(1 + t * t);
        const s = c * t;
        rotatePair(wr, wi, op, oq, L, c, s, cr, ci);
        if (qr && qi) rotatePair(qr, qi, p * k, q * k, k, c, s, cr, ci);
      }
    }
    if (!rotated) return;
  }
}

export interface SmallSvd {
  /** min(m, n) singular values, DESCENDING. */
  sigma: Float64Array;
  /** Left singular vectors, column-major m×k (column c at c·m), matching sigma. */
  uRe: Float64Array;
  uIm: Float64Array;
  /** Right singular vectors, column-major n×k (column c at c·n), matching sigma. */
  vRe: Float64Array;
  vIm: Float64Array;
}

/**
 * Thin SVD A = U·diag(σ)·Vᴴ of the complex m×n matrix A (column-major, as above) by the same
 * one-sided Jacobi sweeps, accumulating the rotations. For a tall A the rotations act on A's
 * columns and are accumulated into V (then U = AV/σ); for a wide A they act on Aᴴ and are
 * accumulated into U (then V = AᴴU/σ). A vector belonging to σ = 0 exactly is returned as 0
 * on the side that is divided by σ.
 */
export function jacobiSvd(re: Float64Array, im: Float64Array, m: number, n: number): SmallSvd {
  const { tall, k, L, wr, wi } = workingColumns(re, im, m, n);
  // accumulated rotations: k×k, starting from the identity
  const qr = new Float64Array(k * k);
  const qi = new Float64Array(k * k);
  for (let c = 0; c < k; c++) qr[c * k + c] = 1;
  let fro2 = 0;
  for (let i = 0; i < wr.length; i++) fro2 += wr[i] * wr[i] + wi[i] * wi[i];
  rotateToOrthogonal(wr, wi, k, L, Math.sqrt(fro2), qr, qi);
  const norms = new Float64Array(k);
  for (let c = 0; c < k; c++) {
    let t = 0;
    for (let i = c * L; i < (c + 1) * L; i++) t += wr[i] * wr[i] + wi[i] * wi[i];
    norms[c] = Math.sqrt(t);
  }
  const order = Array.from({ length: k }, (_, c) => c).sort((a, b) => norms[b] - norms[a]);
  const sigma = new Float64Array(k);
  // W = (A or Aᴴ)·Q has columns σ_c·(u_c or v_c); Q holds (v_c or u_c).
  const wRe = new Float64Array(L * k);
  const wIm = new Float64Array(L * k);
  const qRe = new Float64Array(k * k);
  const qIm = new Float64Array(k * k);
  order.forEach((c, j) => {
    const sc = norms[c];
    sigma[j] = sc;
    for (let i = 0; i < L; i++) {
      wRe[j * L + i] = sc > 0 ? wr[c * L + i] / sc : 0;
      wIm[j * L + i] = sc > 0 ? wi[c * L + i] / sc : 0;
    }
    for (let i = 0; i < k; i++) {
      qRe[j * k + i] = qr[c * k + i];
      qIm[j * k + i] = qi[c * k + i];
    }
  });
  return tall ? { sigma, uRe: wRe, uIm: wIm, vRe: qRe, vIm: qIm } : { sigma, uRe: qRe, uIm: qIm, vRe: wRe, vIm: wIm };
}

/** Columns p, q (offsets op, oq, length L) ← (c·x − s·y', s·x + c·y'), y' = column q · (cr − i ci). */
function rotatePair(wr: Float64Array, wi: Float64Array, op: number, oq: number, L: number, c: number, s: number, cr: number, ci: number): void {
  for (let i = 0; i < L; i++) {
    const xr = wr[op + i];
    const xi = wi[op + i];
    const qr = wr[oq + i];
    const qi = wi[oq + i];
    const yr = qr * cr + qi * ci;
    const yi = qi * cr - qr * ci;
    wr[op + i] = c * xr - s * yr;
    wi[op + i] = c * xi - s * yi;
    wr[oq + i] = s * xr + c * yr;
    wi[oq + i] = s * xi + c * yi;
  }
}
