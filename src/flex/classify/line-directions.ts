/**
 * Straight lines of a framework, found from its unit cell.
 *
 * A straight line is a chain of bars, end to end, all with the same direction in the plane,
 * that repeats itself: walking it from a joint returns to the same site of the unit cell
 * after a total shift T ≠ 0. Its lattice direction is d = T / gcd(T) (primitive, gcd 1).
 * Bars are grouped by direction (angle within ANGLE_TOLERANCE, a rotation- and
 * scale-free test); within a group each bar is oriented forward (positive along the group's
 * unit vector) and the walks are the cycles of that directed graph on the sites.
 * Only the framework decides: a relabelled, re-based or rotated description gives the same
 * lines (d is expressed in the lattice basis given, so a new basis gives the transformed d).
 */
import { resolveBars, type Framework } from '../../framework/types.js';

/** Two bar directions are the same when their unit vectors differ by at most this (radians). */
export const ANGLE_TOLERANCE = 1e-9;

/** Bound on the steps of the cycle search per direction group. */
const MAX_STEPS = 200000;

export interface FrameworkLine {
  /** Primitive lattice direction (p, q), sign fixed so that p > 0, or p = 0 and q > 0. */
  direction: [number, number];
  /** Number of bars in one period of the line (the shortest cycle found). */
  barsPerPeriod: number;
}

function gcd(a: number, b: number): number {
  a = Math.abs(a);
  b = Math.abs(b);
  while (b) [a, b] = [b, a % b];
  return a;
}

function canonical(p: number, q: number): [number, number] {
  const g = gcd(p, q);
  let d: [number, number] = [p / g, q / g];
  if (d[0] < 0 || (d[0] === 0 && d[1] < 0)) d = [-d[0], -d[1]];
  return [d[0] + 0, d[1] + 0];
}

/**
 * Every primitive lattice direction along which a chain of collinear bars runs straight.
 * Cycles are searched up to `maxBars` bars per period (default: the number of sites, the
 * longest simple cycle on the sites), so |d| is bounded by that many bar shifts.
 */
export function frameworkLineDirections(fw: Framework, maxBars = fw.joints.length): FrameworkLine[] {
  const bars = resolveBars(fw);
  // direction groups: angle in [0, π), compared on the unit circle
  const groups: { u: [number, number]; edges: { from: number; to: number; shift: [number, number] }[] }[] = [];
  for (const b of bars) {
    const len = Math.hypot(b.vector[0], b.vector[1]);
    if (!(len > 0)) continue;
    let u: [number, number] = [b.vector[0] / len, b.vector[1] / len];
    if (u[1] < 0 || (u[1] === 0 && u[0] < 0)) u = [-u[0], -u[1]];
    let g = groups.find((x) => Math.hypot(x.u[0] - u[0], x.u[1] - u[1]) <= ANGLE_TOLERANCE || Math.hypot(x.u[0] + u[0], x.u[1] + u[1]) <= ANGLE_TOLERANCE);
    if (!g) {
      g = { u, edges: [] };
      groups.push(g);
    }
    // orient along the group's unit vector
    const along = b.vector[0] * g.u[0] + b.vector[1] * g.u[1] > 0;
    if (along) g.edges.push({ from: b.from, to: b.to, shift: b.shift });
    else g.edges.push({ from: b.to, to: b.from, shift: [-b.shift[0], -b.shift[1]] });
  }
  const found = new Map<string, FrameworkLine>();
  for (const g of groups) {
    const out = new Map<number, { to: number; shift: [number, number] }[]>();
    for (const e of g.edges) {
      if (!out.has(e.from)) out.set(e.from, []);
      out.get(e.from)!.push({ to: e.to, shift: e.shift });
    }
    // depth-first walks from every site, returning to it within maxBars bars (at most
    // MAX_STEPS steps per group, so a cell with many parallel bars stays cheap)
    let steps = 0;
    for (const start of out.keys()) {
      const walk = (site: number, s: [number, number], depth: number): void => {
        if (++steps > MAX_STEPS) return;
        if (depth > 0 && site === start) {
          if (s[0] === 0 && s[1] === 0) return; // cannot happen for forward bars; be safe
          const d = canonical(s[0], s[1]);
          const key = `${d[0]},${d[1]}`;
          const prev = found.get(key);
          if (!prev || depth < prev.barsPerPeriod) found.set(key, { direction: d, barsPerPeriod: depth });
          return;
        }
        if (depth >= maxBars) return;
        for (const e of out.get(site) ?? []) walk(e.to, [s[0] + e.shift[0], s[1] + e.shift[1]], depth + 1);
      };
      walk(start, [0, 0], 0);
    }
  }
  return [...found.values()].sort((a, b) => a.direction[0] - b.direction[0] || a.direction[1] - b.direction[1]);
}
