/**
 * Eigenvalues and eigenvectors of a small dense Hermitian matrix (real symmetric or complex
 * Hermitian), the one dense eigensolver of the code base.
 *
 * Method (common practice; G. H. Golub & C. F. Van Loan, Matrix Computations, §8.3, from memory):
 *  1. Householder reflectors P_k = I − 2 u uᴴ reduce H to a Hermitian tridiagonal matrix
 *     T = Qᴴ H Q, Q = P_0 P_1 ⋯.
 *  2. A diagonal of unit phases D makes T's off-diagonal real and non-negative: T = D T_r Dᴴ.
 *  3. Implicit QL with Wilkinson-type shifts diagonalises the real T_r = Z Λ Zᵀ by plane rotations.
 *  4. The eigenvectors are V = Q D Z.
 * Every factor is unitary, so V is orthonormal to rounding (‖VᴴV − I‖ ~ n·ε) whatever the
 * multiplicities: no eigenvector is selected, tested or dropped, and a repeated eigenvalue only
 * makes QL deflate sooner. The residual ‖HV − VΛ‖ is ~ n·ε·‖H‖.
 *
 * Cost about 4n³/3 (reduction) + 3n³ (QL rotations) + 2n³ (back-transformation) real
 * multiply-adds for a real H, about four times the first and last terms for a complex one.
 */

const EPS = 2.220446049250313e-16;
/** QL iterations allowed per eigenvalue before giving up (two or three are usual). */
const MAX_QL_ITERATIONS = 60;

export interface HermitianEigenResult {
  /** Eigenvalues, ascending. */
  values: Float64Array;
  /** Real parts of the eigenvectors as columns: vre[i*n + j] = component i of vector j. */
  vre: Float64Array;
  /** Imaginary parts, same layout; null when the input was real (im null). */
  vim: Float64Array | null;
}

/**
 * Eigen-decomposition of the n×n Hermitian matrix H = re + i·im (row-major; im null for a real
 * symmetric matrix). The input is not modified; it is used as (H + Hᴴ)/2, so a matrix that is
 * Hermitian only up to rounding is accepted.
 */
export function hermitianEigen(re: Float64Array, im: Float64Array | null, n: number): HermitianEigenResult {
  checkInput(re, im, n);
  // entries far from 1 are scaled by a power of two (exact), so sums of squares cannot overflow
  let amax = 0;
  for (let k = 0; k < n * n; k++) amax = Math.max(amax, Math.abs(re[k]), im ? Math.abs(im[k]) : 0);
  const scale = amax > 2 ** 500 || (amax > 0 && amax < 2 ** -500) ? 2 ** -Math.round(Math.log2(amax)) : 1;
  // working copy, made exactly Hermitian
  const ar = new Float64Array(n * n);
  const ai = im ? new Float64Array(n * n) : null;
  const half = 0.5 * scale;
  for (let i = 0; i < n; i++)
    for (let j = 0; j < n; j++) {
      ar[i * n + j] = half * (re[i * n + j] + re[j * n + i]);
      if (ai && im) ai[i * n + j] = half * (im[i * n + j] - im[j * n + i]);
    }

  const reflectors = tridiagonalise(ar, ai, n);

  // T = D T_r Dᴴ: sub-diagonal t_i = T[i+1][i]; δ_0 = 1, δ_{i+1} = δ_i·t_i/|t_i| gives (T_r)[i+1][i] = |t_i|
  const d = new Float64Array(n);
  const e = new Float64Array(n);
  const phr = new Float64Array(n);
  const phi = new Float64Array(n);
  for (let i = 0; i < n; i++) d[i] = ar[i * n + i];
  if (n > 0) phr[0] = 1;
  for (let i = 0; i + 1 < n; i++) {
    const tr = ar[(i + 1) * n + i];
    const ti = ai ? ai[(i + 1) * n + i] : 0;
    const t = Math.hypot(tr, ti);
    e[i] = t;
    if (t === 0) {
      phr[i + 1] = 1;
      continue;
    }
    const cr = tr / t;
    const ci = ti / t;
    phr[i + 1] = phr[i] * cr - phi[i] * ci;
    phi[i + 1] = phr[i] * ci + phi[i] * cr;
  }

  // QL on T_r; zt row j is eigenvector j of T_r (rows, so that rotations touch contiguous memory)
  const zt = new Float64Array(n * n);
  for (let i = 0; i < n; i++) zt[i * n + i] = 1;
  tridiagonalQl(d, e, zt, n);

  // back to H: y = Q·D·z for every eigenvector z, then columns in ascending order
  const order = Array.from({ length: n }, (_, j) => j).sort((a, b) => d[a] - d[b]);
  const values = new Float64Array(n);
  const vre = new Float64Array(n * n);
  const vim = ai ? new Float64Array(n * n) : null;
  const yr = new Float64Array(n);
  const yi = new Float64Array(n);
  order.forEach((src, col) => {
    values[col] = d[src] / scale;
    for (let i = 0; i < n; i++) {
      const z = zt[src * n + i];
      yr[i] = phr[i] * z;
      yi[i] = phi[i] * z;
    }
    for (let r = reflectors.length - 1; r >= 0; r--) applyReflector(reflectors[r], yr, ai ? yi : null);
    for (let i = 0; i < n; i++) {
      vre[i * n + col] = yr[i];
      if (vim) vim[i * n + col] = yi[i];
    }
  });
  return { values, vre, vim };
}

/** P = I − 2 u uᴴ acting on the components start..n−1 (‖u‖ = 1). */
interface Reflector {
  start: number;
  ur: Float64Array;
  ui: Float64Array | null;
}

function checkInput(re: Float64Array, im: Float64Array | null, n: number): void {
  if (!Number.isInteger(n) || n < 0) throw new RangeError(`hermitianEigen: n must be a non-negative integer, got ${n}`);
  if (re.length < n * n) throw new RangeError(`hermitianEigen: re has ${re.length} entries, needs n·n = ${n * n}`);
  if (im && im.length < n * n) throw new RangeError(`hermitianEigen: im has ${im.length} entries, needs n·n = ${n * n}`);
  for (let k = 0; k < n * n; k++)
    if (!Number.isFinite(re[k]) || (im && !Number.isFinite(im[k])))
      throw new RangeError(`hermitianEigen: entry (${Math.floor(k / n)}, ${k % n}) is not finite; every entry must be a finite number`);
}

/**
 * Householder reduction in place: afterwards a holds a Hermitian tridiagonal matrix (diagonal
 * and first sub/super-diagonals; the rest is left stale). Returns the reflectors, first to last.
 */
function tridiagonalise(ar: Float64Array, ai: Float64Array | null, n: number): Reflector[] {
  const reflectors: Reflector[] = [];
  for (let k = 0; k + 2 < n; k++) {
    const s = k + 1;
    const m = n - s;
    // x = column k below the diagonal; P x = α e_1 with α = −(x_0/|x_0|)·‖x‖
    const x0r = ar[s * n + k];
    const x0i = ai ? ai[s * n + k] : 0;
    let tail = 0;
    for (let i = s + 1; i < n; i++) tail += ar[i * n + k] ** 2 + (ai ? ai[i * n + k] ** 2 : 0);
    if (tail === 0) continue; // already tridiagonal in this column
    const x0 = Math.hypot(x0r, x0i);
    const xn = Math.sqrt(x0 * x0 + tail);
    const pr = x0 === 0 ? 1 : x0r / x0;
    const pi = x0 === 0 ? 0 : x0i / x0;
    // u = (x − α e_1)/‖x − α e_1‖, ‖x − α e_1‖² = 2‖x‖(‖x‖ + |x_0|)
    const inv = 1 / Math.sqrt(2 * xn * (xn + x0));
    const ur = new Float64Array(m);
    const ui = ai ? new Float64Array(m) : null;
    for (let i = 0; i < m; i++) ur[i] = ar[(s + i) * n + k] * inv;
    if (ui && ai) for (let i = 0; i < m; i++) ui[i] = ai[(s + i) * n + k] * inv;
    ur[0] = (x0r + pr * xn) * inv;
    if (ui) ui[0] = (x0i + pi * xn) * inv;
    // column and row k: α below the diagonal, zeros beyond
    for (let i = s; i < n; i++) {
      ar[i * n + k] = ar[k * n + i] = 0;
      if (ai) ai[i * n + k] = ai[k * n + i] = 0;
    }
    ar[s * n + k] = ar[k * n + s] = -pr * xn;
    if (ai) {
      ai[s * n + k] = -pi * xn;
      ai[k * n + s] = pi * xn;
    }
    // trailing block B ← P B P = B − 2 u qᴴ − 2 q uᴴ, p = B u, q = p − (uᴴp) u
    if (ai && ui) updateComplex(ar, ai, n, s, ur, ui);
    else updateReal(ar, n, s, ur);
    reflectors.push({ start: s, ur, ui });
  }
  return reflectors;
}

function updateReal(ar: Float64Array, n: number, s: number, u: Float64Array): void {
  const m = n - s;
  const q = new Float64Array(m);
  let K = 0;
  for (let i = 0; i < m; i++) {
    const row = (s + i) * n + s;
    let acc = 0;
    for (let j = 0; j < m; j++) acc += ar[row + j] * u[j];
    q[i] = acc;
    K += u[i] * acc;
  }
  for (let i = 0; i < m; i++) q[i] -= K * u[i];
  for (let i = 0; i < m; i++) {
    const row = (s + i) * n + s;
    const ui2 = 2 * u[i];
    const qi2 = 2 * q[i];
    for (let j = 0; j < m; j++) ar[row + j] -= ui2 * q[j] + qi2 * u[j];
  }
}

function updateComplex(ar: Float64Array, ai: Float64Array, n: number, s: number, ur: Float64Array, ui: Float64Array): void {
  const m = n - s;
  const qr = new Float64Array(m);
  const qi = new Float64Array(m);
  let K = 0; // uᴴ B u, real for Hermitian B
  for (let i = 0; i < m; i++) {
    const row = (s + i) * n + s;
    let sr = 0;
    let si = 0;
    for (let j = 0; j < m; j++) {
      const br = ar[row + j];
      const bi = ai[row + j];
      sr += br * ur[j] - bi * ui[j];
      si += br * ui[j] + bi * ur[j];
    }
    qr[i] = sr;
    qi[i] = si;
    K += ur[i] * sr + ui[i] * si;
  }
  for (let i = 0; i < m; i++) {
    qr[i] -= K * ur[i];
    qi[i] -= K * ui[i];
  }
  // B_ij −= 2 (u_i·conj(q_j) + q_i·conj(u_j))
  for (let i = 0; i < m; i++) {
    const row = (s + i) * n + s;
    const a = 2 * ur[i];
    const b = 2 * ui[i];
    const c = 2 * qr[i];
    const d = 2 * qi[i];
    for (let j = 0; j < m; j++) {
      ar[row + j] -= a * qr[j] + b * qi[j] + c * ur[j] + d * ui[j];
      ai[row + j] -= b * qr[j] - a * qi[j] + d * ur[j] - c * ui[j];
    }
  }
}

/** y ← P y on the components start..n−1. */
function applyReflector(p: Reflector, yr: Float64Array, yi: Float64Array | null): void {
  const { start, ur, ui } = p;
  const m = ur.length;
  if (!ui || !yi) {
    let c = 0;
    for (let i = 0; i < m; i++) c += ur[i] * yr[start + i];
    c *= 2;
    for (let i = 0; i < m; i++) yr[start + i] -= c * ur[i];
    return;
  }
  // c = 2 uᴴ y
  let cr = 0;
  let ci = 0;
  for (let i = 0; i < m; i++) {
    const r = yr[start + i];
    const im = yi[start + i];
    cr += ur[i] * r + ui[i] * im;
    ci += ur[i] * im - ui[i] * r;
  }
  cr *= 2;
  ci *= 2;
  for (let i = 0; i < m; i++) {
    yr[start + i] -= cr * ur[i] - ci * ui[i];
    yi[start + i] -= cr * ui[i] + ci * ur[i];
  }
}

/**
 * Implicit QL on the real symmetric tridiagonal (d, e), e[i] = T[i+1][i], e[n−1] unused.
 * On return d holds the eigenvalues (unordered) and row j of zt has been rotated into the
 * eigenvector belonging to d[j]. An off-diagonal entry is treated as zero when
 * |e_i| ≤ ε(|d_i| + |d_{i+1}|), which keeps the small eigenvalues of graded matrices accurate.
 * An eigenvalue still unsettled after RELAX_AFTER iterations may also deflate at
 * |e_i| ≤ ε‖T‖ (‖T‖ = max_i |d_i| + |e_i| + |e_{i−1}|), which changes T by at most ε‖T‖, a
 * backward-stable step: a cluster of eigenvalues at zero to rounding (|d| and |e| both
 * ~1e-17, as in I − CᴴC with C's columns orthonormal) never passes the relative test.
 */
/** Iterations on one eigenvalue before the norm-relative deflation test joins the relative one. */
const RELAX_AFTER = 20;

function tridiagonalQl(d: Float64Array, e: Float64Array, zt: Float64Array, n: number): void {
  if (n > 0) e[n - 1] = 0;
  let norm = 0;
  for (let i = 0; i < n; i++) norm = Math.max(norm, Math.abs(d[i]) + Math.abs(e[i]) + (i > 0 ? Math.abs(e[i - 1]) : 0));
  const floor = EPS * norm;
  for (let l = 0; l < n; l++) {
    for (let iter = 0; ; iter++) {
      let m = l;
      const absolute = iter >= RELAX_AFTER ? floor : 0;
      while (m < n - 1 && Math.abs(e[m]) > EPS * (Math.abs(d[m]) + Math.abs(d[m + 1])) && Math.abs(e[m]) > absolute) m++;
      if (m === l) break;
      if (iter === MAX_QL_ITERATIONS) throw new Error(`hermitianEigen: the QL iteration did not converge for eigenvalue ${l} of ${n}`);
      // shift: the eigenvalue of the leading 2×2 block at l nearer to d[l]
      let g = (d[l + 1] - d[l]) / (2 * e[l]);
      let r = Math.hypot(g, 1);
      g = d[m] - d[l] + e[l] / (g + (g >= 0 ? r : -r));
      let s = 1;
      let c = 1;
      let p = 0;
      let underflow = false;
      for (let i = m - 1; i >= l; i--) {
        const f = s * e[i];
        const b = c * e[i];
        r = Math.hypot(f, g);
        e[i + 1] = r;
        if (r === 0) {
          // the chase met an exact zero: deflate there and start again
          d[i + 1] -= p;
          e[m] = 0;
          underflow = true;
          break;
        }
        s = f / r;
        c = g / r;
        g = d[i + 1] - p;
        r = (d[i] - g) * s + 2 * c * b;
        p = s * r;
        d[i + 1] = g + p;
        g = c * r - b;
        rotateRows(zt, n, i, s, c);
      }
      if (underflow) continue;
      d[l] -= p;
      e[l] = g;
      e[m] = 0;
    }
  }
}

/** Rows i and i+1 of zt ← [[c, −s], [s, c]] applied to (row i, row i+1). */
function rotateRows(zt: Float64Array, n: number, i: number, s: number, c: number): void {
  const a = i * n;
  const b = a + n;
  for (let k = 0; k < n; k++) {
    const x = zt[a + k];
    const y = zt[b + k];
    zt[b + k] = s * x + c * y;
    zt[a + k] = c * x - s * y;
  }
}
