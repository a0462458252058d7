/**
 * Side weights: how much of the non-trivial flex space sits near each side of the supercell,
 * without reference to any basis.
 *
 * P = orthogonal projector onto ker R ⊖ (the allowed rigid motions that are flexes). The weight
 * of joint k is the trace of P over its two coordinates, Σ_v |v_2k|² + |v_2k+1|² for any
 * orthonormal basis v of that space, so it does not depend on which basis a solver returned.
 * Each cell (i, j) goes to its nearest side by cell index: left = i, right = N1−1−i,
 * bottom = j, top = N2−1−j; ties are split evenly among the tied sides. A twisted (or
 * periodic) axis has no sides: its two sides are reported as null and its cells are
 * attributed along the other axis only; with both axes twisted every side is null.
 * The four weights sum to flexes − trivial flexes (to rounding) unless both axes are twisted.
 */
import type { CVec } from '../linalg/complex.js';
import { hermitianEigen } from '../linalg/hermitian-eig.js';
import type { Supercell } from '../supercell/supercell.js';
import { rigidMotions } from './rigid.js';
import type { FlexAnalysis } from './spaces.js';

/** Up to this many columns the shells compute side weights by default: the whole flex basis they need is cheap there. */
export const SIDE_WEIGHTS_DEFAULT_MAX_COLUMNS = 2400;

export interface SideWeights {
  bottom: number | null;
  top: number | null;
  left: number | null;
  right: number | null;
}

/** What side weights need of an analysis (a FlexAnalysis has it). */
export type SideWeightInput = Pick<FlexAnalysis, 'trivialFlexes' | 'flexBasis'>;

/**
 * Orthonormal basis of the trivial flexes: the allowed rigid fields projected onto ker R, and
 * of their span the `trivial` directions that ker R holds best (largest eigenvalues of the Gram
 * matrix of the projections). Depends only on the projector onto ker R, not on its basis.
 */
export function trivialFlexBasis(sc: Supercell, flexes: CVec[], trivial: number): CVec[] {
  if (trivial <= 0 || flexes.length === 0) return [];
  const fields = rigidMotions(sc).map((m) => m.field);
  const n = fields[0]?.length ?? 0;
  // u_a = Σ_v v ⟨v, t_a⟩ (t_a real)
  const proj: CVec[] = fields.map((t) => {
    const u = { re: new Float64Array(n), im: new Float64Array(n) };
    for (const v of flexes) {
      let cr = 0;
      let ci = 0;
      for (let i = 0; i < n; i++) {
        cr += v.re[i] * t[i];
        ci -= v.im[i] * t[i];
      }
      for (let i = 0; i < n; i++) {
        u.re[i] += v.re[i] * cr - v.im[i] * ci;
        u.im[i] += v.re[i] * ci + v.im[i] * cr;
      }
    }
    return u;
  });
  // Gram matrix G_ab = ⟨u_a, u_b⟩; real here (the fields are real and P is real when rigid motions are tested)
  const t = proj.length;
  const G = new Float64Array(t * t);
  for (let a = 0; a < t; a++) {
    for (let b = a; b < t; b++) {
      let s = 0;
      for (let i = 0; i < n; i++) s += proj[a].re[i] * proj[b].re[i] + proj[a].im[i] * proj[b].im[i];
      G[a * t + b] = s;
      G[b * t + a] = s;
    }
  }
  const eig = hermitianEigen(G, null, t);
  const order = Array.from(eig.values, (l, i) => [l, i] as const).sort((x, y) => y[0] - x[0]);
  const out: CVec[] = [];
  for (const [lambda, col] of order.slice(0, Math.min(trivial, t))) {
    if (!(lambda > 0)) break;
    const q = { re: new Float64Array(n), im: new Float64Array(n) };
    for (let a = 0; a < t; a++) {
      const w = eig.vre[a * t + col] / Math.sqrt(lambda);
      for (let i = 0; i < n; i++) {
        q.re[i] += w * proj[a].re[i];
        q.im[i] += w * proj[a].im[i];
      }
    }
    out.push(q);
  }
  return out;
}

/** Diagonal of the projector onto span(flexes) ⊖ span(trivial), summed per joint. */
export function jointWeights(flexes: CVec[], trivial: CVec[], joints: number): Float64Array {
  const w = new Float64Array(joints);
  const add = (vs: CVec[], sign: number) => {
    for (const v of vs) for (let k = 0; k < joints; k++) w[k] += sign * (v.re[2 * k] ** 2 + v.im[2 * k] ** 2 + v.re[2 * k + 1] ** 2 + v.im[2 * k + 1] ** 2);
  };
  add(flexes, 1);
  add(trivial, -1);
  return w;
}

/** Sum per-joint weights into the nearest sides of each joint's cell (see the file comment). */
export function attributeToSides(sc: Supercell, weights: Float64Array): SideWeights {
  const [N1, N2] = sc.cells;
  const xSides = sc.boundary.x.kind === 'sides';
  const ySides = sc.boundary.y.kind === 'sides';
  const out = { bottom: 0, top: 0, left: 0, right: 0 };
  if (xSides || ySides) {
    for (let k = 0; k < weights.length; k++) {
      const i = sc.jointCells[2 * k];
      const j = sc.jointCells[2 * k + 1];
      const d: [keyof typeof out, number][] = [];
      if (xSides) d.push(['left', i], ['right', N1 - 1 - i]);
      if (ySides) d.push(['bottom', j], ['top', N2 - 1 - j]);
      const near = Math.min(...d.map(([, x]) => x));
      const tied = d.filter(([, x]) => x === near);
      for (const [side] of tied) out[side] += weights[k] / tied.length;
    }
  }
  return {
    bottom: ySides ? out.bottom : null,
    top: ySides ? out.top : null,
    left: xSides ? out.left : null,
    right: xSides ? out.right : null,
  };
}

/** Side weights of the non-trivial flexes of an analysed supercell (see the file comment). */
export function sideWeights(sc: Supercell, analysis: SideWeightInput): SideWeights {
  const flexes = analysis.flexBasis().vectors;
  const trivial = trivialFlexBasis(sc, flexes, analysis.trivialFlexes);
  return attributeToSides(sc, jointWeights(flexes, trivial, sc.jointCount));
}
