/**
 * The dense kernels of the multifrontal LDLᴴ (numeric.ts, sparseLdl) on one front F (nf × nf,
 * row-major, lower triangle used) whose first w columns are the supernode's:
 *
 * - Crout rows: for rows i of a block and columns j < jEnd (all earlier pivots known),
 *   W_ij = F_ij − Σ_{k<j} W_ik conj(L_jk) and L_ij = W_ij / D_j, written over F_ij; W = L·D.
 * - the pivots D_i and their growth terms, the copy of the factored columns to L's panel;
 * - the Schur complement U = F₂₂ − W₂ L₂ᴴ of the rows below the supernode, for its parent, and
 *   the extend-add of a child's U into its parent's front.
 *
 * Register blocks (common practice in dense kernels, e.g. K. Goto & R. A. van de Geijn,
 * "Anatomy of high-performance matrix multiplication", ACM Trans. Math. Softw. 34, 12, 2008):
 * four rows by two columns (real) or two by two (complex) summed in locals, so one load feeds
 * more than one multiply-add. Every entry still subtracts its terms one by one in increasing k
 * from F_ij, exactly as the unblocked loop did, so the factor is the same bit for bit.
 */

/** Crout entries j < jEnd of rows i0 … i1−1 (real): W_ij and L_ij over F_ij, four rows by two columns at a time. */
export function croutRowsReal(F: Float64Array, W: Float64Array, d: Float64Array, f: number, nf: number, w: number, i0: number, i1: number, jEnd: number): void {
  let i = i0;
  for (; i + 4 <= i1; i += 4) {
    const f0 = i * nf;
    const f1 = f0 + nf;
    const f2 = f1 + nf;
    const f3 = f2 + nf;
    const w0 = i * w;
    const w1 = w0 + w;
    const w2 = w1 + w;
    const w3 = w2 + w;
    let j = 0;
    for (; j + 2 <= jEnd; j += 2) {
      const fj = j * nf;
      const fk = fj + nf;
      let s0 = F[f0 + j];
      let s1 = F[f1 + j];
      let s2 = F[f2 + j];
      let s3 = F[f3 + j];
      let t0 = F[f0 + j + 1];
      let t1 = F[f1 + j + 1];
      let t2 = F[f2 + j + 1];
      let t3 = F[f3 + j + 1];
      for (let k = 0; k < j; k++) {
        const l = F[fj + k];
        const m = F[fk + k];
        const x0 = W[w0 + k];
        const x1 = W[w1 + k];
        const x2 = W[w2 + k];
        const x3 = W[w3 + k];
        s0 -= x0 * l;
        s1 -= x1 * l;
        s2 -= x2 * l;
        s3 -= x3 * l;
        t0 -= x0 * m;
        t1 -= x1 * m;
        t2 -= x2 * m;
        t3 -= x3 * m;
      }
      const dj = d[f + j];
      W[w0 + j] = s0;
      W[w1 + j] = s1;
      W[w2 + j] = s2;
      W[w3 + j] = s3;
      F[f0 + j] = s0 / dj;
      F[f1 + j] = s1 / dj;
      F[f2 + j] = s2 / dj;
      F[f3 + j] = s3 / dj;
      // the term k = j of column j + 1
      const m = F[fk + j];
      t0 -= s0 * m;
      t1 -= s1 * m;
      t2 -= s2 * m;
      t3 -= s3 * m;
      const dk = d[f + j + 1];
      W[w0 + j + 1] = t0;
      W[w1 + j + 1] = t1;
      W[w2 + j + 1] = t2;
      W[w3 + j + 1] = t3;
      F[f0 + j + 1] = t0 / dk;
      F[f1 + j + 1] = t1 / dk;
      F[f2 + j + 1] = t2 / dk;
      F[f3 + j + 1] = t3 / dk;
    }
    if (j < jEnd) {
      const fj = j * nf;
      let s0 = F[f0 + j];
      let s1 = F[f1 + j];
      let s2 = F[f2 + j];
      let s3 = F[f3 + j];
      for (let k = 0; k < j; k++) {
        const l = F[fj + k];
        s0 -= W[w0 + k] * l;
        s1 -= W[w1 + k] * l;
        s2 -= W[w2 + k] * l;
        s3 -= W[w3 + k] * l;
      }
      const dj = d[f + j];
      W[w0 + j] = s0;
      W[w1 + j] = s1;
      W[w2 + j] = s2;
      W[w3 + j] = s3;
      F[f0 + j] = s0 / dj;
      F[f1 + j] = s1 / dj;
      F[f2 + j] = s2 / dj;
      F[f3 + j] = s3 / dj;
    }
  }
  for (; i < i1; i++) croutRowReal(F, W, d, f, nf, w, i, 0, jEnd);
}

/** Crout entries j0 ≤ j < j1 of row i (real), one at a time. */
export function croutRowReal(F: Float64Array, W: Float64Array, d: Float64Array, f: number, nf: number, w: number, i: number, j0: number, j1: number): void {
  const fi = i * nf;
  const wi = i * w;
  for (let j = j0; j < j1; j++) {
    const fj = j * nf;
    let s = F[fi + j];
    for (let k = 0; k < j; k++) s -= W[wi + k] * F[fj + k];
    W[wi + j] = s;
    F[fi + j] = s / d[f + j];
  }
}

/** croutRowsReal for complex data, two rows by two columns: W_ij = F_ij − Σ_k W_ik conj(L_jk). */
export function croutRowsComplex(FR: Float64Array, FI: Float64Array, WR: Float64Array, WI: Float64Array, d: Float64Array, f: number, nf: number, w: number, i0: number, i1: number, jEnd: number): void {
  let i = i0;
  for (; i + 2 <= i1; i += 2) {
    const f0 = i * nf;
    const f1 = f0 + nf;
    const w0 = i * w;
    const w1 = w0 + w;
    let j = 0;
    for (; j + 2 <= jEnd; j += 2) {
      const fj = j * nf;
      const fk = fj + nf;
      let sr0 = FR[f0 + j];
      let si0 = FI[f0 + j];
      let sr1 = FR[f1 + j];
      let si1 = FI[f1 + j];
      let tr0 = FR[f0 + j + 1];
      let ti0 = FI[f0 + j + 1];
      let tr1 = FR[f1 + j + 1];
      let ti1 = FI[f1 + j + 1];
      for (let k = 0; k < j; k++) {
        const lr = FR[fj + k];
        const li = FI[fj + k];
        const mr = FR[fk + k];
        const mi = FI[fk + k];
        const xr0 = WR[w0 + k];
        const xi0 = WI[w0 + k];
        const xr1 = WR[w1 + k];
        const xi1 = WI[w1 + k];
        sr0 -= xr0 * lr + xi0 * li;
        si0 -= xi0 * lr - xr0 * li;
        sr1 -= xr1 * lr + xi1 * li;
        si1 -= xi1 * lr - xr1 * li;
        tr0 -= xr0 * mr + xi0 * mi;
        ti0 -= xi0 * mr - xr0 * mi;
        tr1 -= xr1 * mr + xi1 * mi;
        ti1 -= xi1 * mr - xr1 * mi;
      }
      const dj = d[f + j];
      WR[w0 + j] = sr0;
      WI[w0 + j] = si0;
      WR[w1 + j] = sr1;
      WI[w1 + j] = si1;
      FR[f0 + j] = sr0 / dj;
      FI[f0 + j] = si0 / dj;
      FR[f1 + j] = sr1 / dj;
      FI[f1 + j] = si1 / dj;
      const mr = FR[fk + j];
      const mi = FI[fk + j];
      tr0 -= sr0 * mr + si0 * mi;
      ti0 -= si0 * mr - sr0 * mi;
      tr1 -= sr1 * mr + si1 * mi;
      ti1 -= si1 * mr - sr1 * mi;
      const dk = d[f + j + 1];
      WR[w0 + j + 1] = tr0;
      WI[w0 + j + 1] = ti0;
      WR[w1 + j + 1] = tr1;
      WI[w1 + j + 1] = ti1;
      FR[f0 + j + 1] = tr0 / dk;
      FI[f0 + j + 1] = ti0 / dk;
      FR[f1 + j + 1] = tr1 / dk;
      FI[f1 + j + 1] = ti1 / dk;
    }
    if (j < jEnd) {
      croutRowComplex(FR, FI, WR, WI, d, f, nf, w, i, j, j + 1);
      croutRowComplex(FR, FI, WR, WI, d, f, nf, w, i + 1, j, j + 1);
    }
  }
  for (; i < i1; i++) croutRowComplex(FR, FI, WR, WI, d, f, nf, w, i, 0, jEnd);
}

/** Crout entries j0 ≤ j < j1 of row i (complex), one at a time. */
export function croutRowComplex(FR: Float64Array, FI: Float64Array, WR: Float64Array, WI: Float64Array, d: Float64Array, f: number, nf: number, w: number, i: number, j0: number, j1: number): void {
  const fi = i * nf;
  const wi = i * w;
  for (let j = j0; j < j1; j++) {
    const fj = j * nf;
    let sr = FR[fi + j];
    let si = FI[fi + j];
    for (let k = 0; k < j; k++) {
      // s −= W_ik · conj(L_jk)
      const lr = FR[fj + k];
      const li = FI[fj + k];
      sr -= WR[wi + k] * lr + WI[wi + k] * li;
      si -= WI[wi + k] * lr - WR[wi + k] * li;
    }
    WR[wi + j] = sr;
    WI[wi + j] = si;
    FR[fi + j] = sr / d[f + j];
    FI[fi + j] = si / d[f + j];
  }
}

/** F_ii − Σ_{k<min(i,w)} W_ik L_ik (0 − … for a row below the supernode); Σ_k |W_ik L_ik| into g[0]. */
export function pivotReal(F: Float64Array, W: Float64Array, nf: number, w: number, i: number, g: Float64Array): number {
  const fi = i * nf;
  const wi = i * w;
  const kEnd = Math.min(i, w);
  let dd = i < w ? F[fi + i] : 0;
  let sum = 0;
  for (let k = 0; k < kEnd; k++) {
    const t = W[wi + k] * F[fi + k];
    dd -= t;
    sum += Math.abs(t);
  }
  g[0] = sum;
  return dd;
}

/** pivotReal for complex data: W_ik conj(L_ik) = D_k |L_ik|². */
export function pivotComplex(FR: Float64Array, FI: Float64Array, WR: Float64Array, WI: Float64Array, nf: number, w: number, i: number, g: Float64Array): number {
  const fi = i * nf;
  const wi = i * w;
  const kEnd = Math.min(i, w);
  let dd = i < w ? FR[fi + i] : 0;
  let sum = 0;
  for (let k = 0; k < kEnd; k++) {
    const t = WR[wi + k] * FR[fi + k] + WI[wi + k] * FI[fi + k];
    dd -= t;
    sum += Math.abs(t);
  }
  g[0] = sum;
  return dd;
}

/** The first w columns of the front F (nf × nf) into the panel L (nf × w) from p. */
export function copyPanel(F: Float64Array, L: Float64Array, p: number, nf: number, w: number): void {
  for (let i = 0; i < nf; i++) {
    const fi = i * nf;
    const pi = p + i * w;
    for (let k = 0; k < w; k++) L[pi + k] = F[fi + k];
  }
}

/** F_(rel a)(rel b) += U_ab for b ≤ a: a child's update matrix into its parent's front (rel ascending). */
export function extendAddReal(F: Float64Array, U: Float64Array, rel: Int32Array, nu: number, nf: number): void {
  for (let a = 0; a < nu; a++) {
    const pa = rel[a] * nf;
    const ua = a * nu;
    for (let b = 0; b <= a; b++) F[pa + rel[b]] += U[ua + b];
  }
}

/** extendAddReal for complex data. */
export function extendAddComplex(FR: Float64Array, FI: Float64Array, UR: Float64Array, UI: Float64Array, rel: Int32Array, nu: number, nf: number): void {
  for (let a = 0; a < nu; a++) {
    const pa = rel[a] * nf;
    const ua = a * nu;
    for (let b = 0; b <= a; b++) {
      FR[pa + rel[b]] += UR[ua + b];
      FI[pa + rel[b]] += UI[ua + b];
    }
  }
}

/**
 * U_ab = F_(w+a)(w+b) − Σ_k W_(w+a)k L_(w+b)k for b ≤ a: four rows and two columns at a time (eight
 * sums held in registers, six loads per step), then the rest of the four rows' triangle, then the
 * last (at most three) rows one at a time. Every entry's sum runs over k in order from 0, as one
 * dot product would.
 */
export function schurReal(F: Float64Array, W: Float64Array, U: Float64Array, nf: number, w: number, nu: number): void {
  let a = 0;
  for (; a + 3 < nu; a += 4) schurRows4(F, W, U, nf, w, nu, a);
  for (; a < nu; a++) schurRow(F, W, U, nf, w, nu, a, 0);
}

/** Rows a … a+3 of U (see schurReal). */
function schurRows4(F: Float64Array, W: Float64Array, U: Float64Array, nf: number, w: number, nu: number, a: number): void {
  const i0 = w + a;
  const w0 = i0 * w;
  const w1 = w0 + w;
  const w2 = w1 + w;
  const w3 = w2 + w;
  const f0 = i0 * nf + w;
  const f1 = f0 + nf;
  const f2 = f1 + nf;
  const f3 = f2 + nf;
  const u0 = a * nu;
  const u1 = u0 + nu;
  const u2 = u1 + nu;
  const u3 = u2 + nu;
  let b = 0;
  for (; b + 1 <= a; b += 2) {
    const l0 = (w + b) * nf;
    const l1 = l0 + nf;
    let s00 = 0;
    let s01 = 0;
    let s10 = 0;
    let s11 = 0;
    let s20 = 0;
    let s21 = 0;
    let s30 = 0;
    let s31 = 0;
    for (let k = 0; k < w; k++) {
      const y0 = F[l0 + k];
      const y1 = F[l1 + k];
      const x0 = W[w0 + k];
      const x1 = W[w1 + k];
      const x2 = W[w2 + k];
      const x3 = W[w3 + k];
      s00 += x0 * y0;
      s01 += x0 * y1;
      s10 += x1 * y0;
      s11 += x1 * y1;
      s20 += x2 * y0;
      s21 += x2 * y1;
      s30 += x3 * y0;
      s31 += x3 * y1;
    }
    U[u0 + b] = F[f0 + b] - s00;
    U[u0 + b + 1] = F[f0 + b + 1] - s01;
    U[u1 + b] = F[f1 + b] - s10;
    U[u1 + b + 1] = F[f1 + b + 1] - s11;
    U[u2 + b] = F[f2 + b] - s20;
    U[u2 + b + 1] = F[f2 + b + 1] - s21;
    U[u3 + b] = F[f3 + b] - s30;
    U[u3 + b + 1] = F[f3 + b + 1] - s31;
  }
  // b = a now: the 4×4 triangle left
  for (let r = 0; r < 4; r++) schurRow(F, W, U, nf, w, nu, a + r, b);
}

/** Row a of U from column b0 to the diagonal (see schurReal). */
function schurRow(F: Float64Array, W: Float64Array, U: Float64Array, nf: number, w: number, nu: number, a: number, b0: number): void {
  const i = w + a;
  const wi = i * w;
  for (let b = b0; b <= a; b++) {
    const l = (w + b) * nf;
    let s = 0;
    for (let k = 0; k < w; k++) s += W[wi + k] * F[l + k];
    U[a * nu + b] = F[i * nf + w + b] - s;
  }
}

/** schurReal for complex data: U_ab = F_ab − Σ_k W_ak conj(L_bk). */
export function schurComplex(FR: Float64Array, FI: Float64Array, WR: Float64Array, WI: Float64Array, UR: Float64Array, UI: Float64Array, nf: number, w: number, nu: number): void {
  for (let a = 0; a < nu; a++) {
    const i = w + a;
    const wi = i * w;
    for (let b = 0; b <= a; b++) {
      const l = (w + b) * nf;
      let sr = 0;
      let si = 0;
      for (let k = 0; k < w; k++) {
        const xr = WR[wi + k];
        const xi = WI[wi + k];
        const yr = FR[l + k];
        const yi = FI[l + k];
        sr += xr * yr + xi * yi;
        si += xi * yr - xr * yi;
      }
      UR[a * nu + b] = FR[i * nf + w + b] - sr;
      UI[a * nu + b] = FI[i * nf + w + b] - si;
    }
  }
}
