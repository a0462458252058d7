/**
 * The drawing model shared by the stage (pixi), the 2D-canvas exports (PNG, GIF) and the SVG
 * figure: rest geometry, the displaced shape p + ε·Re(e^{iφ} u) at a phase φ, velocity or
 * displacement arrows, and the marks of the boundary rule. World coordinates, y up.
 */
import type { GeometryData, ModeData, StressData } from '../../worker/protocol.js';

export type Vec = [number, number];

/** How each bar row is drawn. */
export const enum BarKind {
  /** both ends are joints of the supercell */
  Inner = 0,
  /** the `to` end is a periodic image: drawn as a stub from `from` along the bar vector */
  Wrapped = 1,
  /** the `from` end is fixed ground */
  GroundFrom = 2,
  /** the `to` end is fixed ground */
  GroundTo = 3,
}

export type Mark =
  | { kind: 'ground-line'; a: Vec; b: Vec; outward: Vec }
  | { kind: 'ground-end'; at: Vec; outward: Vec }
  | { kind: 'wrap-line'; a: Vec; b: Vec; outward: Vec }
  /** Text along a side: centred at `at`, running along `along`, pushed outward. */
  | { kind: 'label'; at: Vec; text: string; outward: Vec; along: Vec };

export interface Bounds {
  minX: number;
  maxX: number;
  minY: number;
  maxY: number;
}

export interface SceneModel {
  geom: GeometryData;
  n: number;
  m: number;
  kinds: Uint8Array;
  /** Median bar length (world units). */
  barLength: number;
  bounds: Bounds;
  marks: Mark[];
}

export interface Field {
  re: Float64Array;
  im: Float64Array | null;
  /** ε: world units per unit of u, so that the largest joint moves `amplitude` bar lengths. */
  eps: number;
  /** Arrow gain: the longest arrow is 0.8 bar lengths. */
  arrowGain: number;
  /** |u_k| / max |u|, per joint. */
  relative: Float32Array;
  maxAbs: number;
}

export interface Frame {
  joints: Float64Array;
  /** x1, y1, x2, y2 per bar. */
  bars: Float64Array;
  /** Arrow vector per joint (world units), zero when arrows are off. */
  arrows: Float64Array;
}

export type ArrowMode = 'none' | 'velocity' | 'displacement';

function median(values: number[]): number {
  if (values.length === 0) return 1;
  const s = [...values].sort((a, b) => a - b);
  const k = Math.floor(s.length / 2);
  return s.length % 2 ? s[k] : 0.5 * (s[k - 1] + s[k]);
}

export function buildScene(geom: GeometryData): SceneModel {
  const n = geom.jointCount;
  const m = geom.barA.length;
  const P = geom.positions;
  const kinds = new Uint8Array(m);
  const lengths: number[] = [];
  const b: Bounds = { minX: Infinity, maxX: -Infinity, minY: Infinity, maxY: -Infinity };
  const grow = (x: number, y: number) => {
    if (x < b.minX) b.minX = x;
    if (x > b.maxX) b.maxX = x;
    if (y < b.minY) b.minY = y;
    if (y > b.maxY) b.maxY = y;
  };
  for (let k = 0; k < n; k++) grow(P[2 * k], P[2 * k + 1]);
  for (let r = 0; r < m; r++) {
    const a = geom.barA[r];
    const bb = geom.barB[r];
    const vx = geom.barVector[2 * r];
    const vy = geom.barVector[2 * r + 1];
    lengths.push(Math.hypot(vx, vy));
    if (a < 0) {
      kinds[r] = BarKind.GroundFrom;
      grow(P[2 * bb] - vx, P[2 * bb + 1] - vy);
    } else if (bb < 0) {
      kinds[r] = BarKind.GroundTo;
      grow(P[2 * a] + vx, P[2 * a + 1] + vy);
    } else if (geom.barWraps[2 * r] !== 0 || geom.barWraps[2 * r + 1] !== 0) {
      kinds[r] = BarKind.Wrapped;
      grow(P[2 * a] + vx, P[2 * a + 1] + vy);
    } else kinds[r] = BarKind.Inner;
  }
  if (!Number.isFinite(b.minX)) Object.assign(b, { minX: -1, maxX: 1, minY: -1, maxY: 1 });
  const model: SceneModel = { geom, n, m, kinds, barLength: median(lengths.filter((l) => l > 0)), bounds: b, marks: [] };
  model.marks = boundaryMarks(model);
  for (const mk of model.marks) {
    if (mk.kind === 'ground-line' || mk.kind === 'wrap-line') {
      grow(mk.a[0], mk.a[1]);
      grow(mk.b[0], mk.b[1]);
    }
  }
  return model;
}

/** Normalise a mode for drawing. */
export function fieldOf(model: SceneModel, mode: Pick<ModeData, 're' | 'im'>, amplitude: number): Field {
  const n = model.n;
  const relative = new Float32Array(n);
  let maxAbs = 0;
  for (let k = 0; k < n; k++) {
    let s = mode.re[2 * k] ** 2 + mode.re[2 * k + 1] ** 2;
    if (mode.im) s += mode.im[2 * k] ** 2 + mode.im[2 * k + 1] ** 2;
    relative[k] = Math.sqrt(s);
    if (relative[k] > maxAbs) maxAbs = relative[k];
  }
  if (maxAbs > 0) for (let k = 0; k < n; k++) relative[k] /= maxAbs;
  const unit = maxAbs > 0 ? model.barLength / maxAbs : 0;
  return { re: mode.re, im: mode.im, eps: amplitude * unit, arrowGain: 0.8 * unit, relative, maxAbs };
}

export function newFrame(model: SceneModel): Frame {
  return { joints: new Float64Array(2 * model.n), bars: new Float64Array(4 * model.m), arrows: new Float64Array(2 * model.n) };
}

/**
 * Positions at phase φ = 2π·turns: p + ε·Re(e^{iφ} u). A wrapped bar's far end is the image of
 * its `to` joint, which moves with the bar's phase factor: Re(e^{iφ}·phase·u_b).
 */
export function computeFrame(model: SceneModel, field: Field | null, turns: number, arrows: ArrowMode, out: Frame): Frame {
  const g = model.geom;
  const P = g.positions;
  const n = model.n;
  const J = out.joints;
  const phi = 2 * Math.PI * turns;
  const c = Math.cos(phi);
  const s = Math.sin(phi);
  const eps = field ? field.eps : 0;
  const re = field?.re;
  const im = field?.im ?? null;
  for (let k = 0; k < n; k++) {
    let dx = 0;
    let dy = 0;
    if (re) {
      dx = c * re[2 * k];
      dy = c * re[2 * k + 1];
      if (im) {
        dx -= s * im[2 * k];
        dy -= s * im[2 * k + 1];
      }
    }
    J[2 * k] = P[2 * k] + eps * dx;
    J[2 * k + 1] = P[2 * k + 1] + eps * dy;
  }
  const A = out.arrows;
  if (field && arrows !== 'none') {
    const gain = field.arrowGain;
    for (let k = 0; k < n; k++) {
      const rx = field.re[2 * k];
      const ry = field.re[2 * k + 1];
      const ix = im ? im[2 * k] : 0;
      const iy = im ? im[2 * k + 1] : 0;
      if (arrows === 'velocity') {
        // d/dφ Re(e^{iφ} u) = −sin φ·Re u − cos φ·Im u
        A[2 * k] = gain * (-s * rx - c * ix);
        A[2 * k + 1] = gain * (-s * ry - c * iy);
      } else {
        A[2 * k] = gain * (c * rx - s * ix);
        A[2 * k + 1] = gain * (c * ry - s * iy);
      }
    }
  } else A.fill(0);
  const B = out.bars;
  const kinds = model.kinds;
  for (let r = 0; r < model.m; r++) {
    const a = g.barA[r];
    const b = g.barB[r];
    const vx = g.barVector[2 * r];
    const vy = g.barVector[2 * r + 1];
    const o = 4 * r;
    switch (kinds[r]) {
      case BarKind.Inner:
        B[o] = J[2 * a];
        B[o + 1] = J[2 * a + 1];
        B[o + 2] = J[2 * b];
        B[o + 3] = J[2 * b + 1];
        break;
      case BarKind.GroundFrom:
        B[o] = P[2 * b] - vx;
        B[o + 1] = P[2 * b + 1] - vy;
        B[o + 2] = J[2 * b];
        B[o + 3] = J[2 * b + 1];
        break;
      case BarKind.GroundTo:
        B[o] = J[2 * a];
        B[o + 1] = J[2 * a + 1];
        B[o + 2] = P[2 * a] + vx;
        B[o + 3] = P[2 * a + 1] + vy;
        break;
      default: {
        B[o] = J[2 * a];
        B[o + 1] = J[2 * a + 1];
        let dx = 0;
        let dy = 0;
        if (re) {
          const pr = g.barPhase[2 * r];
          const pi = g.barPhase[2 * r + 1];
          const ux = re[2 * b];
          const uy = re[2 * b + 1];
          const wx = im ? im[2 * b] : 0;
          const wy = im ? im[2 * b + 1] : 0;
          // w = phase · u_b; displacement = Re(e^{iφ} w) = c·Re w − s·Im w
          dx = c * (pr * ux - pi * wx) - s * (pr * wx + pi * ux);
          dy = c * (pr * uy - pi * wy) - s * (pr * wy + pi * uy);
        }
        B[o + 2] = P[2 * a] + vx + eps * dx;
        B[o + 3] = P[2 * a + 1] + vy + eps * dy;
      }
    }
  }
  return out;
}

/**
 * Bar tensions of a self-stress, scaled to [−1, 1] (positive = tension). A complex stress is
 * first turned by the phase of its largest entry, then its real part is shown.
 */
export function stressValues(st: StressData): Float32Array {
  const m = st.re.length;
  const out = new Float32Array(m);
  let rot: [number, number] = [1, 0];
  if (st.im) {
    let best = -1;
    let kb = 0;
    for (let r = 0; r < m; r++) {
      const a = st.re[r] ** 2 + st.im[r] ** 2;
      if (a > best) {
        best = a;
        kb = r;
      }
    }
    const mag = Math.sqrt(best);
    if (mag > 0) rot = [st.re[kb] / mag, -st.im[kb] / mag];
  }
  let max = 0;
  for (let r = 0; r < m; r++) {
    const v = st.im ? st.re[r] * rot[0] - st.im[r] * rot[1] : st.re[r];
    out[r] = v;
    if (Math.abs(v) > max) max = Math.abs(v);
  }
  if (max > 0) for (let r = 0; r < m; r++) out[r] /= max;
  return out;
}

/**
 * Axial bar forces t_b = w_b·|p_b| of a self-stress (tension positive), scaled to [−1, 1] as
 * stressValues does: the worker's forces when it sent them, else computed from w and the bar
 * vectors (a complex stress aligned by the phase of its largest force).
 */
export function stressForceValues(st: StressData, geom: GeometryData): Float32Array {
  if (st.forces) return stressValues({ re: st.forces, im: null });
  const m = st.re.length;
  const len = Float64Array.from({ length: m }, (_, r) => Math.hypot(geom.barVector[2 * r], geom.barVector[2 * r + 1]));
  return stressValues({ re: st.re.map((x, r) => x * len[r]), im: st.im ? st.im.map((x, r) => x * len[r]) : null });
}

/** Bar widths of a self-stress drawing, as multiples of the plain bar width: thin at zero force, thick at the largest. */
export const STRESS_WIDTH = { min: 0.6, max: 3.4 } as const;

/** Width multiple per bar for values in [−1, 1]: min + (max − min)·|value|. */
export function stressWidths(values: Float32Array): Float32Array {
  return values.map((v) => STRESS_WIDTH.min + (STRESS_WIDTH.max - STRESS_WIDTH.min) * Math.min(1, Math.abs(v)));
}

// ---------------------------------------------------------------------------------------------
// Boundary marks

function boundaryMarks(model: SceneModel): Mark[] {
  const g = model.geom;
  const [a1, a2] = g.lattice;
  const det = a1[0] * a2[1] - a1[1] * a2[0];
  if (Math.abs(det) < 1e-300) return [];
  const toLat = (x: number, y: number): Vec => [(x * a2[1] - y * a2[0]) / det, (a1[0] * y - a1[1] * x) / det];
  const toWorld = (f1: number, f2: number): Vec => [f1 * a1[0] + f2 * a2[0], f1 * a1[1] + f2 * a2[1]];
  const P = g.positions;
  let lo1 = Infinity;
  let hi1 = -Infinity;
  let lo2 = Infinity;
  let hi2 = -Infinity;
  for (let k = 0; k < model.n; k++) {
    const [f1, f2] = toLat(P[2 * k], P[2 * k + 1]);
    lo1 = Math.min(lo1, f1);
    hi1 = Math.max(hi1, f1);
    lo2 = Math.min(lo2, f2);
    hi2 = Math.max(hi2, f2);
  }
  if (!Number.isFinite(lo1)) return [];
  const marks: Mark[] = [];
  const fixed: { at: Vec; lat: Vec; outward: Vec }[] = [];
  for (let r = 0; r < model.m; r++) {
    const kind = model.kinds[r];
    if (kind !== BarKind.GroundFrom && kind !== BarKind.GroundTo) continue;
    const a = g.barA[r];
    const b = g.barB[r];
    const vx = g.barVector[2 * r];
    const vy = g.barVector[2 * r + 1];
    const at: Vec = kind === BarKind.GroundFrom ? [P[2 * b] - vx, P[2 * b + 1] - vy] : [P[2 * a] + vx, P[2 * a + 1] + vy];
    const len = Math.hypot(vx, vy) || 1;
    const outward: Vec = kind === BarKind.GroundFrom ? [-vx / len, -vy / len] : [vx / len, vy / len];
    fixed.push({ at, lat: toLat(at[0], at[1]), outward });
  }
  for (const f of fixed) marks.push({ kind: 'ground-end', at: f.at, outward: f.outward });
  const eps = 1e-9;
  const unitOut = (v: Vec): Vec => {
    const l = Math.hypot(v[0], v[1]) || 1;
    return [v[0] / l, v[1] / l];
  };
  // outward normals of the four sides, in world coordinates
  const nrm1 = unitOut([a2[1] * Math.sign(det), -a2[0] * Math.sign(det)]); // ⟂ a2, pointing to +f1
  const nrm2 = unitOut([-a1[1] * Math.sign(det), a1[0] * Math.sign(det)]); // ⟂ a1, pointing to +f2
  const bc = parseRules(g.bc);
  const sides: { name: 'left' | 'right' | 'bottom' | 'top'; axis: 0 | 1; high: boolean }[] = [
    { name: 'left', axis: 0, high: false },
    { name: 'right', axis: 0, high: true },
    { name: 'bottom', axis: 1, high: false },
    { name: 'top', axis: 1, high: true },
  ];
  const pad = 0.5;
  for (const side of sides) {
    const rule = side.axis === 0 ? bc.x : bc.y;
    const outward: Vec = side.axis === 0 ? (side.high ? nrm1 : [-nrm1[0], -nrm1[1]]) : side.high ? nrm2 : [-nrm2[0], -nrm2[1]];
    const [olo, ohi] = side.axis === 0 ? [lo2, hi2] : [lo1, hi1];
    const seg = (c: number, from: number, to: number): [Vec, Vec] =>
      side.axis === 0 ? [toWorld(c, from), toWorld(c, to)] : [toWorld(from, c), toWorld(to, c)];
    if (rule.kind === 'twist') {
      const c = side.axis === 0 ? (side.high ? hi1 + pad : lo1 - pad) : side.high ? hi2 + pad : lo2 - pad;
      const [a, b] = seg(c, olo - pad, ohi + pad);
      marks.push({ kind: 'wrap-line', a, b, outward });
      if (side.high) {
        const mid: Vec = [(a[0] + b[0]) / 2, (a[1] + b[1]) / 2];
        const axisName = side.axis === 0 ? 'x' : 'y';
        marks.push({ kind: 'label', at: mid, text: `${axisName} wraps, θ = ${fmtTheta(rule.theta)}`, outward, along: [b[0] - a[0], b[1] - a[1]] });
      }
    } else if ((side.high ? rule.high : rule.low) === 'pinned') {
      const own = fixed.filter((f) => {
        const v = f.lat[side.axis];
        return side.high ? v > (side.axis === 0 ? hi1 : hi2) + eps : v < (side.axis === 0 ? lo1 : lo2) - eps;
      });
      let c: number;
      if (own.length) c = side.high ? Math.max(...own.map((f) => f.lat[side.axis])) : Math.min(...own.map((f) => f.lat[side.axis]));
      else c = side.axis === 0 ? (side.high ? hi1 + pad : lo1 - pad) : side.high ? hi2 + pad : lo2 - pad;
      const other = side.axis === 0 ? 1 : 0;
      const span = own.map((f) => f.lat[other]);
      const from = Math.min(olo, ...span) - 0.25;
      const to = Math.max(ohi, ...span) + 0.25;
      const [a, b] = seg(c, from, to);
      marks.push({ kind: 'ground-line', a, b, outward });
    }
  }
  return marks;
}

function fmtTheta(t: number): string {
  return String(Number(t.toPrecision(6)));
}

type Rule = { kind: 'twist'; theta: number } | { kind: 'sides'; low: 'free' | 'pinned'; high: 'free' | 'pinned' };

/** Reads the canonical boundary text back into per-axis rules (the text came from formatBoundary). */
function parseRules(bc: string): { x: Rule; y: Rule } {
  // Kept local so the drawing code does not depend on the parser's error handling; the text
  // is always canonical here.
  const free: Rule = { kind: 'sides', low: 'free', high: 'free' };
  const out: { x: Rule; y: Rule } = { x: free, y: free };
  const s = bc.trim();
  if (s === 'free' || s === 'pinned') return { x: { kind: 'sides', low: s, high: s }, y: { kind: 'sides', low: s, high: s } };
  if (s === 'periodic') return { x: { kind: 'twist', theta: 0 }, y: { kind: 'twist', theta: 0 } };
  if (s.startsWith('twist:')) {
    const [t1, t2] = s.slice(6).split(',').map(Number);
    return { x: { kind: 'twist', theta: t1 }, y: { kind: 'twist', theta: t2 } };
  }
  for (const entry of s.split(',')) {
    const [key, value] = entry.split('=');
    const axis = key === 'x' || key === 'left' || key === 'right' ? 'x' : 'y';
    if (key === 'x' || key === 'y') {
      if (value === 'periodic') out[axis] = { kind: 'twist', theta: 0 };
      else if (value.startsWith('twist:')) out[axis] = { kind: 'twist', theta: Number(value.slice(6)) };
      else out[axis] = { kind: 'sides', low: value as 'free', high: value as 'free' };
    } else {
      const cur = out[axis];
      const base = cur.kind === 'sides' ? cur : { kind: 'sides' as const, low: 'free' as const, high: 'free' as const };
      const low = key === 'left' || key === 'bottom';
      out[axis] = { kind: 'sides', low: low ? (value as 'free') : base.low, high: low ? base.high : (value as 'free') };
    }
  }
  return out;
}

// ---------------------------------------------------------------------------------------------
// The view: world → screen

export interface View {
  /** Pixels per world unit. */
  scale: number;
  /** World point at the screen centre. */
  cx: number;
  cy: number;
  width: number;
  height: number;
}

export function fitScale(b: Bounds, width: number, height: number, margin = 36): number {
  const w = Math.max(b.maxX - b.minX, 1e-9);
  const h = Math.max(b.maxY - b.minY, 1e-9);
  return Math.max(1e-9, Math.min((width - 2 * margin) / w, (height - 2 * margin) / h));
}

export function fitCentre(b: Bounds): Vec {
  return [(b.minX + b.maxX) / 2, (b.minY + b.maxY) / 2];
}

export function viewFor(model: SceneModel, width: number, height: number, zoom: number, centre: Vec | null, margin?: number): View {
  const c = centre ?? fitCentre(model.bounds);
  return { scale: fitScale(model.bounds, width, height, margin) * zoom, cx: c[0], cy: c[1], width, height };
}

export function toScreen(v: View, x: number, y: number): Vec {
  return [v.width / 2 + (x - v.cx) * v.scale, v.height / 2 - (y - v.cy) * v.scale];
}

export function toWorldPoint(v: View, sx: number, sy: number): Vec {
  return [v.cx + (sx - v.width / 2) / v.scale, v.cy - (sy - v.height / 2) / v.scale];
}

/** Sizes in pixels that follow the zoom a little but stay legible. */
/**
 * Screen placement of a side label: centre point and rotation (radians, screen y down) such
 * that the text runs along the side and reads left to right.
 */
export function labelPlacement(v: View, mark: Extract<Mark, { kind: 'label' }>, offset = 12): { x: number; y: number; angle: number } {
  const [x, y] = toScreen(v, mark.at[0], mark.at[1]);
  let angle = Math.atan2(-mark.along[1], mark.along[0]);
  if (angle > Math.PI / 2) angle -= Math.PI;
  if (angle <= -Math.PI / 2) angle += Math.PI;
  return { x: x + mark.outward[0] * offset, y: y - mark.outward[1] * offset, angle };
}

export function strokeSizes(model: SceneModel, v: View): { bar: number; joint: number; arrow: number } {
  const px = model.barLength * v.scale;
  return {
    bar: Math.min(3, Math.max(0.8, 0.045 * px)),
    joint: Math.min(6, Math.max(1.4, 0.11 * px)),
    arrow: Math.min(2.2, Math.max(0.8, 0.03 * px)),
  };
}
