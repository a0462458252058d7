/**
 * The symbol Φ as a Laurent matrix polynomial in the transverse variable at a fixed edge phase.
 *
 * Edge along a1 (bottom/top sides): θ1 = θ is fixed, z = z2 may leave the unit circle.
 * Edge along a2 (left/right sides): θ2 = θ is fixed, z = z1.
 * Gauge as in src/spectrum/symbol.ts: the row of bar a→b with shift s holds −p at a and
 * +z1^s1·z2^s2·p at b, so Φ(z) = Σ_k C_k z^k with k running over the transverse shifts and 0.
 * Bar vectors are in units of the symbol's lengthScale.
 */
import type { Framework } from '../framework/types.js';
import { cis } from '../linalg/complex.js';
import { SymbolAssembler } from '../spectrum/symbol.js';

export type EdgeAxis = 'a1' | 'a2';

export class LaurentSymbol {
  readonly rows: number;
  readonly cols: number;
  readonly axis: EdgeAxis;
  /** Edge phase θ in turns (the phase along the edge). */
  readonly phase: number;
  /** Lowest and highest power of z among the coefficient matrices (lo ≤ 0 ≤ hi). */
  readonly lo: number;
  readonly hi: number;
  readonly lengthScale: number;
  private readonly assembler: SymbolAssembler;
  private readonly edgePhase: Float64Array;
  private readonly edgePhaseIm: Float64Array;
  private readonly power: Int32Array;

  constructor(fw: Framework, axis: EdgeAxis, phase: number) {
    const a = new SymbolAssembler(fw);
    this.assembler = a;
    this.rows = a.rows;
    this.cols = a.cols;
    this.axis = axis;
    this.phase = phase;
    this.lengthScale = a.lengthScale;
    const m = a.rows;
    this.edgePhase = new Float64Array(m);
    this.edgePhaseIm = new Float64Array(m);
    this.power = new Int32Array(m);
    let lo = 0;
    let hi = 0;
    for (let r = 0; r < m; r++) {
      const along = axis === 'a1' ? a.s1[r] : a.s2[r];
      const across = axis === 'a1' ? a.s2[r] : a.s1[r];
      const [c, s] = cis(phase * along);
      this.edgePhase[r] = c;
      this.edgePhaseIm[r] = s;
      this.power[r] = across;
      lo = Math.min(lo, across);
      hi = Math.max(hi, across);
    }
    this.lo = lo;
    this.hi = hi;
  }

  /** Range of powers det Φ can hold (square Φ): the sum over rows of each row's span. */
  determinantSpan(): [number, number] {
    let lo = 0;
    let hi = 0;
    for (let r = 0; r < this.rows; r++) {
      lo += Math.min(0, this.power[r]);
      hi += Math.max(0, this.power[r]);
    }
    return [lo, hi];
  }

  /**
   * Φ(z) at a complex transverse z, dense row-major (entry (r, c) at r·cols + c). z may be
   * anywhere except 0 when a row holds a negative power.
   */
  evaluate(zr: number, zi: number): { re: Float64Array; im: Float64Array } {
    const n = this.cols;
    const re = new Float64Array(this.rows * n);
    const im = new Float64Array(this.rows * n);
    const a = this.assembler;
    for (let r = 0; r < this.rows; r++) {
      const [wr, wi] = cpow(zr, zi, this.power[r]);
      // phase of the far end: edge phase × z^power
      const fr = this.edgePhase[r] * wr - this.edgePhaseIm[r] * wi;
      const fi = this.edgePhase[r] * wi + this.edgePhaseIm[r] * wr;
      const ca = 2 * a.from[r];
      const cb = 2 * a.to[r];
      re[r * n + ca] -= a.px[r];
      re[r * n + ca + 1] -= a.py[r];
      re[r * n + cb] += fr * a.px[r];
      im[r * n + cb] += fi * a.px[r];
      re[r * n + cb + 1] += fr * a.py[r];
      im[r * n + cb + 1] += fi * a.py[r];
    }
    return { re, im };
  }

  /** Φ at the transverse point z = exp(2πi·t) on the unit circle (t in turns). */
  evaluateOnCircle(t: number): { re: Float64Array; im: Float64Array } {
    const [c, s] = cis(t);
    return this.evaluate(c, s);
  }
}

/** z^k for an integer k (repeated multiplication; k is a small cell shift). */
export function cpow(zr: number, zi: number, k: number): [number, number] {
  let rr = 1;
  let ri = 0;
  let br = zr;
  let bi = zi;
  if (k < 0) {
    const d = zr * zr + zi * zi;
    br = zr / d;
    bi = -zi / d;
    k = -k;
  }
  for (let j = 0; j < k; j++) {
    const t = rr * br - ri * bi;
    ri = rr * bi + ri * br;
    rr = t;
  }
  return [rr, ri];
}

/**
 * det of a square complex matrix (row-major, n×n) by Gaussian elimination with partial
 * pivoting; the input is not modified.
 */
export function complexDeterminant(reIn: Float64Array, imIn: Float64Array, n: number): [number, number] {
  const re = Float64Array.from(reIn);
  const im = Float64Array.from(imIn);
  let dr = 1;
  let di = 0;
  for (let k = 0; k < n; k++) {
    let p = k;
    let best = -1;
    for (let i = k; i < n; i++) {
      const v = Math.hypot(re[i * n + k], im[i * n + k]);
      if (v > best) {
        best = v;
        p = i;
      }
    }
    if (best === 0) return [0, 0];
    if (p !== k) {
      for (let c = 0; c < n; c++) {
        const tr = re[k * n + c];
        const ti = im[k * n + c];
        re[k * n + c] = re[p * n + c];
        im[k * n + c] = im[p * n + c];
        re[p * n + c] = tr;
        im[p * n + c] = ti;
      }
      dr = -dr;
      di = -di;
    }
    const pr = re[k * n + k];
    const pi = im[k * n + k];
    const t = dr * pr - di * pi;
    di = dr * pi + di * pr;
    dr = t;
    const q = pr * pr + pi * pi;
    for (let i = k + 1; i < n; i++) {
      const ar = re[i * n + k];
      const ai = im[i * n + k];
      if (ar === 0 && ai === 0) continue;
      // f = a / pivot
      const fr = (ar * pr + ai * pi) / q;
      const fi = (ai * pr - ar * pi) / q;
      for (let c = k; c < n; c++) {
        const br = re[k * n + c];
        const bi = im[k * n + c];
        re[i * n + c] -= fr * br - fi * bi;
        im[i * n + c] -= fr * bi + fi * br;
      }
    }
  }
  return [dr, di];
}
