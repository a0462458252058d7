/**
 * Numeric sparse LDLᴴ of A − shift·I (A real symmetric or complex Hermitian) on a symbolic
 * analysis (symbolic.ts): multifrontal, one dense front per supernode (I. S. Duff & J. K. Reid,
 * "The multifrontal solution of indefinite sparse symmetric linear equations", ACM Trans. Math.
 * Softw. 9, 302–325, 1983). A front gathers A's entries of the supernode's columns and its
 * children's update matrices (extend-add), factors its first columns in Crout form (each entry
 * one contiguous dot product) and passes the Schur complement of the rest to its parent.
 *
 * No pivoting, as in the band factorisation (banded.ts): a pivot at or below `tiny` is a
 * breakdown and the caller moves the shift. The negative pivots count the eigenvalues below
 * the shift (Sylvester's law of inertia), and `growth` is the band code's measure,
 * max_i (Σ_k |L_ik|²|D_k| + |D_i|) / max_i |A_ii − shift|, so the same backward-error bound
 * applies with the band's widths replaced by the pattern's (SymbolicFactor.dotLength, rowWidth).
 */
import type { SymbolicFactor } from './symbolic.js';

/** A Hermitian matrix in CSR form with both triangles stored (row i lists A_ij). */
export interface HermitianCsr {
  n: number;
  ptr: Int32Array;
  idx: Int32Array;
  re: Float64Array;
  /** Imaginary parts, or null for a real symmetric matrix. */
  im: Float64Array | null;
}

export interface SparseLdlOptions {
  /** Factor A − shift·I; default 0. */
  shift?: number;
  /** A pivot with |d| ≤ tiny is a breakdown; default 1e-13·max_i |A_ii − shift| (as bandLdl). */
  tiny?: number;
  onProgress?: (fraction: number) => void;
  /** Called between supernodes; may throw to cancel. */
  check?: () => void;
}

/** The factor L D Lᴴ of P(A − shift·I)Pᵀ; solves take and return vectors in A's own ordering. */
export class SparseLdlFactor {
  constructor(
    readonly symbolic: SymbolicFactor,
    /** Supernode s's panel (rows × its columns, row-major) starts at panelPtr[s]. */
    readonly panelPtr: Float64Array,
    readonly re: Float64Array,
    readonly im: Float64Array | null,
    /** Pivots D in the factor's (new) ordering. */
    readonly d: Float64Array,
    readonly shift: number,
    readonly negatives: number,
    readonly growth: number,
    readonly breakdown: { index: number; pivot: number } | null,
  ) {}

  /** Solve (A − shift·I) x = b in place (xIm null for real data and a real factor). */
  solve(xRe: Float64Array, xIm: Float64Array | null): void {
    this.solveBlock([xRe], xIm ? [xIm] : null);
  }

  /** Solve for several right-hand sides in place, in chunks of 16 laid out row-major. */
  solveBlock(cols: Float64Array[], colsIm: Float64Array[] | null): void {
    if (this.breakdown) throw new Error('sparse LDLᴴ: cannot solve with a factor that broke down');
    const complex = this.im !== null || colsIm !== null;
    if (complex && !colsIm) throw new Error('a complex factor needs complex right-hand sides');
    const { n, perm } = this.symbolic;
    const CH = 16;
    for (let c0 = 0; c0 < cols.length; c0 += CH) {
      const c = Math.min(CH, cols.length - c0);
      const XR = new Float64Array(n * c);
      const XI = complex ? new Float64Array(n * c) : null;
      for (let r = 0; r < c; r++) {
        const cr = cols[c0 + r];
        for (let i = 0; i < n; i++) XR[perm[i] * c + r] = cr[i];
        if (XI) {
          const ci = colsIm![c0 + r];
          for (let i = 0; i < n; i++) XI[perm[i] * c + r] = ci[i];
        }
      }
      if (XI) this.solveComplex(XR, XI, c);
      else if (c === 1) this.solveOneReal(XR);
      else this.solveReal(XR, c);
      for (let r = 0; r < c; r++) {
        const cr = cols[c0 + r];
        for (let i = 0; i < n; i++) cr[i] = XR[perm[i] * c + r];
        if (XI) {
          const ci = colsIm![c0 + r];
          for (let i = 0; i < n; i++) ci[i] = XI[perm[i] * c + r];
        }
      }
    }
  }

  /** solveReal for one vector: each row's forward sum one dot product, the backward step axpys. */
  private solveOneReal(x: Float64Array): void {
    const { superStart, rowPtr, superRows } = this.symbolic;
    const P = this.re;
    const ns = superStart.length - 1;
    for (let s = 0; s < ns; s++) {
      const f = superStart[s];
      const w = superStart[s + 1] - f;
      const r0 = rowPtr[s];
      const nf = rowPtr[s + 1] - r0;
      const p = this.panelPtr[s];
      for (let i = 1; i < w; i++) {
        const pi = p + i * w - f;
        let t = x[f + i];
        for (let k = f; k < f + i; k++) t -= P[pi + k] * x[k];
        x[f + i] = t;
      }
      for (let i = w; i < nf; i++) {
        const pi = p + i * w - f;
        let t = 0;
        for (let k = f; k < f + w; k++) t += P[pi + k] * x[k];
        x[superRows[r0 + i]] -= t;
      }
    }
    const d = this.d;
    for (let i = 0; i < d.length; i++) x[i] /= d[i];
    for (let s = ns - 1; s >= 0; s--) {
      const f = superStart[s];
      const w = superStart[s + 1] - f;
      const r0 = rowPtr[s];
      const nf = rowPtr[s + 1] - r0;
      const p = this.panelPtr[s];
      for (let i = nf - 1; i >= w; i--) {
        const xi = x[superRows[r0 + i]];
        if (xi === 0) continue;
        const pi = p + i * w - f;
        for (let k = f; k < f + w; k++) x[k] -= P[pi + k] * xi;
      }
      for (let i = w - 1; i >= 1; i--) {
        const xi = x[f + i];
        if (xi === 0) continue;
        const pi = p + i * w - f;
        for (let k = f; k < f + i; k++) x[k] -= P[pi + k] * xi;
      }
    }
  }

  private solveReal(X: Float64Array, c: number): void {
    const { superStart, rowPtr, superRows } = this.symbolic;
    const P = this.re;
    const ns = superStart.length - 1;
    for (let s = 0; s < ns; s++) {
      const f = superStart[s];
      const w = superStart[s + 1] - f;
      const r0 = rowPtr[s];
      const nf = rowPtr[s + 1] - r0;
      const p = this.panelPtr[s];
      for (let i = 1; i < nf; i++) {
        const oi = (i < w ? f + i : superRows[r0 + i]) * c;
        const pi = p + i * w;
        const kEnd = Math.min(i, w);
        for (let k = 0; k < kEnd; k++) {
          const l = P[pi + k];
          if (l === 0) continue;
          const ok = (f + k) * c;
          for (let r = 0; r < c; r++) X[oi + r] -= l * X[ok + r];
        }
      }
    }
    const d = this.d;
    for (let i = 0; i < d.length; i++) {
      const inv = 1 / d[i];
      for (let r = 0; r < c; r++) X[i * c + r] *= inv;
    }
    for (let s = ns - 1; s >= 0; s--) {
      const f = superStart[s];
      const w = superStart[s + 1] - f;
      const r0 = rowPtr[s];
      const nf = rowPtr[s + 1] - r0;
      const p = this.panelPtr[s];
      for (let i = nf - 1; i >= 1; i--) {
        const oi = (i < w ? f + i : superRows[r0 + i]) * c;
        const pi = p + i * w;
        const kEnd = Math.min(i, w);
        for (let k = 0; k < kEnd; k++) {
          const l = P[pi + k];
          if (l === 0) continue;
          const ok = (f + k) * c;
          for (let r = 0; r < c; r++) X[ok + r] -= l * X[oi + r];
        }
      }
    }
  }

  private solveComplex(XR: Float64Array, XI: Float64Array, c: number): void {
    const { superStart, rowPtr, superRows } = this.symbolic;
    const PR = this.re;
    const PI = this.im;
    const ns = superStart.length - 1;
    for (let s = 0; s < ns; s++) {
      const f = superStart[s];
      const w = superStart[s + 1] - f;
      const r0 = rowPtr[s];
      const nf = rowPtr[s + 1] - r0;
      const p = this.panelPtr[s];
      for (let i = 1; i < nf; i++) {
        const oi = (i < w ? f + i : superRows[r0 + i]) * c;
        const pi = p + i * w;
        const kEnd = Math.min(i, w);
        for (let k = 0; k < kEnd; k++) {
          const lr = PR[pi + k];
          const li = PI ? PI[pi + k] : 0;
          if (lr === 0 && li === 0) continue;
          const ok = (f + k) * c;
          for (let r = 0; r < c; r++) {
            const yr = XR[ok + r];
            const yi = XI[ok + r];
            XR[oi + r] -= lr * yr - li * yi;
            XI[oi + r] -= lr * yi + li * yr;
          }
        }
      }
    }
    const d = this.d;
    for (let i = 0; i < d.length; i++) {
      const inv = 1 / d[i];
      for (let r = 0; r < c; r++) {
        XR[i * c + r] *= inv;
        XI[i * c + r] *= inv;
      }
    }
    // Lᴴ x = z: x_k −= conj(L_ik) x_i
    for (let s = ns - 1; s >= 0; s--) {
      const f = superStart[s];
      const w = superStart[s + 1] - f;
      const r0 = rowPtr[s];
      const nf = rowPtr[s + 1] - r0;
      const p = this.panelPtr[s];
      for (let i = nf - 1; i >= 1; i--) {
        const oi = (i < w ? f + i : superRows[r0 + i]) * c;
        const pi = p + i * w;
        const kEnd = Math.min(i, w);
        for (let k = 0; k < kEnd; k++) {
          const lr = PR[pi + k];
          const li = PI ? -PI[pi + k] : 0;
          if (lr === 0 && li === 0) continue;
          const ok = (f + k) * c;
          for (let r = 0; r < c; r++) {
            const xr = XR[oi + r];
            const xi = XI[oi + r];
            XR[ok + r] -= lr * xr - li * xi;
            XI[ok + r] -= lr * xi + li * xr;
          }
        }
      }
    }
  }
}

/** Words of the factor's panels (per part: real, or each of real and imaginary). */
export function panelWords(sym: SymbolicFactor): number {
  let words = 0;
  for (let s = 0; s + 1 < sym.superStart.length; s++) words += (sym.rowPtr[s + 1] - sym.rowPtr[s]) * (sym.superStart[s + 1] - sym.superStart[s]);
  return words;
}

/** Bytes the numeric factorisation holds at its peak: panels, the largest front and its workspace, the update matrices. */
export function factorBytes(sym: SymbolicFactor, complex: boolean): number {
  const f = complex ? 2 : 1;
  let maxCols = 0;
  for (let s = 0; s + 1 < sym.superStart.length; s++) maxCols = Math.max(maxCols, sym.superStart[s + 1] - sym.superStart[s]);
  return 8 * f * (panelWords(sym) + sym.maxFront * sym.maxFront + sym.maxFront * maxCols + sym.peakUpdateWords) + 8 * sym.n;
}

/** A − shift·I = P ᵀ L D Lᴴ P by the multifrontal method, no pivoting. */
export function sparseLdl(A: HermitianCsr, sym: SymbolicFactor, options: SparseLdlOptions = {}): SparseLdlFactor {
  const { n, order, perm, superStart, rowPtr, superRows, superParent } = sym;
  if (A.n !== n) throw new RangeError(`sparseLdl: a ${A.n}×${A.n} matrix for an analysis of ${n} unknowns`);
  const shift = options.shift ?? 0;
  const complex = A.im !== null;
  let diagMax = 0;
  for (let v = 0; v < n; v++) {
    let a = 0;
    for (let t = A.ptr[v]; t < A.ptr[v + 1]; t++) if (A.idx[t] === v) a += A.re[t];
    diagMax = Math.max(diagMax, Math.abs(a - shift));
  }
  const tiny = options.tiny ?? 1e-13 * diagMax;
  const nsup = superStart.length - 1;
  const panelPtr = new Float64Array(nsup + 1);
  let maxCols = 0;
  for (let s = 0; s < nsup; s++) {
    const w = superStart[s + 1] - superStart[s];
    maxCols = Math.max(maxCols, w);
    panelPtr[s + 1] = panelPtr[s] + (rowPtr[s + 1] - rowPtr[s]) * w;
  }
  const LR = new Float64Array(panelPtr[nsup]);
  const LI = complex ? new Float64Array(panelPtr[nsup]) : null;
  const d = new Float64Array(n);
  const rowSum = new Float64Array(n); // Σ_k |L_ik|²|D_k| per (new) row
  const maxFront = sym.maxFront;
  const FR = new Float64Array(maxFront * maxFront);
  const FI = complex ? new Float64Array(maxFront * maxFront) : null;
  const WR = new Float64Array(maxFront * maxCols);
  const WI = complex ? new Float64Array(maxFront * maxCols) : null;
  const pos = new Int32Array(n);
  const updR: (Float64Array | null)[] = new Array(nsup).fill(null);
  const updI: (Float64Array | null)[] = new Array(nsup).fill(null);
  const firstChild = new Int32Array(nsup).fill(-1);
  const nextSibling = new Int32Array(nsup).fill(-1);
  for (let s = nsup - 1; s >= 0; s--) {
    const p = superParent[s];
    if (p >= 0) {
      nextSibling[s] = firstChild[p];
      firstChild[p] = s;
    }
  }
  let negatives = 0;
  let breakdown: SparseLdlFactor['breakdown'] = null;
  const totalWork = Math.max(1, sym.flops);
  let work = 0;
  let lastReport = 0;

  outer: for (let s = 0; s < nsup; s++) {
    const f = superStart[s];
    const w = superStart[s + 1] - f;
    const r0 = rowPtr[s];
    const nf = rowPtr[s + 1] - r0;
    const nu = nf - w;
    for (let t = 0; t < nf; t++) pos[superRows[r0 + t]] = t;
    FR.fill(0, 0, nf * nf);
    if (FI) FI.fill(0, 0, nf * nf);
    // A's entries of columns f … f+w−1 on and below the diagonal: (i, j) = conj(A_{old j, old i})
    for (let j = f; j < f + w; j++) {
      const v = order[j];
      const cj = j - f;
      for (let t = A.ptr[v]; t < A.ptr[v + 1]; t++) {
        const i = perm[A.idx[t]];
        if (i < j) continue;
        const at = pos[i] * nf + cj;
        FR[at] += A.re[t];
        if (FI && i !== j) FI[at] -= A.im![t];
      }
      FR[cj * nf + cj] -= shift;
    }
    // extend-add of the children's update matrices
    for (let c = firstChild[s]; c >= 0; c = nextSibling[c]) {
      const U = updR[c];
      if (!U) continue;
      const UI = updI[c];
      const cw = superStart[c + 1] - superStart[c];
      const cr0 = rowPtr[c] + cw;
      const nuc = rowPtr[c + 1] - cr0;
      for (let a = 0; a < nuc; a++) {
        const pa = pos[superRows[cr0 + a]] * nf;
        const ua = a * nuc;
        for (let b = 0; b <= a; b++) {
          const at = pa + pos[superRows[cr0 + b]];
          FR[at] += U[ua + b];
          if (FI) FI[at] += UI![ua + b];
        }
      }
      updR[c] = null;
      updI[c] = null;
    }
    // Crout rows: L_ij for j < min(i, w), D_i for i < w; W holds L_ik·D_k
    for (let i = 0; i < nf; i++) {
      const fi = i * nf;
      const wi = i * w;
      const jEnd = Math.min(i, w);
      let g = 0;
      if (!FI) {
        for (let j = 0; j < jEnd; j++) {
          const fj = j * nf;
          let s0 = FR[fi + j];
          for (let k = 0; k < j; k++) s0 -= WR[wi + k] * FR[fj + k];
          WR[wi + j] = s0;
          FR[fi + j] = s0 / d[f + j];
        }
        let dd = i < w ? FR[fi + i] : 0;
        for (let k = 0; k < jEnd; k++) {
          const t = WR[wi + k] * FR[fi + k];
          dd -= t;
          g += Math.abs(t);
        }
        if (i < w) {
          if (!(Math.abs(dd) > tiny)) {
            breakdown = { index: f + i, pivot: dd };
            break outer;
          }
          d[f + i] = dd;
          if (dd < 0) negatives++;
        }
      } else {
        const WIm = WI!;
        for (let j = 0; j < jEnd; j++) {
          const fj = j * nf;
          let sr = FR[fi + j];
          let si = FI[fi + j];
          for (let k = 0; k < j; k++) {
            // s −= W_ik · conj(L_jk)
            const lr = FR[fj + k];
            const li = FI[fj + k];
            sr -= WR[wi + k] * lr + WIm[wi + k] * li;
            si -= WIm[wi + k] * lr - WR[wi + k] * li;
          }
          WR[wi + j] = sr;
          WIm[wi + j] = si;
          FR[fi + j] = sr / d[f + j];
          FI[fi + j] = si / d[f + j];
        }
        let dd = i < w ? FR[fi + i] : 0;
        for (let k = 0; k < jEnd; k++) {
          // W_ik conj(L_ik) = D_k |L_ik|²
          const t = WR[wi + k] * FR[fi + k] + WIm[wi + k] * FI[fi + k];
          dd -= t;
          g += Math.abs(t);
        }
        if (i < w) {
          if (!(Math.abs(dd) > tiny)) {
            breakdown = { index: f + i, pivot: dd };
            break outer;
          }
          d[f + i] = dd;
          if (dd < 0) negatives++;
        }
      }
      rowSum[superRows[r0 + i]] += g;
    }
    // keep the panel (rows × w)
    const p = panelPtr[s];
    for (let i = 0; i < nf; i++) {
      LR.set(FR.subarray(i * nf, i * nf + w), p + i * w);
      if (LI) LI.set(FI!.subarray(i * nf, i * nf + w), p + i * w);
    }
    // the Schur complement of the rows below, for the parent
    if (nu > 0 && superParent[s] >= 0) {
      const U = new Float64Array(nu * nu);
      const UI = FI ? new Float64Array(nu * nu) : null;
      if (!FI) schurReal(FR, WR, U, nf, w, nu);
      else schurComplex(FR, FI, WR, WI!, U, UI!, nf, w, nu);
      updR[s] = U;
      updI[s] = UI;
    }
    for (let k = 0; k < w; k++) work += (nf - k) * (nf - k);
    if (work - lastReport > 0.02 * totalWork) {
      lastReport = work;
      options.onProgress?.(work / totalWork);
      options.check?.();
    }
  }
  options.onProgress?.(1);
  let sMax = 0;
  for (let i = 0; i < n; i++) sMax = Math.max(sMax, rowSum[i] + Math.abs(d[i]));
  return new SparseLdlFactor(sym, panelPtr, LR, LI, d, shift, negatives, diagMax > 0 ? sMax / diagMax : 1, breakdown);
}

/** U_ab = F_(w+a)(w+b) − Σ_k W_(w+a)k L_(w+b)k for b ≤ a, two rows and two columns at a time. */
function schurReal(F: Float64Array, W: Float64Array, U: Float64Array, nf: number, w: number, nu: number): void {
  let a = 0;
  for (; a + 1 < nu; a += 2) {
    const i0 = w + a;
    const w0 = i0 * w;
    const w1 = w0 + w;
    let b = 0;
    for (; b + 1 <= a; b += 2) {
      const l0 = (w + b) * nf;
      const l1 = l0 + nf;
      let s00 = 0;
      let s01 = 0;
      let s10 = 0;
      let s11 = 0;
      for (let k = 0; k < w; k++) {
        const x0 = W[w0 + k];
        const x1 = W[w1 + k];
        const y0 = F[l0 + k];
        const y1 = F[l1 + k];
        s00 += x0 * y0;
        s01 += x0 * y1;
        s10 += x1 * y0;
        s11 += x1 * y1;
      }
      U[a * nu + b] = F[i0 * nf + w + b] - s00;
      U[a * nu + b + 1] = F[i0 * nf + w + b + 1] - s01;
      U[(a + 1) * nu + b] = F[(i0 + 1) * nf + w + b] - s10;
      U[(a + 1) * nu + b + 1] = F[(i0 + 1) * nf + w + b + 1] - s11;
    }
    // b = a (even a): the 2×2 diagonal block's lower part was done above only when b < a
    for (; b <= a + 1; b++) {
      const l = (w + b) * nf;
      let s0 = 0;
      let s1 = 0;
      for (let k = 0; k < w; k++) {
        s0 += W[w0 + k] * F[l + k];
        s1 += W[w1 + k] * F[l + k];
      }
      if (b <= a) U[a * nu + b] = F[i0 * nf + w + b] - s0;
      U[(a + 1) * nu + b] = F[(i0 + 1) * nf + w + b] - s1;
    }
  }
  for (; a < nu; a++) {
    const i = w + a;
    const wi = i * w;
    for (let b = 0; b <= a; b++) {
      const l = (w + b) * nf;
      let s = 0;
      for (let k = 0; k < w; k++) s += W[wi + k] * F[l + k];
      U[a * nu + b] = F[i * nf + w + b] - s;
    }
  }
}

/** schurReal for complex data: U_ab = F_ab − Σ_k W_ak conj(L_bk). */
function schurComplex(FR: Float64Array, FI: Float64Array, WR: Float64Array, WI: Float64Array, UR: Float64Array, UI: Float64Array, nf: number, w: number, nu: number): void {
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
