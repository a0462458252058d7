/**
 * The dense kernels of the sparse LDLᴴ solves (numeric.ts, SparseLdlFactor.solveBlock): one
 * supernode's forward sweep L y = b and backward sweep Lᴴ x = z on a chunk of c right-hand sides
 * stored row-major (row t of the chunk at X[t·c … t·c + c − 1]).
 *
 * The panel of a supernode is rows × w, row-major, from P[p]; row t < w is the supernode's own
 * column f + t, rows t ≥ w are the rows below it. `off[t]` is the chunk offset of front row t
 * ((f + t)·c for t < w, superRows·c below), filled by the caller once per supernode.
 *
 * Register blocking (common practice in dense kernels, e.g. K. Goto & R. A. van de Geijn,
 * "Anatomy of high-performance matrix multiplication", ACM Trans. Math. Softw. 34, 12, 2008):
 * the forward sweep takes two rows of L at a time and sums them against four right-hand sides in
 * eight locals over the whole inner index (one load of L per four multiply-adds, one store per
 * row and column at the end, instead of a load and a store of X per multiply-add); the backward
 * sweep is written in dot-product form, x_k −= Σ_{i>k} conj(L_ik)·x_i, two columns k of L at a
 * time. Complex chunks use two rows (or columns of L) by two right-hand sides. Explicit zeros of
 * relaxed supernodes are multiplied like any entry (no branch in the inner loops).
 */

/** Forward sweep of one supernode, real: rows t = 1 … nf−1, x_t −= Σ_{k < min(t, w)} L_tk x_(f+k). */
export function forwardReal(P: Float64Array, p: number, w: number, nf: number, off: Int32Array, X: Float64Array, c: number): void {
  const base = off[0];
  let t = 1;
  for (; t + 1 < nf; t += 2) {
    const kEnd = t < w ? t : w;
    const pa = p + t * w;
    const pb = pa + w;
    const oa = off[t];
    const ob = off[t + 1];
    // row t + 1 also needs the term k = t when t lies in the supernode's own columns
    const extra = t < w;
    const lbt = extra ? P[pb + t] : 0;
    let r = 0;
    for (; r + 4 <= c; r += 4) {
      let a0 = 0;
      let a1 = 0;
      let a2 = 0;
      let a3 = 0;
      let b0 = 0;
      let b1 = 0;
      let b2 = 0;
      let b3 = 0;
      let xo = base + r;
      for (let k = 0; k < kEnd; k++, xo += c) {
        const la = P[pa + k];
        const lb = P[pb + k];
        const x0 = X[xo];
        const x1 = X[xo + 1];
        const x2 = X[xo + 2];
        const x3 = X[xo + 3];
        a0 += la * x0;
        a1 += la * x1;
        a2 += la * x2;
        a3 += la * x3;
        b0 += lb * x0;
        b1 += lb * x1;
        b2 += lb * x2;
        b3 += lb * x3;
      }
      const y0 = X[oa + r] - a0;
      const y1 = X[oa + r + 1] - a1;
      const y2 = X[oa + r + 2] - a2;
      const y3 = X[oa + r + 3] - a3;
      X[oa + r] = y0;
      X[oa + r + 1] = y1;
      X[oa + r + 2] = y2;
      X[oa + r + 3] = y3;
      if (extra) {
        b0 += lbt * y0;
        b1 += lbt * y1;
        b2 += lbt * y2;
        b3 += lbt * y3;
      }
      X[ob + r] -= b0;
      X[ob + r + 1] -= b1;
      X[ob + r + 2] -= b2;
      X[ob + r + 3] -= b3;
    }
    for (; r < c; r++) {
      let a = 0;
      let b = 0;
      let xo = base + r;
      for (let k = 0; k < kEnd; k++, xo += c) {
        const x = X[xo];
        a += P[pa + k] * x;
        b += P[pb + k] * x;
      }
      const y = X[oa + r] - a;
      X[oa + r] = y;
      if (extra) b += lbt * y;
      X[ob + r] -= b;
    }
  }
  if (t < nf) {
    const kEnd = t < w ? t : w;
    const pa = p + t * w;
    const oa = off[t];
    for (let r = 0; r < c; r++) {
      let a = 0;
      let xo = base + r;
      for (let k = 0; k < kEnd; k++, xo += c) a += P[pa + k] * X[xo];
      X[oa + r] -= a;
    }
  }
}

/** Backward sweep of one supernode, real: k = w−1 … 0, x_(f+k) −= Σ_{t > k} L_tk x_t (t over the front's rows). */
export function backwardReal(P: Float64Array, p: number, w: number, nf: number, off: Int32Array, X: Float64Array, c: number): void {
  let k = w - 1;
  for (; k >= 1; k -= 2) {
    // columns k and k − 1 of L together over t > k; then the term t = k of column k − 1
    const ok = off[k];
    const oj = off[k - 1];
    const lkj = P[p + k * w + k - 1];
    let r = 0;
    for (; r + 4 <= c; r += 4) {
      let a0 = 0;
      let a1 = 0;
      let a2 = 0;
      let a3 = 0;
      let b0 = 0;
      let b1 = 0;
      let b2 = 0;
      let b3 = 0;
      let pt = p + (k + 1) * w + k - 1;
      for (let t = k + 1; t < nf; t++, pt += w) {
        const lb = P[pt];
        const la = P[pt + 1];
        const xo = off[t] + r;
        const x0 = X[xo];
        const x1 = X[xo + 1];
        const x2 = X[xo + 2];
        const x3 = X[xo + 3];
        a0 += la * x0;
        a1 += la * x1;
        a2 += la * x2;
        a3 += la * x3;
        b0 += lb * x0;
        b1 += lb * x1;
        b2 += lb * x2;
        b3 += lb * x3;
      }
      const y0 = X[ok + r] - a0;
      const y1 = X[ok + r + 1] - a1;
      const y2 = X[ok + r + 2] - a2;
      const y3 = X[ok + r + 3] - a3;
      X[ok + r] = y0;
      X[ok + r + 1] = y1;
      X[ok + r + 2] = y2;
      X[ok + r + 3] = y3;
      X[oj + r] -= b0 + lkj * y0;
      X[oj + r + 1] -= b1 + lkj * y1;
      X[oj + r + 2] -= b2 + lkj * y2;
      X[oj + r + 3] -= b3 + lkj * y3;
    }
    for (; r < c; r++) {
      let a = 0;
      let b = 0;
      let pt = p + (k + 1) * w + k - 1;
      for (let t = k + 1; t < nf; t++, pt += w) {
        const x = X[off[t] + r];
        b += P[pt] * x;
        a += P[pt + 1] * x;
      }
      const y = X[ok + r] - a;
      X[ok + r] = y;
      X[oj + r] -= b + lkj * y;
    }
  }
  if (k === 0) {
    const ok = off[0];
    for (let r = 0; r < c; r++) {
      let a = 0;
      let pt = p + w;
      for (let t = 1; t < nf; t++, pt += w) a += P[pt] * X[off[t] + r];
      X[ok + r] -= a;
    }
  }
}

/** forwardReal for a complex factor and chunk (X = XR + i·XI): x_t −= Σ L_tk x_(f+k). */
export function forwardComplex(PR: Float64Array, PI: Float64Array, p: number, w: number, nf: number, off: Int32Array, XR: Float64Array, XI: Float64Array, c: number): void {
  const base = off[0];
  let t = 1;
  for (; t + 1 < nf; t += 2) {
    const kEnd = t < w ? t : w;
    const pa = p + t * w;
    const pb = pa + w;
    const oa = off[t];
    const ob = off[t + 1];
    const extra = t < w;
    const btr = extra ? PR[pb + t] : 0;
    const bti = extra ? PI[pb + t] : 0;
    let r = 0;
    for (; r + 2 <= c; r += 2) {
      let ar0 = 0;
      let ai0 = 0;
      let ar1 = 0;
      let ai1 = 0;
      let br0 = 0;
      let bi0 = 0;
      let br1 = 0;
      let bi1 = 0;
      let xo = base + r;
      for (let k = 0; k < kEnd; k++, xo += c) {
        const lar = PR[pa + k];
        const lai = PI[pa + k];
        const lbr = PR[pb + k];
        const lbi = PI[pb + k];
        const xr0 = XR[xo];
        const xi0 = XI[xo];
        const xr1 = XR[xo + 1];
        const xi1 = XI[xo + 1];
        ar0 += lar * xr0 - lai * xi0;
        ai0 += lar * xi0 + lai * xr0;
        ar1 += lar * xr1 - lai * xi1;
        ai1 += lar * xi1 + lai * xr1;
        br0 += lbr * xr0 - lbi * xi0;
        bi0 += lbr * xi0 + lbi * xr0;
        br1 += lbr * xr1 - lbi * xi1;
        bi1 += lbr * xi1 + lbi * xr1;
      }
      const yr0 = XR[oa + r] - ar0;
      const yi0 = XI[oa + r] - ai0;
      const yr1 = XR[oa + r + 1] - ar1;
      const yi1 = XI[oa + r + 1] - ai1;
      XR[oa + r] = yr0;
      XI[oa + r] = yi0;
      XR[oa + r + 1] = yr1;
      XI[oa + r + 1] = yi1;
      if (extra) {
        br0 += btr * yr0 - bti * yi0;
        bi0 += btr * yi0 + bti * yr0;
        br1 += btr * yr1 - bti * yi1;
        bi1 += btr * yi1 + bti * yr1;
      }
      XR[ob + r] -= br0;
      XI[ob + r] -= bi0;
      XR[ob + r + 1] -= br1;
      XI[ob + r + 1] -= bi1;
    }
    for (; r < c; r++) {
      let ar = 0;
      let ai = 0;
      let br = 0;
      let bi = 0;
      let xo = base + r;
      for (let k = 0; k < kEnd; k++, xo += c) {
        const lar = PR[pa + k];
        const lai = PI[pa + k];
        const lbr = PR[pb + k];
        const lbi = PI[pb + k];
        const xr = XR[xo];
        const xi = XI[xo];
        ar += lar * xr - lai * xi;
        ai += lar * xi + lai * xr;
        br += lbr * xr - lbi * xi;
        bi += lbr * xi + lbi * xr;
      }
      const yr = XR[oa + r] - ar;
      const yi = XI[oa + r] - ai;
      XR[oa + r] = yr;
      XI[oa + r] = yi;
      if (extra) {
        br += btr * yr - bti * yi;
        bi += btr * yi + bti * yr;
      }
      XR[ob + r] -= br;
      XI[ob + r] -= bi;
    }
  }
  if (t < nf) {
    const kEnd = t < w ? t : w;
    const pa = p + t * w;
    const oa = off[t];
    for (let r = 0; r < c; r++) {
      let ar = 0;
      let ai = 0;
      let xo = base + r;
      for (let k = 0; k < kEnd; k++, xo += c) {
        const lr = PR[pa + k];
        const li = PI[pa + k];
        const xr = XR[xo];
        const xi = XI[xo];
        ar += lr * xr - li * xi;
        ai += lr * xi + li * xr;
      }
      XR[oa + r] -= ar;
      XI[oa + r] -= ai;
    }
  }
}

/** backwardReal for a complex factor and chunk: x_(f+k) −= Σ_{t > k} conj(L_tk) x_t. */
export function backwardComplex(PR: Float64Array, PI: Float64Array, p: number, w: number, nf: number, off: Int32Array, XR: Float64Array, XI: Float64Array, c: number): void {
  let k = w - 1;
  for (; k >= 1; k -= 2) {
    const ok = off[k];
    const oj = off[k - 1];
    const ljr = PR[p + k * w + k - 1];
    const lji = PI[p + k * w + k - 1];
    let r = 0;
    for (; r + 2 <= c; r += 2) {
      let ar0 = 0;
      let ai0 = 0;
      let ar1 = 0;
      let ai1 = 0;
      let br0 = 0;
      let bi0 = 0;
      let br1 = 0;
      let bi1 = 0;
      let pt = p + (k + 1) * w + k - 1;
      for (let t = k + 1; t < nf; t++, pt += w) {
        const lbr = PR[pt];
        const lbi = PI[pt];
        const lar = PR[pt + 1];
        const lai = PI[pt + 1];
        const xo = off[t] + r;
        const xr0 = XR[xo];
        const xi0 = XI[xo];
        const xr1 = XR[xo + 1];
        const xi1 = XI[xo + 1];
        // conj(l)·x = (lr xr + li xi) + i (lr xi − li xr)
        ar0 += lar * xr0 + lai * xi0;
        ai0 += lar * xi0 - lai * xr0;
        ar1 += lar * xr1 + lai * xi1;
        ai1 += lar * xi1 - lai * xr1;
        br0 += lbr * xr0 + lbi * xi0;
        bi0 += lbr * xi0 - lbi * xr0;
        br1 += lbr * xr1 + lbi * xi1;
        bi1 += lbr * xi1 - lbi * xr1;
      }
      const yr0 = XR[ok + r] - ar0;
      const yi0 = XI[ok + r] - ai0;
      const yr1 = XR[ok + r + 1] - ar1;
      const yi1 = XI[ok + r + 1] - ai1;
      XR[ok + r] = yr0;
      XI[ok + r] = yi0;
      XR[ok + r + 1] = yr1;
      XI[ok + r + 1] = yi1;
      XR[oj + r] -= br0 + ljr * yr0 + lji * yi0;
      XI[oj + r] -= bi0 + ljr * yi0 - lji * yr0;
      XR[oj + r + 1] -= br1 + ljr * yr1 + lji * yi1;
      XI[oj + r + 1] -= bi1 + ljr * yi1 - lji * yr1;
    }
    for (; r < c; r++) {
      let ar = 0;
      let ai = 0;
      let br = 0;
      let bi = 0;
      let pt = p + (k + 1) * w + k - 1;
      for (let t = k + 1; t < nf; t++, pt += w) {
        const lbr = PR[pt];
        const lbi = PI[pt];
        const lar = PR[pt + 1];
        const lai = PI[pt + 1];
        const xo = off[t] + r;
        const xr = XR[xo];
        const xi = XI[xo];
        ar += lar * xr + lai * xi;
        ai += lar * xi - lai * xr;
        br += lbr * xr + lbi * xi;
        bi += lbr * xi - lbi * xr;
      }
      const yr = XR[ok + r] - ar;
      const yi = XI[ok + r] - ai;
      XR[ok + r] = yr;
      XI[ok + r] = yi;
      XR[oj + r] -= br + ljr * yr + lji * yi;
      XI[oj + r] -= bi + ljr * yi - lji * yr;
    }
  }
  if (k === 0) {
    const ok = off[0];
    for (let r = 0; r < c; r++) {
      let ar = 0;
      let ai = 0;
      let pt = p + w;
      for (let t = 1; t < nf; t++, pt += w) {
        const lr = PR[pt];
        const li = PI[pt];
        const xo = off[t] + r;
        const xr = XR[xo];
        const xi = XI[xo];
        ar += lr * xr + li * xi;
        ai += lr * xi - li * xr;
      }
      XR[ok + r] -= ar;
      XI[ok + r] -= ai;
    }
  }
}
