/**
 * Topology of the phase map's zero set: the charge of each isolated zero, near-zeros, and
 * zero curves traced as polylines (src/spectrum/phasemap.ts finds the points and lines).
 *
 *  - Charge: the winding of det Φ (src/edges: LaurentSymbol + determinantOnCircle) on a small
 *    counter-clockwise circle around the point, radius 0.3 × min(1/grid, distance to the next
 *    zero point). Null when Φ is not square, det vanishes identically (a flat band), or det comes
 *    near zero on the circle (the point sits on a curve or line).
 *  - Near-zeros: a charge-0 point whose σ, minimised further (Gauss–Newton on the singular
 *    triplet), stays above a thousandth of the tolerance: σ has a small nonzero minimum there.
 *    Charge-0 points refined to below that are exact zeros (e.g. Γ, where det vanishes to
 *    second order) and stay zero points.
 *  - Curves: isolated points linked within 2.5 grid steps on the torus; a connected group of at
 *    least 4 points, most of them exact zeros (σ ≤ 1e-3 × tolerance) and the first three of
 *    charge null or 0, is a curve, ordered into a
 *    polyline by nearest neighbours (approximate where curves cross); other groups are handled
 *    point by point.
 */
import { determinantOnCircle } from '../edges/determinant.js';
import { LaurentSymbol } from '../edges/laurent.js';
import type { Framework } from '../framework/types.js';
import { newtonZero, SymbolEvaluator, type PhaseMap, type ZeroLine, type ZeroPoint } from './phasemap.js';

export interface ChargedZero {
  theta: [number, number];
  dimKer: number;
  /** Winding of det Φ on a small loop around it; null when undefined (see the module note). */
  charge: number | null;
}

export interface NearZero {
  theta: [number, number];
  /** The smallest σ_{k0+1} found near it (framework units): above zero, below the tolerance. */
  sigma: number;
  charge: 0;
  /** How σ grows away from it: the exponent p in σ − σ_min ∝ r^p, from r and r/2 (≈1 linear, ≈2 quadratic). */
  rise: number;
}

export interface ZeroCurve {
  /** Polyline in turns, each coordinate in [0, 1): consecutive points may jump across 1 ≡ 0. */
  points: [number, number][];
  dimKer: number;
}

export interface ZeroTopology {
  zeroPoints: ChargedZero[];
  zeroLines: ZeroLine[];
  zeroCurves: ZeroCurve[];
  nearZeros: NearZero[];
}

const LINK_STEPS = 2.5;
const MIN_CURVE_POINTS = 4;

function frac(t: number): number {
  const f = t - Math.floor(t);
  return f >= 1 ? 0 : f;
}

/** Distance on the torus R²/Z² (turns). */
function torusDistance(a: [number, number], b: [number, number]): number {
  const d = (x: number, y: number) => {
    const t = Math.abs(x - y) % 1;
    return Math.min(t, 1 - t);
  };
  return Math.hypot(d(a[0], b[0]), d(a[1], b[1]));
}

/** det Φ(θ1, θ2) through the edge module's Laurent symbol (edge along a1 at phase θ1, z2 on the circle). */
function detAt(fw: Framework, t1: number, t2: number): [number, number] {
  return determinantOnCircle(new LaurentSymbol(fw, 'a1', frac(t1)), frac(t2)).det;
}

/**
 * Winding of det Φ on the circle of radius r around c (counter-clockwise), with steps halved
 * until the argument moves less than 0.3 rad; null when |det| falls below `floor` or a step
 * cannot be resolved.
 */
export function loopCharge(fw: Framework, c: [number, number], r: number, floor: number, start = 32): number | null {
  const at = (s: number) => detAt(fw, c[0] + r * Math.cos(2 * Math.PI * s), c[1] + r * Math.sin(2 * Math.PI * s));
  const arc = (s0: number, d0: [number, number], s1: number, d1: [number, number], depth: number): number | null => {
    if (Math.hypot(...d0) <= floor || Math.hypot(...d1) <= floor) return null;
    const step = Math.atan2(d0[0] * d1[1] - d0[1] * d1[0], d0[0] * d1[0] + d0[1] * d1[1]);
    if (Math.abs(step) <= 0.3) return step;
    if (depth >= 16) return null;
    const sm = 0.5 * (s0 + s1);
    const dm = at(sm);
    const a = arc(s0, d0, sm, dm, depth + 1);
    const b = a === null ? null : arc(sm, dm, s1, d1, depth + 1);
    return a === null || b === null ? null : a + b;
  };
  let total = 0;
  let prev = at(0);
  const first = prev;
  for (let j = 1; j <= start; j++) {
    const d = j === start ? first : at(j / start);
    const s = arc((j - 1) / start, prev, j / start, d, 0);
    if (s === null) return null;
    total += s;
    prev = d;
  }
  const w = total / (2 * Math.PI);
  const n = Math.round(w) + 0; // + 0 turns −0 into 0
  return Math.abs(w - n) < 0.05 ? n : null;
}

/** Group points whose torus distance is within `link` (single linkage). */
function components(pts: ZeroPoint[], link: number): ZeroPoint[][] {
  const parent = pts.map((_, i) => i);
  const root = (i: number): number => (parent[i] === i ? i : (parent[i] = root(parent[i])));
  for (let i = 0; i < pts.length; i++)
    for (let j = i + 1; j < pts.length; j++) if (torusDistance(pts[i].theta, pts[j].theta) <= link) parent[root(i)] = root(j);
  const groups = new Map<number, ZeroPoint[]>();
  pts.forEach((p, i) => {
    const k = root(i);
    const g = groups.get(k);
    if (g) g.push(p);
    else groups.set(k, [p]);
  });
  return [...groups.values()];
}

/** Order a group into a polyline: start at the point farthest from a random one, then nearest neighbours. */
function polyline(group: ZeroPoint[]): [number, number][] {
  const far = (from: [number, number], pool: ZeroPoint[]) => pool.reduce((best, p) => (torusDistance(from, p.theta) > torusDistance(from, best.theta) ? p : best));
  const rest = [...group];
  let cur = far(rest[0].theta, rest);
  const out: [number, number][] = [];
  while (rest.length) {
    rest.splice(rest.indexOf(cur), 1);
    out.push(cur.theta);
    if (!rest.length) break;
    const here = cur.theta;
    cur = rest.reduce((best, p) => (torusDistance(here, p.theta) < torusDistance(here, best.theta) ? p : best));
  }
  return out;
}

/** Charges, near-zeros and curves for a phase map of `fw` (the map as phaseMap returns it). */
export function zeroTopology(fw: Framework, map: PhaseMap): ZeroTopology {
  const zs = map.zeroSet;
  const step = 1 / map.grid;
  const k0 = map.genericKernel;
  const square = map.bars === map.dof && k0 === 0;
  const ev = new SymbolEvaluator(fw);
  const L = ev.lengthScale;
  const absolute = map.tolerance.absolute;
  // |det| below this on a loop counts as passing through the zero set: 1e-10 × σ_max^n (scaled units)
  const detFloor = 1e-10 * Math.pow(map.sigmaMax / L, map.dof);

  const groups = components(zs.isolated, LINK_STEPS * step);
  const zeroCurves: ZeroCurve[] = [];
  const single: ZeroPoint[] = [];
  for (const g of groups) {
    // a curve's points are exact zeros (σ far below the tolerance), not a shallow valley
    const exact = g.filter((p) => p.sigma <= 1e-3 * absolute).length;
    // and det Φ has no winding round its points (a coarse grid could link charged points)
    const charged = square && g.slice(0, 3).some((p) => (loopCharge(fw, p.theta, 0.3 * step, detFloor) ?? 0) !== 0);
    if (g.length >= MIN_CURVE_POINTS && 2 * exact >= g.length && !charged) zeroCurves.push({ points: polyline(g), dimKer: Math.min(...g.map((p) => p.kernel)) });
    else single.push(...g);
  }

  const zeroPoints: ChargedZero[] = [];
  const nearZeros: NearZero[] = [];
  for (const z of single) {
    let nearest = Infinity;
    for (const w of zs.isolated) if (w !== z) nearest = Math.min(nearest, torusDistance(z.theta, w.theta));
    const r = 0.3 * Math.min(step, nearest);
    const charge = square ? loopCharge(fw, z.theta, r, detFloor) : null;
    if (charge === 0) {
      const refined = newtonZero(ev, k0, z.theta, 0.1 * step, 0);
      const sigma = refined.sigma * L;
      // the refinement slid away: a shoulder of another zero (a line, Γ), not a zero of its own
      if (torusDistance(refined.x, z.theta) > 0.5 * step) continue;
      if (sigma > 1e-3 * absolute) {
        const c = refined.x;
        const f = (rr: number) => {
          let s = 0;
          for (let k = 0; k < 4; k++) s += ev.sigma(frac(c[0] + rr * Math.cos((k * Math.PI) / 2 + 0.3)), frac(c[1] + rr * Math.sin((k * Math.PI) / 2 + 0.3)))[k0] * L;
          return s / 4 - sigma;
        };
        const big = f(r);
        const small = f(r / 2);
        const rise = big > 0 && small > 0 ? Math.log2(big / small) : NaN;
        if (nearZeros.some((w) => torusDistance(w.theta, c) <= 1e-4)) continue;
        nearZeros.push({ theta: c, sigma, charge: 0, rise: Number.isFinite(rise) ? rise : 0 });
        continue;
      }
    }
    zeroPoints.push({ theta: z.theta, dimKer: z.kernel, charge });
  }
  return { zeroPoints, zeroLines: zs.lines, zeroCurves, nearZeros };
}
