/**
 * The strain view's pure part: the periodic cell before and after a flex with a flexible lattice
 * (src/strain/flexible-lattice.ts), the words that describe a strain, and the overlay figure as
 * SVG markup. No DOM, so it is tested in Node.
 *
 * A flex is (u, L̇): joint velocities and the lattice velocity [Ȧ1, Ȧ2]. At amount t the joints
 * sit at x_k + t·u_k, the lattice is A_i + t·Ȧ_i, and a bar a→b that wraps w = (w1, w2) cells
 * has the vector p + t·(u_b − u_a + w1·Ȧ1 + w2·Ȧ2); to first order its length does not change.
 */
import type { Vec2 } from '../framework/types.js';
import type { StrainFlex, ZeroStrainFlex } from '../strain/flexible-lattice.js';
import type { GeometryData } from '../worker/protocol.js';
import { el, num, svgDocument } from './plots/svg.js';

/** The cell drawn at one amount of the flex. */
export interface CellShape {
  /** Joint positions, 2 per joint. */
  joints: Float64Array;
  /** x1, y1, x2, y2 per bar (the far end of a wrapping bar is its image outside the cell). */
  bars: Float64Array;
  /** The cell's corners: its origin o, o + A1, o + A1 + A2, o + A2 (o centres the cell on the joints at rest). */
  corners: [Vec2, Vec2, Vec2, Vec2];
  lattice: [Vec2, Vec2];
}

/** The cell of `geom` (lattice [A1, A2]) moved by t times the flex. */
export function strainedCell(geom: GeometryData, lattice: [Vec2, Vec2], flex: { velocities: number[]; latticeVelocity: [Vec2, Vec2] }, t: number): CellShape {
  const n = geom.jointCount;
  const m = geom.barA.length;
  const P = geom.positions;
  const u = flex.velocities;
  const [d1, d2] = flex.latticeVelocity;
  const A1: Vec2 = [lattice[0][0] + t * d1[0], lattice[0][1] + t * d1[1]];
  const A2: Vec2 = [lattice[1][0] + t * d2[0], lattice[1][1] + t * d2[1]];
  const joints = new Float64Array(2 * n);
  for (let k = 0; k < 2 * n; k++) joints[k] = P[k] + t * u[k];
  const bars = new Float64Array(4 * m);
  for (let r = 0; r < m; r++) {
    const a = geom.barA[r];
    const b = geom.barB[r];
    const w1 = geom.barWraps[2 * r];
    const w2 = geom.barWraps[2 * r + 1];
    // p + t·(u_b − u_a + w1·Ȧ1 + w2·Ȧ2), p the rest bar vector (a periodic cell has no ground ends)
    const px = geom.barVector[2 * r] + t * (u[2 * b] - u[2 * a] + w1 * d1[0] + w2 * d2[0]);
    const py = geom.barVector[2 * r + 1] + t * (u[2 * b + 1] - u[2 * a + 1] + w1 * d1[1] + w2 * d2[1]);
    bars.set([joints[2 * a], joints[2 * a + 1], joints[2 * a] + px, joints[2 * a + 1] + py], 4 * r);
  }
  // the origin o: the joints' centroid at rest minus half the cell diagonal, carried along with
  // the cell as a point of its lattice (o' = (A1', A2')·(A1, A2)⁻¹·o)
  let cx = 0;
  let cy = 0;
  for (let k = 0; k < n; k++) {
    cx += P[2 * k] / n;
    cy += P[2 * k + 1] / n;
  }
  const [L1, L2] = lattice;
  const ox0 = cx - (L1[0] + L2[0]) / 2;
  const oy0 = cy - (L1[1] + L2[1]) / 2;
  const det = L1[0] * L2[1] - L2[0] * L1[1];
  const f1 = (ox0 * L2[1] - oy0 * L2[0]) / det;
  const f2 = (L1[0] * oy0 - L1[1] * ox0) / det;
  const o: Vec2 = [f1 * A1[0] + f2 * A2[0], f1 * A1[1] + f2 * A2[1]];
  const corners: CellShape['corners'] = [
    [o[0], o[1]],
    [o[0] + A1[0], o[1] + A1[1]],
    [o[0] + A1[0] + A2[0], o[1] + A1[1] + A2[1]],
    [o[0] + A2[0], o[1] + A2[1]],
  ];
  return { joints, bars, corners, lattice: [A1, A2] };
}

/** The signed area A1 × A2 of a cell. */
export function cellArea(c: CellShape): number {
  const [A1, A2] = c.lattice;
  return A1[0] * A2[1] - A1[1] * A2[0];
}

/** The largest principal strain shown, and the largest joint step as a share of the median bar length. */
export const DRAW_STRAIN = 0.12;
export const DRAW_STEP = 0.3;

/**
 * The amount t drawn: the largest principal strain becomes DRAW_STRAIN, unless a joint would then
 * move more than DRAW_STEP bar lengths (then less); a flex without strain is drawn by its joints.
 */
export function drawAmount(geom: GeometryData, flex: { velocities: number[]; principal?: { values: [number, number] } }): number {
  const m = geom.barA.length;
  const lengths = Array.from({ length: m }, (_, r) => Math.hypot(geom.barVector[2 * r], geom.barVector[2 * r + 1])).sort((a, b) => a - b);
  const bar = lengths.length ? lengths[lengths.length >> 1] : 1;
  let step = 0;
  for (let k = 0; k + 1 < flex.velocities.length; k += 2) step = Math.max(step, Math.hypot(flex.velocities[k], flex.velocities[k + 1]));
  const strain = flex.principal ? Math.max(Math.abs(flex.principal.values[0]), Math.abs(flex.principal.values[1])) : 0;
  const byStrain = strain > 0 ? DRAW_STRAIN / strain : Infinity;
  const byStep = step > 0 ? (DRAW_STEP * bar) / step : Infinity;
  const t = Math.min(byStrain, byStep);
  return Number.isFinite(t) ? t : 0;
}

const KIND_TEXT: Record<StrainFlex['kind'], string> = {
  dilation: 'dilation (the cell grows or shrinks alike in every direction)',
  shear: 'shear (the cell changes shape at constant area)',
  mixed: 'mixed (a change of area and of shape)',
};

/** One strain flex in words: its kind, principal strains and directions, and whether it is auxetic. */
export function strainText(f: StrainFlex): string {
  const [e1, e2] = f.principal.values;
  const n = (x: number) => (Math.abs(x) < 5e-5 ? '0' : x.toFixed(4));
  return `${KIND_TEXT[f.kind]} · principal strains ${n(e1)} at ${f.principal.angleDegrees.toFixed(1)}° and ${n(e2)} · ${f.auxetic ? 'auxetic (both principal strains of one sign)' : 'not auxetic'}`;
}

/** Colours of the overlay (ours): the cell at rest recedes in a warm grey, the strained cell in ink and teal. */
export const STRAIN_INK = { before: '#b3ada2', after: '#2b2f35', cellBefore: '#b3ada2', cellAfter: '#2f6f77', joint: '#f4f2ee' } as const;

/** The before/after overlay as an SVG document (for the page; y up in the world, down on screen). */
export function strainFigure(before: CellShape, after: CellShape, o: { width: number; height: number; title: string }): string {
  let minX = Infinity;
  let maxX = -Infinity;
  let minY = Infinity;
  let maxY = -Infinity;
  const grow = (x: number, y: number) => {
    minX = Math.min(minX, x);
    maxX = Math.max(maxX, x);
    minY = Math.min(minY, y);
    maxY = Math.max(maxY, y);
  };
  for (const c of [before, after]) {
    for (const p of c.corners) grow(p[0], p[1]);
    for (let k = 0; k < c.bars.length; k += 2) grow(c.bars[k], c.bars[k + 1]);
  }
  const pad = 14;
  const scale = Math.min((o.width - 2 * pad) / Math.max(maxX - minX, 1e-9), (o.height - 2 * pad) / Math.max(maxY - minY, 1e-9));
  const ox = (o.width - scale * (maxX - minX)) / 2;
  const oy = (o.height - scale * (maxY - minY)) / 2;
  const X = (x: number) => ox + scale * (x - minX);
  const Y = (y: number) => o.height - oy - scale * (y - minY);
  const cell = (c: CellShape, colour: string, dash: string | null, testid: string) =>
    el('polygon', { points: c.corners.map((p) => `${num(X(p[0]))},${num(Y(p[1]))}`).join(' '), fill: 'none', stroke: colour, 'stroke-width': 1.6, 'stroke-dasharray': dash, 'data-testid': testid });
  const bars = (c: CellShape, colour: string, width: number) => {
    let d = '';
    for (let k = 0; k < c.bars.length; k += 4) d += `M${num(X(c.bars[k]))} ${num(Y(c.bars[k + 1]))}L${num(X(c.bars[k + 2]))} ${num(Y(c.bars[k + 3]))}`;
    return el('path', { d, stroke: colour, 'stroke-width': width, 'stroke-linecap': 'round', fill: 'none' });
  };
  const joints = (c: CellShape, stroke: string, r: number) => {
    const out: string[] = [];
    for (let k = 0; k < c.joints.length; k += 2) out.push(el('circle', { cx: X(c.joints[k]), cy: Y(c.joints[k + 1]), r, fill: STRAIN_INK.joint, stroke, 'stroke-width': 1 }));
    return out.join('');
  };
  return svgDocument({
    width: o.width,
    height: o.height,
    title: o.title,
    background: null,
    attrs: { role: 'img', 'aria-label': o.title },
    body: [
      cell(before, STRAIN_INK.cellBefore, '5 4', 'strain-cell-before'),
      bars(before, STRAIN_INK.before, 1.4),
      joints(before, STRAIN_INK.before, 2.5),
      cell(after, STRAIN_INK.cellAfter, null, 'strain-cell-after'),
      bars(after, STRAIN_INK.after, 1.8),
      joints(after, STRAIN_INK.after, 3),
    ],
  });
}

/** A zero-strain flex drawn like a strain flex (its lattice velocity only turns the cell). */
export function asDrawable(f: StrainFlex | ZeroStrainFlex): { velocities: number[]; latticeVelocity: [Vec2, Vec2]; principal?: { values: [number, number] } } {
  return 'principal' in f ? f : { velocities: f.velocities, latticeVelocity: f.latticeVelocity };
}
