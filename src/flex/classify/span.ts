/**
 * A growing span of compact vectors: the local, short and line flexes found so far, and the
 * sparsification of each new direction within its region.
 */
import { cdot as dot, cnorm as norm } from '../../linalg/complex.js';
import { combine, hermitianEigen, scaleInPlace, type Block, type Cx } from './cvec-ops.js';

/**
 * The span of the accepted compact vectors w_0, w_1, … (each unit norm, supported on a few
 * dofs). An orthonormal basis of it is kept implicitly as Q = W·T with T upper triangular
 * (column j: q_j = Σ_{i≤j} T_ij w_i), built by classical Gram–Schmidt applied twice in the
 * coefficients: with g = Wᴴv and the Gram matrix G = WᴴW, Qᴴv = Tᴴg and Wᴴ(v − W y) = g − G y.
 * Every product with a w touches only its own dofs, so nothing costs a full-length pass; the
 * rounding error of the coefficients grows only with the condition of W, which the residual
 * threshold keeps below 1/tol. Full-length q_j are formed only on request (orthonormal()).
 */
export class Span {
  private readonly w: { dofs: Int32Array; re: Float64Array; im: Float64Array; lo: number; hi: number }[] = [];
  /** Column j of T (length j + 1). */
  private readonly tCol: Cx[] = [];
  /** Row j of G: G_ij = ⟨w_i, w_j⟩ for i ≤ j (length j + 1). */
  private readonly gRow: Cx[] = [];
  /** Scatter space for one compact vector at a time. */
  private readonly sRe: Float64Array;
  private readonly sIm: Float64Array;

  constructor(
    readonly n: number,
    readonly tol: number,
  ) {
    this.sRe = new Float64Array(n);
    this.sIm = new Float64Array(n);
  }

  get dim(): number {
    return this.w.length;
  }

  /** g_i = ⟨w_i, x⟩ for every accepted w_i, x given on `dofs` (sorted or not). */
  private overlaps(dofs: Int32Array, x: Cx): Cx {
    const d = this.w.length;
    const g = { re: new Float64Array(d), im: new Float64Array(d) };
    let lo = Infinity;
    let hi = -Infinity;
    for (let t = 0; t < dofs.length; t++) {
      this.sRe[dofs[t]] = x.re[t];
      this.sIm[dofs[t]] = x.im[t];
      lo = Math.min(lo, dofs[t]);
      hi = Math.max(hi, dofs[t]);
    }
    for (let i = 0; i < d; i++) {
      const wi = this.w[i];
      if (wi.hi < lo || wi.lo > hi) continue;
      let sr = 0;
      let si = 0;
      for (let t = 0; t < wi.dofs.length; t++) {
        const q = wi.dofs[t];
        const xr = this.sRe[q];
        const xi = this.sIm[q];
        sr += wi.re[t] * xr + wi.im[t] * xi;
        si += wi.re[t] * xi - wi.im[t] * xr;
      }
      g.re[i] = sr;
      g.im[i] = si;
    }
    for (let t = 0; t < dofs.length; t++) {
      this.sRe[dofs[t]] = 0;
      this.sIm[dofs[t]] = 0;
    }
    return g;
  }

  /** c = Tᴴ g (the coefficients ⟨q_j, x⟩ from g = Wᴴx). */
  private tH(g: Cx): Cx {
    const d = g.re.length;
    const c = { re: new Float64Array(d), im: new Float64Array(d) };
    for (let j = 0; j < d; j++) {
      const t = this.tCol[j];
      let sr = 0;
      let si = 0;
      for (let i = 0; i <= j; i++) {
        sr += t.re[i] * g.re[i] + t.im[i] * g.im[i];
        si += t.re[i] * g.im[i] - t.im[i] * g.re[i];
      }
      c.re[j] = sr;
      c.im[j] = si;
    }
    return c;
  }

  /** y = T c (coefficients on W of Q c). */
  private t(c: Cx): Cx {
    const d = c.re.length;
    const y = { re: new Float64Array(d), im: new Float64Array(d) };
    for (let j = 0; j < d; j++) {
      const t = this.tCol[j];
      const cr = c.re[j];
      const ci = c.im[j];
      if (cr === 0 && ci === 0) continue;
      for (let i = 0; i <= j; i++) {
        y.re[i] += t.re[i] * cr - t.im[i] * ci;
        y.im[i] += t.re[i] * ci + t.im[i] * cr;
      }
    }
    return y;
  }

  /** G y. */
  private g(y: Cx): Cx {
    const d = y.re.length;
    const out = { re: new Float64Array(d), im: new Float64Array(d) };
    for (let j = 0; j < d; j++) {
      const row = this.gRow[j];
      for (let i = 0; i <= j; i++) {
        // G_ij = row[i] (i ≤ j) and G_ji = conj(row[i])
        out.re[i] += row.re[i] * y.re[j] - row.im[i] * y.im[j];
        out.im[i] += row.re[i] * y.im[j] + row.im[i] * y.re[j];
        if (i !== j) {
          out.re[j] += row.re[i] * y.re[i] + row.im[i] * y.im[i];
          out.im[j] += row.re[i] * y.im[i] - row.im[i] * y.re[i];
        }
      }
    }
    return out;
  }

  /** Accepts unit vector v (on `dofs`) when its residual against the span exceeds the tolerance. */
  private accept(dofs: Int32Array, v: Cx): boolean {
    const d = this.w.length;
    const g = this.overlaps(dofs, v);
    const c = this.tH(g);
    let cc = 0;
    for (let j = 0; j < d; j++) cc += c.re[j] * c.re[j] + c.im[j] * c.im[j];
    const y = this.t(c);
    // second pass: Qᴴ(v − W y) = Tᴴ(g − G y)
    const Gy = this.g(y);
    const g2 = { re: g.re.map((x, i) => x - Gy.re[i]), im: g.im.map((x, i) => x - Gy.im[i]) };
    const c2 = this.tH(g2);
    let cc2 = 0;
    for (let j = 0; j < d; j++) cc2 += c2.re[j] * c2.re[j] + c2.im[j] * c2.im[j];
    const rho2 = 1 - cc - cc2;
    if (!(rho2 > this.tol * this.tol)) return false;
    const rho = Math.sqrt(rho2);
    const y2 = this.t(c2);
    const col = { re: new Float64Array(d + 1), im: new Float64Array(d + 1) };
    for (let i = 0; i < d; i++) {
      col.re[i] = -(y.re[i] + y2.re[i]) / rho;
      col.im[i] = -(y.im[i] + y2.im[i]) / rho;
    }
    col.re[d] = 1 / rho;
    const row = { re: new Float64Array(d + 1), im: new Float64Array(d + 1) };
    row.re.set(g.re);
    row.im.set(g.im);
    row.re[d] = 1;
    let lo = Infinity;
    let hi = -Infinity;
    for (const q of dofs) {
      lo = Math.min(lo, q);
      hi = Math.max(hi, q);
    }
    this.w.push({ dofs, re: v.re, im: v.im, lo, hi });
    this.tCol.push(col);
    this.gRow.push(row);
    return true;
  }

  /**
   * Adds the directions of span(block) that are not yet in this span (residual above the
   * tolerance). Returns the accepted directions as compact vectors on the block's dofs (unit
   * norm), one per new dimension.
   */
  extend(block: Block): Cx[] {
    const V = block.vectors;
    const k = V.length;
    if (k === 0) return [];
    const d = this.w.length;
    const dofs = block.dofs;
    // C = Qᴴ V (d×k)
    const Cre = new Float64Array(d * k);
    const Cim = new Float64Array(d * k);
    for (let b = 0; b < k; b++) {
      const c = this.tH(this.overlaps(dofs, V[b]));
      for (let a = 0; a < d; a++) {
        Cre[a * k + b] = c.re[a];
        Cim[a * k + b] = c.im[a];
      }
    }
    // residual Gram G = VᴴV − CᴴC
    const Gre = new Float64Array(k * k);
    const Gim = new Float64Array(k * k);
    let anyIm = false;
    for (let a = 0; a < k; a++)
      for (let b = 0; b < k; b++) {
        let [sr, si] = dot(V[a], V[b]);
        for (let c = 0; c < d; c++) {
          const xr = Cre[c * k + a];
          const xi = Cim[c * k + a];
          const yr = Cre[c * k + b];
          const yi = Cim[c * k + b];
          sr -= xr * yr + xi * yi;
          si -= xr * yi - xi * yr;
        }
        Gre[a * k + b] = sr;
        Gim[a * k + b] = si;
        if (si !== 0) anyIm = true;
      }
    const eig = hermitianEigen(Gre, anyIm ? Gim : null, k);
    const fresh: Cx[] = [];
    const known: Cx[] = [];
    for (let t = k - 1; t >= 0; t--) (eig.values[t] > this.tol * this.tol ? fresh : known).push(combine(V, eig.vectors[t]));
    if (fresh.length === 0) return [];
    sparsify(fresh, known);
    const accepted: Cx[] = [];
    for (const v of fresh) {
      const nv = norm(v);
      if (nv === 0) continue;
      scaleInPlace(v, 1 / nv);
      if (this.accept(dofs, v)) accepted.push(v);
    }
    return accepted;
  }

  /** The orthonormal q_j (full length) for the given indices j, in that order. */
  orthonormal(indices: number[]): Cx[] {
    return indices.map((j) => {
      const q = { re: new Float64Array(this.n), im: new Float64Array(this.n) };
      const t = this.tCol[j];
      for (let i = 0; i <= j; i++) {
        const tr = t.re[i];
        const ti = t.im[i];
        if (tr === 0 && ti === 0) continue;
        const wi = this.w[i];
        for (let s = 0; s < wi.dofs.length; s++) {
          const p = wi.dofs[s];
          q.re[p] += tr * wi.re[s] - ti * wi.im[s];
          q.im[p] += tr * wi.im[s] + ti * wi.re[s];
        }
      }
      return q;
    });
  }
}

/** Number of entries above 1e-10 × the largest modulus. */
function nonzeros(v: { re: Float64Array; im: Float64Array }): number {
  let top = 0;
  for (let i = 0; i < v.re.length; i++) top = Math.max(top, v.re[i] * v.re[i] + v.im[i] * v.im[i]);
  const cut = 1e-20 * top;
  let c = 0;
  for (let i = 0; i < v.re.length; i++) if (v.re[i] * v.re[i] + v.im[i] * v.im[i] > cut) c++;
  return c;
}

/**
 * Make the new vectors of a block as sparse as possible without changing what they span
 * modulo the known part: greedy elementary operations w ← w − (w_p / b_p)·b with b a known
 * vector or another new one, keeping the step that zeroes the most entries, while it helps.
 * (A new line that shares a joint with a known corner flex becomes the bare line again.)
 */
function sparsify(fresh: { re: Float64Array; im: Float64Array }[], known: { re: Float64Array; im: Float64Array }[]): void {
  if (fresh.length + known.length < 2) return;
  const m = fresh[0].re.length;
  for (let i = 0; i < fresh.length; i++) {
    for (let round = 0; round < 4 * (fresh.length + known.length); round++) {
      const w = fresh[i];
      let bestNnz = nonzeros(w);
      let best: { re: Float64Array; im: Float64Array } | null = null;
      let wTop = 0;
      for (let q = 0; q < m; q++) wTop = Math.max(wTop, Math.hypot(w.re[q], w.im[q]));
      for (const b of [...known, ...fresh.filter((_, j) => j !== i)]) {
        let bTop = 0;
        for (let q = 0; q < m; q++) bTop = Math.max(bTop, Math.hypot(b.re[q], b.im[q]));
        for (let p = 0; p < m; p++) {
          const bm = Math.hypot(b.re[p], b.im[p]);
          if (bm <= 1e-6 * bTop || Math.hypot(w.re[p], w.im[p]) <= 1e-10 * wTop) continue;
          // c = w_p / b_p
          const den = b.re[p] * b.re[p] + b.im[p] * b.im[p];
          const cr = (w.re[p] * b.re[p] + w.im[p] * b.im[p]) / den;
          const ci = (w.im[p] * b.re[p] - w.re[p] * b.im[p]) / den;
          const cand = { re: new Float64Array(m), im: new Float64Array(m) };
          for (let q = 0; q < m; q++) {
            cand.re[q] = w.re[q] - (cr * b.re[q] - ci * b.im[q]);
            cand.im[q] = w.im[q] - (cr * b.im[q] + ci * b.re[q]);
          }
          cand.re[p] = 0;
          cand.im[p] = 0;
          const nn = nonzeros(cand);
          if (nn < bestNnz && norm(cand) > 1e-6 * norm(w)) {
            bestNnz = nn;
            best = cand;
          }
        }
      }
      if (!best) break;
      fresh[i] = best;
    }
  }
}
