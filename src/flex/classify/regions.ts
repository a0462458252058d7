/**
 * Regions of cells: the supercell's axes, square windows, strips along a lattice direction,
 * the short sub-segments of a strip, and the strip of which a vector is a whole line.
 */
import type { Supercell } from '../../supercell/supercell.js';
import type { Geometry } from './metrics.js';
import { LINE_COVERAGE } from './thresholds.js';

/** Cell index c = j·N1 + i. */
export interface Region {
  kind: 'window' | 'strip';
  /** Cells of the region (distinct). */
  cells: number[];
  /** For strips: the along-strip coordinate of each cell (same order as `cells`). */
  along?: number[];
  direction?: [number, number];
  width: number;
  /** Strips: true when the strip closes on itself along a twisted axis. */
  closed?: boolean;
  /** Strips: the number of along-strip positions inside the supercell (the period when closed). */
  length?: number;
  label: string;
}

export interface Axes {
  N1: number;
  N2: number;
  /** True for a twisted (wrapping) axis. */
  px: boolean;
  py: boolean;
}

export function axesOf(sc: Supercell): Axes {
  return { N1: sc.cells[0], N2: sc.cells[1], px: sc.boundary.x.kind === 'twist', py: sc.boundary.y.kind === 'twist' };
}

function mod(a: number, n: number): number {
  return ((a % n) + n) % n;
}

export function gcd(a: number, b: number): number {
  a = Math.abs(a);
  b = Math.abs(b);
  while (b) [a, b] = [b, a % b];
  return a;
}

/** The supercell cell at unwrapped cell coordinates (i, j), or −1 when outside. */
function cellAt(ax: Axes, i: number, j: number): number {
  let ii = i;
  let jj = j;
  if (ax.px) ii = mod(i, ax.N1);
  else if (i < 0 || i >= ax.N1) return -1;
  if (ax.py) jj = mod(j, ax.N2);
  else if (j < 0 || j >= ax.N2) return -1;
  return jj * ax.N1 + ii;
}

/** Square windows of 1×1 up to w×w cells at every position (wrapping along twisted axes), deduplicated. */
export function windowsOf(ax: Axes, w: number): Region[] {
  const out: Region[] = [];
  const seen = new Set<string>();
  for (let size = 1; size <= w; size++) {
    const positions = (N: number, periodic: boolean): [number, number][] => {
      const span = Math.min(size, N);
      if (span === N) return [[0, N]];
      const count = periodic ? N : N - span + 1;
      return Array.from({ length: count }, (_, p) => [p, span] as [number, number]);
    };
    for (const [j0, sj] of positions(ax.N2, ax.py))
      for (const [i0, si] of positions(ax.N1, ax.px)) {
        const cells: number[] = [];
        for (let dj = 0; dj < sj; dj++) for (let di = 0; di < si; di++) cells.push(cellAt(ax, i0 + di, j0 + dj));
        const key = [...cells].sort((a, b) => a - b).join(',');
        // a window holding every cell is the whole supercell, not a window
        if (seen.has(key) || cells.length === ax.N1 * ax.N2) continue;
        seen.add(key);
        out.push({ kind: 'window', cells, width: size, label: `window ${si}×${sj} at cell (${i0}, ${j0})` });
      }
  }
  return out;
}

function det(a: [number, number], b: [number, number]): number {
  return a[0] * b[1] - a[1] * b[0];
}

/** A transverse step e with det(d, e) = 1 (d primitive). */
function transverse(d: [number, number]): [number, number] {
  // extended Euclid on (p, q): find (x, y) with p·y − q·x = 1
  const [p, q] = d;
  const ext = (a: number, b: number): [number, number, number] => {
    if (b === 0) return [a, 1, 0];
    const [g, x, y] = ext(b, a % b);
    return [g, y, x - Math.trunc(a / b) * y];
  };
  const [g, s, t] = ext(p, -q); // p·s + (−q)·t = g = ±1
  const e: [number, number] = [t / g, s / g];
  if (det(d, e) !== 1) throw new Error(`no transverse step for direction (${p}, ${q})`);
  return e;
}

/**
 * Strips of width 1..s along direction d. Cells are written c = k·d + m·e (det(d, e) = 1):
 * lines are m = const with along-coordinate k. Twisted axes identify (k, m) with
 * (k + τ_k, m + τ_m) for τ = N·u (u the axis); lines close when some identification keeps m.
 */
export function stripsOf(ax: Axes, d: [number, number], sMax: number): Region[] {
  const e = transverse(d);
  const taus: [number, number][] = [];
  if (ax.px) taus.push([det([ax.N1, 0], e), det(d, [ax.N1, 0])]);
  if (ax.py) taus.push([det([0, ax.N2], e), det(d, [0, ax.N2])]);
  // transverse period g (m identified modulo g) and along period P (closed lines), if any
  let g = 0;
  for (const t of taus) g = gcd(g, t[1]);
  let P = 0;
  if (taus.length === 1 && taus[0][1] === 0) P = Math.abs(taus[0][0]);
  if (taus.length === 2) {
    const [t1, t2] = taus;
    const h = gcd(t1[1], t2[1]);
    if (h === 0) P = gcd(t1[0], t2[0]);
    else P = Math.abs((t2[1] / h) * t1[0] - (t1[1] / h) * t2[0]);
  }
  const cellOf = (k: number, m: number): number => cellAt(ax, k * d[0] + m * e[0], k * d[1] + m * e[1]);
  // range of m
  let mLo: number;
  let mHi: number;
  if (g > 0) {
    mLo = 0;
    mHi = g - 1;
  } else {
    mLo = Infinity;
    mHi = -Infinity;
    for (let j = 0; j < ax.N2; j++)
      for (let i = 0; i < ax.N1; i++) {
        const m = det(d, [i, j]);
        mLo = Math.min(mLo, m);
        mHi = Math.max(mHi, m);
      }
  }
  // k range of line m (open lines)
  const kBound = 2 * (ax.N1 + ax.N2) + 4;
  const lineCells = (m: number): { k: number; cell: number }[] => {
    const out: { k: number; cell: number }[] = [];
    if (P > 0) {
      for (let k = 0; k < P; k++) {
        const c = cellOf(k, m);
        if (c >= 0) out.push({ k, cell: c });
      }
      return out;
    }
    for (let k = -kBound; k <= kBound; k++) {
      const c = cellOf(k, m);
      if (c >= 0) out.push({ k, cell: c });
    }
    return out;
  };
  const out: Region[] = [];
  const seen = new Set<string>();
  const span = mHi - mLo + 1;
  for (let s = 1; s <= Math.min(sMax, span); s++) {
    const starts = g > 0 ? (s === g ? [0] : Array.from({ length: g }, (_, t) => t)) : Array.from({ length: span - s + 1 }, (_, t) => mLo + t);
    for (const m0 of starts) {
      const cells: number[] = [];
      const along: number[] = [];
      const used = new Set<number>();
      for (let m = m0; m < m0 + s; m++)
        for (const { k, cell } of lineCells(m)) {
          if (used.has(cell)) continue;
          used.add(cell);
          cells.push(cell);
          along.push(k);
        }
      // a strip holding every cell is the whole supercell, not a strip
      if (cells.length === 0 || cells.length === ax.N1 * ax.N2) continue;
      const key = [...cells].sort((a, b) => a - b).join(',');
      if (seen.has(key)) continue;
      seen.add(key);
      let length: number;
      if (P > 0) length = P;
      else length = Math.max(...along) - Math.min(...along) + 1;
      out.push({
        kind: 'strip',
        cells,
        along,
        direction: [d[0], d[1]],
        width: s,
        closed: P > 0,
        length,
        label: `strip (${d[0]}, ${d[1]}) of width ${s} at offset ${m0}${P > 0 ? ' (closed)' : ''}`,
      });
    }
  }
  return out;
}

/** Sub-segments of a strip shorter than LINE_COVERAGE of its length (maximal ones, all positions). */
export function shortSegments(strip: Region): number[][] {
  const L = strip.length!;
  const lenT = Math.ceil(LINE_COVERAGE * L) - 1;
  if (lenT < 1) return [];
  const along = strip.along!;
  const out: number[][] = [];
  if (strip.closed) {
    for (let k0 = 0; k0 < L; k0++) {
      const idx: number[] = [];
      along.forEach((k, t) => {
        if (mod(k - k0, L) < lenT) idx.push(t);
      });
      out.push(idx);
    }
  } else {
    const lo = Math.min(...along);
    const hi = Math.max(...along);
    for (let k0 = lo; k0 + lenT - 1 <= hi; k0++) {
      const idx: number[] = [];
      along.forEach((k, t) => {
        if (k >= k0 && k < k0 + lenT) idx.push(t);
      });
      out.push(idx);
    }
  }
  return out;
}

/** The strips holding each cell, narrowest first. */
export function indexStrips(strips: Region[], ax: Axes): Region[][] {
  const out: Region[][] = Array.from({ length: ax.N1 * ax.N2 }, () => []);
  for (const s of [...strips].sort((a, b) => a.width - b.width)) for (const c of s.cells) out[c].push(s);
  return out;
}

/**
 * The strip of which the vector (joint weights w) is a whole line: its support lies in the
 * strip and runs along at least LINE_COVERAGE of the strip's length. Null when none.
 */
export function wholeLineOf(stripsByCell: Region[][], geo: Geometry, w: Float64Array): Region | null {
  let top = 0;
  for (const x of w) top = Math.max(top, x);
  const cells = new Set<number>();
  const joints: number[] = [];
  for (let k = 0; k < w.length; k++)
    if (w[k] > 1e-20 * top) {
      cells.add(geo.jointCell[k]);
      joints.push(k);
    }
  if (joints.length < 2) return null;
  const first = cells.values().next().value as number;
  for (const s of stripsByCell[first]) {
    const alongOf = new Map<number, number>();
    s.cells.forEach((c, t) => alongOf.set(c, s.along![t]));
    const ks: number[] = [];
    let inside = true;
    for (const c of cells) {
      const k = alongOf.get(c);
      if (k === undefined) {
        inside = false;
        break;
      }
      ks.push(k);
    }
    if (!inside) continue;
    const covered = s.closed ? new Set(ks).size : Math.max(...ks) - Math.min(...ks) + 1;
    if (covered >= LINE_COVERAGE * s.length! && onOneLine(geo, joints, s.direction!)) return s;
  }
  return null;
}

/** Whether the joints lie on one straight line along lattice direction d (fractional coordinates). */
function onOneLine(geo: Geometry, joints: number[], d: [number, number]): boolean {
  const off = (k: number) => d[0] * geo.frac[2 * k + 1] - d[1] * geo.frac[2 * k];
  const o0 = off(joints[0]);
  return joints.every((k) => Math.abs(off(k) - o0) <= 1e-9 * (1 + Math.abs(o0)));
}
