/**
 * Metrics of one vector: the geometry of the joints, joint weights, support, extents and
 * participation, and the anchor fits that decide decaying or bulk.
 */
import type { Supercell } from '../../supercell/supercell.js';
import type { Anchor } from '../classes.js';
import { axesOf, type Axes } from './regions.js';
import { FIT_FLOOR, HEAD_WEIGHT, MIN_R2, SUPPORT_AMPLITUDE } from './thresholds.js';

export interface Geometry {
  ax: Axes;
  /** Fractional (cell) coordinates of each joint, 2 per joint. */
  frac: Float64Array;
  jointCell: Int32Array;
  sc: Supercell;
}

export function geometryOf(sc: Supercell): Geometry {
  const [a1, a2] = sc.framework.lattice;
  const detL = a1[0] * a2[1] - a1[1] * a2[0];
  const J = sc.jointCount;
  const frac = new Float64Array(2 * J);
  const jointCell = new Int32Array(J);
  for (let k = 0; k < J; k++) {
    const x = sc.positions[2 * k];
    const y = sc.positions[2 * k + 1];
    frac[2 * k] = (x * a2[1] - y * a2[0]) / detL;
    frac[2 * k + 1] = (a1[0] * y - a1[1] * x) / detL;
    jointCell[k] = sc.jointCells[2 * k + 1] * sc.cells[0] + sc.jointCells[2 * k];
  }
  return { ax: axesOf(sc), frac, jointCell, sc };
}

export function jointWeights(v: { re: Float64Array; im: Float64Array }, J: number, real = false): Float64Array {
  const w = new Float64Array(J);
  if (real) {
    // the imaginary part is zero: the same sums (adding +0 changes nothing) without reading it,
    // which for a fresh zero array costs a page fault per 4 kB
    const x = v.re;
    for (let k = 0; k < J; k++) w[k] = x[2 * k] ** 2 + x[2 * k + 1] ** 2;
    return w;
  }
  for (let k = 0; k < J; k++) w[k] = v.re[2 * k] ** 2 + v.re[2 * k + 1] ** 2 + v.im[2 * k] ** 2 + v.im[2 * k + 1] ** 2;
  return w;
}

interface BasicMetrics {
  support: number;
  extents: [number, number];
  participation: number;
}

/**
 * Cells spanned along one axis by the occupied cell indices: max − min + 1, or on a wrapping axis
 * the shortest arc that covers them (N minus the longest run of empty cells around the circle).
 */
function spanned(used: Uint8Array, wraps: boolean): number {
  const N = used.length;
  let first = -1;
  let last = -1;
  for (let i = 0; i < N; i++)
    if (used[i]) {
      if (first < 0) first = i;
      last = i;
    }
  if (first < 0) return 0;
  if (!wraps) return last - first + 1;
  let longestGap = 0;
  let gap = 0;
  for (let t = 0; t < 2 * N; t++) {
    if (used[t % N]) gap = 0;
    else longestGap = Math.max(longestGap, Math.min(++gap, N));
  }
  return N - longestGap;
}

export function basicMetrics(geo: Geometry, w: Float64Array): BasicMetrics {
  const J = w.length;
  let total = 0;
  let sq = 0;
  let wmax = 0;
  for (let k = 0; k < J; k++) {
    total += w[k];
    sq += w[k] * w[k];
    wmax = Math.max(wmax, w[k]);
  }
  const cut = SUPPORT_AMPLITUDE ** 2 * wmax;
  const { N1, N2, px, py } = geo.ax;
  const usedI = new Uint8Array(N1);
  const usedJ = new Uint8Array(N2);
  let support = 0;
  for (let k = 0; k < J; k++)
    if (w[k] >= cut && w[k] > 0) {
      support++;
      const c = geo.jointCell[k];
      usedI[c % N1] = 1;
      usedJ[Math.floor(c / N1)] = 1;
    }
  const extents: [number, number] = support ? [spanned(usedI, px), spanned(usedJ, py)] : [0, 0];
  return { support, extents, participation: total > 0 ? (total * total) / (J * sq) : 0 };
}

interface AnchorFit {
  anchor: Anchor;
  rings: number;
  head: number;
  headWeight: number;
  xi: number;
  r2: number;
  meanDistance: number;
  pass: boolean;
}

function cartesian(sc: Supercell, f1: number, f2: number): [number, number] {
  const [a1, a2] = sc.framework.lattice;
  return [f1 * a1[0] + f2 * a2[0] + 0, f1 * a1[1] + f2 * a2[1] + 0];
}

/** Weighted least-squares line through (x, y) with weights w; returns slope and weighted R². */
function fitLine(xs: number[], ys: number[], ws: number[]): { slope: number; r2: number } {
  const W = ws.reduce((a, b) => a + b, 0);
  const mx = xs.reduce((a, x, t) => a + ws[t] * x, 0) / W;
  const my = ys.reduce((a, y, t) => a + ws[t] * y, 0) / W;
  let sxx = 0;
  let sxy = 0;
  let syy = 0;
  for (let t = 0; t < xs.length; t++) {
    sxx += ws[t] * (xs[t] - mx) ** 2;
    sxy += ws[t] * (xs[t] - mx) * (ys[t] - my);
    syy += ws[t] * (ys[t] - my) ** 2;
  }
  const slope = sxx > 0 ? sxy / sxx : 0;
  const r2 = syy > 0 && sxx > 0 ? (sxy * sxy) / (sxx * syy) : 1;
  return { slope, r2 };
}

/** Cell distances of the fixed anchors (sides, corners) per geometry, by anchor name: the same for every vector. */
const fixedRings = new WeakMap<Geometry, Map<string, Int32Array>>();

/** The distance of every cell from the anchor (once per cell, not per joint; cached for fixed anchors). */
function ringsOfCells(geo: Geometry, dist: (cell: number) => number, cacheAs: string | null): Int32Array {
  let cache = fixedRings.get(geo);
  if (cacheAs !== null && cache?.has(cacheAs)) return cache.get(cacheAs)!;
  const cells = geo.ax.N1 * geo.ax.N2;
  const cellRing = new Int32Array(cells);
  for (let c = 0; c < cells; c++) cellRing[c] = dist(c);
  if (cacheAs !== null) {
    if (!cache) fixedRings.set(geo, (cache = new Map()));
    cache.set(cacheAs, cellRing);
  }
  return cellRing;
}

/** Joints per cell (cell-major), once per geometry. */
const jointsPerCell = new WeakMap<Geometry, Int32Array>();

function cellJointCounts(geo: Geometry): Int32Array {
  let n = jointsPerCell.get(geo);
  if (!n) {
    n = new Int32Array(geo.ax.N1 * geo.ax.N2);
    for (let k = 0; k < geo.jointCell.length; k++) n[geo.jointCell[k]]++;
    jointsPerCell.set(geo, n);
  }
  return n;
}

/** A vector's weight summed per cell (joint weights w). */
function cellWeights(geo: Geometry, w: Float64Array): Float64Array {
  const cellW = new Float64Array(geo.ax.N1 * geo.ax.N2);
  for (let k = 0; k < w.length; k++) cellW[geo.jointCell[k]] += w[k];
  return cellW;
}

function fitAnchor(geo: Geometry, cellW: Float64Array, anchor: Anchor, dist: (cell: number) => number): AnchorFit {
  // the distance of every cell once, then the sums over cells (the weights already summed per
  // cell: a third of the work of summing joint by joint, for each of up to nine anchors)
  const cellRing = ringsOfCells(geo, dist, anchor.kind === 'point' ? null : `${anchor.kind}:${anchor.name}`);
  const cellN = cellJointCounts(geo);
  const C = cellW.length;
  let maxRing = 0;
  for (let c = 0; c < C; c++) if (cellN[c] > 0) maxRing = Math.max(maxRing, cellRing[c]);
  const ringW = new Float64Array(maxRing + 1);
  const ringN = new Int32Array(maxRing + 1);
  let total = 0;
  let first = 0;
  for (let c = 0; c < C; c++) {
    if (cellN[c] === 0) continue;
    const r = cellRing[c];
    ringW[r] += cellW[c];
    ringN[r] += cellN[c];
    total += cellW[c];
    first += r * cellW[c];
  }
  const rings = ringW.length;
  const head = Math.max(1, Math.floor(rings / 4));
  let hw = 0;
  for (let r = 0; r <= Math.min(head, rings - 1); r++) hw += ringW[r];
  hw /= total || 1;
  const amp = Array.from(ringW, (x, r) => (ringN[r] ? Math.sqrt(x / ringN[r]) : 0));
  const amax = Math.max(...amp);
  const xs: number[] = [];
  const ys: number[] = [];
  const ws: number[] = [];
  amp.forEach((a, r) => {
    if (ringN[r] && a > FIT_FLOOR * amax) {
      xs.push(r);
      ys.push(Math.log(a));
      ws.push(ringW[r]);
    }
  });
  let xi = Infinity;
  let r2 = 0;
  if (xs.length >= 2) {
    const fit = fitLine(xs, ys, ws);
    r2 = fit.r2;
    xi = fit.slope < 0 ? -1 / fit.slope : Infinity;
  }
  const pass = rings >= 2 && hw >= HEAD_WEIGHT && Number.isFinite(xi) && r2 >= MIN_R2;
  return { anchor, rings, head, headWeight: hw, xi, r2, meanDistance: first / (total || 1), pass };
}

/** Corner, side and point anchors the boundary offers, with their cell distances. */
function anchorCandidates(geo: Geometry, w: Float64Array): { corners: AnchorFit[]; sides: AnchorFit[]; point: AnchorFit } {
  const { ax, sc } = geo;
  const { N1, N2 } = ax;
  const ci = (c: number) => c % N1;
  const cj = (c: number) => Math.floor(c / N1);
  // the joint of largest weight (ties: the first)
  let kmax = 0;
  for (let k = 1; k < w.length; k++) if (w[k] > w[kmax]) kmax = k;
  const f1 = geo.frac[2 * kmax];
  const f2 = geo.frac[2 * kmax + 1];
  const sides: AnchorFit[] = [];
  const corners: AnchorFit[] = [];
  const sideDefs: { name: string; dist: (c: number) => number; at: [number, number] }[] = [];
  if (!ax.px) {
    sideDefs.push({ name: 'left', dist: (c) => ci(c), at: cartesian(sc, 0, f2) });
    sideDefs.push({ name: 'right', dist: (c) => N1 - 1 - ci(c), at: cartesian(sc, N1, f2) });
  }
  if (!ax.py) {
    sideDefs.push({ name: 'bottom', dist: (c) => cj(c), at: cartesian(sc, f1, 0) });
    sideDefs.push({ name: 'top', dist: (c) => N2 - 1 - cj(c), at: cartesian(sc, f1, N2) });
  }
  const cellW = cellWeights(geo, w);
  for (const s of sideDefs) sides.push(fitAnchor(geo, cellW, { kind: 'side', name: s.name, at: s.at }, s.dist));
  if (!ax.px && !ax.py) {
    for (const [v, h] of [
      ['bottom', 'left'],
      ['bottom', 'right'],
      ['top', 'left'],
      ['top', 'right'],
    ] as const) {
      const di = (c: number) => (h === 'left' ? ci(c) : N1 - 1 - ci(c));
      const dj = (c: number) => (v === 'bottom' ? cj(c) : N2 - 1 - cj(c));
      const at = cartesian(sc, h === 'left' ? 0 : N1, v === 'bottom' ? 0 : N2);
      corners.push(fitAnchor(geo, cellW, { kind: 'corner', name: `${v}-${h}`, at }, (c) => Math.max(di(c), dj(c))));
    }
  }
  // point: the cell of largest total weight
  let cmax = 0;
  for (let c = 1; c < cellW.length; c++) if (cellW[c] > cellW[cmax]) cmax = c;
  const i0 = ci(cmax);
  const j0 = cj(cmax);
  const wrapDist = (a: number, b: number, N: number, periodic: boolean) => {
    const d = Math.abs(a - b);
    return periodic ? Math.min(d, N - d) : d;
  };
  let px = 0;
  let py = 0;
  let pw = 0;
  for (let k = 0; k < w.length; k++)
    if (geo.jointCell[k] === cmax) {
      px += w[k] * sc.positions[2 * k];
      py += w[k] * sc.positions[2 * k + 1];
      pw += w[k];
    }
  const point = fitAnchor(
    geo,
    cellW,
    { kind: 'point', name: 'interior', at: [px / (pw || 1), py / (pw || 1)] },
    (c) => Math.max(wrapDist(ci(c), i0, N1, ax.px), wrapDist(cj(c), j0, N2, ax.py)),
  );
  return { corners, sides, point };
}

/** Relative change of HEAD_WEIGHT and MIN_R2 under which a decaying/bulk decision counts as marginal. */
export const DECISION_MARGIN = 0.02;

/**
 * Decaying or bulk for one localised vector of the rest, and whether that decision is marginal:
 * it would change if HEAD_WEIGHT and MIN_R2 moved by DECISION_MARGIN (relative) either way.
 */
export function decayDecision(geo: Geometry, w: Float64Array): { fit: AnchorFit | null; marginal: boolean } {
  const { corners, sides, point } = anchorCandidates(geo, w);
  const best = (fits: AnchorFit[]) => fits.filter((f) => f.pass).sort((a, b) => a.meanDistance - b.meanDistance)[0];
  const fit = best(corners) ?? best(sides) ?? (point.pass ? point : null);
  const passes = (f: AnchorFit, k: number) => f.rings >= 2 && Number.isFinite(f.xi) && f.headWeight >= HEAD_WEIGHT * k && f.r2 >= MIN_R2 * k;
  const all = [...corners, ...sides, point];
  const strict = all.some((f) => passes(f, 1 + DECISION_MARGIN));
  const loose = all.some((f) => passes(f, 1 - DECISION_MARGIN));
  return { fit, marginal: strict !== loose };
}

/** Decaying (the anchor fit) or bulk (null) for one localised vector of the rest. */
export function decayOf(geo: Geometry, w: Float64Array): AnchorFit | null {
  return decayDecision(geo, w).fit;
}
