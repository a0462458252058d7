/**
 * The phase map as a figure: the raster of log₁₀(σ/σ_max) over the torus of Bloch phases (in
 * turns), axes, a colour bar, and the zero set on top (lines, curves, points with their
 * charges, near-zeros). Pure: markup, pixels and numbers; the page puts them on screen.
 *
 * Grid sample (i1, i2) is the phase (i1, i2)/grid and is drawn as the square centred on it; the
 * raster has grid + 1 columns and rows (the first repeated at the end, the map is periodic) and
 * is clipped to [0, 1]².
 */
import { scaleLinear } from 'd3-scale';
import type { PhaseMapData } from '../../worker/protocol.js';
import { axisSvg, tickLabel, type Tick } from './axis.js';
import { legendSvg, markerSvg, textWidth, type LegendItem } from './legend.js';
import { el, num, svgDocument, text } from './svg.js';

/** Sequential map of our own, dark (small σ, near the zero set) to pale; lightness rises monotonically. */
export const PHASE_STOPS = ['#161a33', '#2c3570', '#30609a', '#2f8fa6', '#5fb8a3', '#b4da9c', '#f5f2c8'];
const ramp = scaleLinear<string>()
  .domain(PHASE_STOPS.map((_, i) => i / (PHASE_STOPS.length - 1)))
  .range(PHASE_STOPS)
  .clamp(true);

/** RGB of t ∈ [0, 1] on the map's colour ramp. */
export function phaseColour(t: number): [number, number, number] {
  const m = /rgb\((\d+),\s*(\d+),\s*(\d+)\)/.exec(ramp(Number.isFinite(t) ? t : 0));
  return m ? [Number(m[1]), Number(m[2]), Number(m[3])] : [0, 0, 0];
}

/** The zero-set colour: bright against the dark end of the ramp, where zeros sit. */
export const ZERO_INK = '#f2892a';

/** log₁₀(σ/σ_max) at each grid point (−Infinity where σ = 0). */
export function logValues(pm: Pick<PhaseMapData, 'sigma1' | 'sigmaMax'>): Float64Array {
  const s = pm.sigmaMax > 0 ? pm.sigmaMax : 1;
  return Float64Array.from(pm.sigma1, (v) => (v > 0 ? Math.log10(v / s) : -Infinity));
}

/**
 * The colour range in whole decades: the top is the largest value rounded up (at most 0), the
 * bottom the 1st percentile rounded down, not below the rank tolerance; at least one decade.
 * Values below the bottom take the darkest colour (the colour bar says "≤").
 */
export function colourRange(pm: Pick<PhaseMapData, 'sigma1' | 'sigmaMax' | 'tolerance'>): { lo: number; hi: number; clipped: boolean } {
  const v = [...logValues(pm)].sort((a, b) => a - b);
  const floor = Math.floor(Math.log10(Math.max(pm.tolerance.relative, 1e-16)));
  const finite = v.filter(Number.isFinite);
  const hi = finite.length ? Math.min(0, Math.ceil(finite[finite.length - 1] - 1e-9)) + 0 : 0;
  const q = v[Math.min(v.length - 1, Math.floor(0.01 * v.length))] ?? floor;
  let lo = Math.max(floor, Number.isFinite(q) ? Math.floor(q + 1e-9) : floor);
  if (hi - lo < 1) lo = hi - 1;
  return { lo, hi, clipped: v.length > 0 && v[0] < lo };
}

/** The raster: (grid + 1)² RGBA pixels, row 0 at θ2 = 1 (top), column 0 at θ1 = 0. */
export function rasterPixels(pm: Pick<PhaseMapData, 'grid' | 'sigma1' | 'sigmaMax' | 'tolerance'>, range = colourRange(pm)): { size: number; data: Uint8ClampedArray } {
  const g = pm.grid;
  const n = g + 1;
  const logs = logValues(pm);
  const data = new Uint8ClampedArray(n * n * 4);
  for (let r = 0; r < n; r++)
    for (let c = 0; c < n; c++) {
      const i1 = c % g;
      const i2 = (g - r) % g;
      const v = logs[i2 * g + i1];
      const t = (Math.max(range.lo, Math.min(range.hi, Number.isFinite(v) ? v : range.lo)) - range.lo) / (range.hi - range.lo);
      const [R, G, B] = phaseColour(t);
      const k = (r * n + c) * 4;
      data[k] = R;
      data[k + 1] = G;
      data[k + 2] = B;
      data[k + 3] = 255;
    }
  return { size: n, data };
}

/** Where the raster goes inside a plot of side P px: its offset from the plot's corner and its side. */
export function rasterPlacement(grid: number, P: number): { offset: number; side: number } {
  return { offset: -P / (2 * grid), side: (P * (grid + 1)) / grid };
}

/** The nearest grid sample to θ (wrapping) and its values. */
export function readout(pm: Pick<PhaseMapData, 'grid' | 'sigma1' | 'sigmaMax' | 'kernel'>, theta: [number, number]): { theta: [number, number]; sigma: number; log10: number; kernel: number } {
  const g = pm.grid;
  const i = theta.map((t) => (((Math.round(t * g) % g) + g) % g)) as [number, number];
  const k = i[1] * g + i[0];
  const sigma = pm.sigma1[k];
  return { theta: [i[0] / g, i[1] / g], sigma, log10: sigma > 0 ? Math.log10(sigma / (pm.sigmaMax || 1)) : -Infinity, kernel: pm.kernel[k] };
}

/** θ snapped to the nearest phases k/N of an N1×N2 supercell (k taken mod N). */
export function snapPhase(theta: [number, number], cells: [number, number]): { theta: [number, number]; k: [number, number] } {
  const k = theta.map((t, a) => (((Math.round(t * cells[a]) % cells[a]) + cells[a]) % cells[a])) as [number, number];
  return { theta: [k[0] / cells[0], k[1] / cells[1]], k };
}

/**
 * The closed line p·θ1 + q·θ2 ≡ c (mod 1) as segments inside the unit square: one segment per
 * integer m with p·θ1 + q·θ2 = c + m crossing it. Segments of zero length are left out.
 */
export function zeroLineSegments(p: number, q: number, c: number): [[number, number], [number, number]][] {
  const corners = [0, p, q, p + q];
  const out: [[number, number], [number, number]][] = [];
  for (let m = Math.floor(Math.min(...corners) - c); m <= Math.ceil(Math.max(...corners) - c); m++) {
    const d = c + m;
    // where p·x + q·y = d meets the four sides of the square
    const hits: [number, number][] = [];
    if (p !== 0) for (const y of [0, 1]) hits.push([(d - q * y) / p, y]);
    if (q !== 0) for (const x of [0, 1]) hits.push([x, (d - p * x) / q]);
    const inside = hits.filter(([x, y]) => x >= -1e-12 && x <= 1 + 1e-12 && y >= -1e-12 && y <= 1 + 1e-12);
    let best: [[number, number], [number, number]] | null = null;
    let len = 1e-12;
    for (const a of inside)
      for (const b of inside)
        if (Math.hypot(b[0] - a[0], b[1] - a[1]) > len) {
          len = Math.hypot(b[0] - a[0], b[1] - a[1]);
          best = [a, b];
        }
    // the closed line once: a segment on the top or right side repeats the bottom or left one (1 ≡ 0)
    const onFarSide = (k: 0 | 1) => best !== null && best[0][k] >= 1 - 1e-12 && best[1][k] >= 1 - 1e-12;
    if (best && !onFarSide(0) && !onFarSide(1)) out.push(best);
  }
  return out;
}

/** A polyline on the torus split where it jumps across 1 ≡ 0. */
export function splitAtWrap(points: [number, number][]): [number, number][][] {
  const parts: [number, number][][] = [];
  let cur: [number, number][] = [];
  for (const p of points) {
    const prev = cur[cur.length - 1];
    if (prev && (Math.abs(p[0] - prev[0]) > 0.5 || Math.abs(p[1] - prev[1]) > 0.5)) {
      parts.push(cur);
      cur = [];
    }
    cur.push(p);
  }
  if (cur.length) parts.push(cur);
  return parts;
}

/** σ with the 1-based index of the detection value (generic kernel k0 + 1) as a subscript: σ₁, σ₂, … */
export function sigmaName(k0: number): string {
  return `σ${String(k0 + 1).replace(/./g, (c) => '₀₁₂₃₄₅₆₇₈₉'[Number(c)])}`;
}

/** "+1", "−1", "0", or "?" when the charge is undefined. */
export function chargeLabel(charge: number | null): string {
  if (charge === null) return '?';
  return charge > 0 ? `+${charge}` : charge < 0 ? `−${-charge}` : '0';
}

export interface PhaseMapLayout {
  width: number;
  height: number;
  /** The square plot: left, top, side. */
  left: number;
  top: number;
  side: number;
  bar: { x: number; y: number; width: number; height: number };
}

export function phaseMapLayout(side: number): PhaseMapLayout {
  const left = 64;
  const top = 36;
  const bar = { x: left + side + 20, y: top, width: 16, height: side };
  // below the plot: the θ₁ axis, then two rows of legend
  return { width: bar.x + bar.width + 92, height: top + side + 98, left, top, side, bar };
}

const QUARTERS: number[] = [0, 0.25, 0.5, 0.75, 1];

function turnTicks(at: (t: number) => number): Tick[] {
  const ticks: Tick[] = QUARTERS.map((t) => ({ value: t, at: at(t), label: tickLabel(t) }));
  for (let k = 1; k < 8; k += 2) ticks.push({ value: k / 8, at: at(k / 8), label: null });
  return ticks;
}

export interface PhaseMapFigureOptions {
  side: number;
  title: string;
  /** The raster as an image URL (PNG data URL) to embed, or null to leave the plot clear (the page draws it below). */
  image: string | null;
  background: string | null;
  /** Supercell cells: draw the phases k/N a click snaps to. */
  allowed?: [number, number] | null;
  idPrefix: string;
  fontSize?: number;
}

/** The figure's SVG elements (without the <svg> root) and its layout. */
export function phaseMapBody(pm: PhaseMapData, o: PhaseMapFigureOptions): { body: string[]; layout: PhaseMapLayout; range: ReturnType<typeof colourRange> } {
  const L = phaseMapLayout(o.side);
  const fs = o.fontSize ?? 13;
  const P = L.side;
  const X = (t: number) => L.left + t * P;
  const Y = (t: number) => L.top + (1 - t) * P;
  const range = colourRange(pm);
  const clip = `${o.idPrefix}-clip`;
  const body: string[] = [];
  body.push(el('defs', {}, [el('clipPath', { id: clip }, el('rect', { x: L.left, y: L.top, width: P, height: P })), colourBarGradient(`${o.idPrefix}-ramp`)]));
  body.push(text(L.left, fs + 8, o.title, { 'font-size': fs + 2, 'font-weight': 600, fill: '#2b2f35', class: 'plot-title' }));
  if (o.image) {
    const r = rasterPlacement(pm.grid, P);
    body.push(el('g', { 'clip-path': `url(#${clip})` }, el('image', { x: L.left + r.offset, y: L.top + r.offset, width: r.side, height: r.side, href: o.image, preserveAspectRatio: 'none', style: 'image-rendering:pixelated' })));
  }
  // the zero set, clipped to the square
  const z: string[] = [];
  for (const l of pm.lines)
    for (const [a, b] of zeroLineSegments(l.p, l.q, l.c)) z.push(el('line', { x1: X(a[0]), y1: Y(a[1]), x2: X(b[0]), y2: Y(b[1]), stroke: ZERO_INK, 'stroke-width': 2.5, class: 'zero-line' }));
  for (const c of pm.zeroCurves ?? [])
    for (const part of splitAtWrap(c.points))
      z.push(el('polyline', { points: part.map(([a, b]) => `${num(X(a))},${num(Y(b))}`).join(' '), fill: 'none', stroke: ZERO_INK, 'stroke-width': 2.5, 'stroke-dasharray': '6 3', class: 'zero-curve' }));
  if (o.allowed && o.allowed[0] * o.allowed[1] <= 2500)
    for (let k2 = 0; k2 < o.allowed[1]; k2++)
      for (let k1 = 0; k1 < o.allowed[0]; k1++) z.push(el('circle', { cx: X(k1 / o.allowed[0]), cy: Y(k2 / o.allowed[1]), r: 2, fill: '#2b2f35', 'fill-opacity': 0.7, stroke: '#ffffff', 'stroke-width': 0.8, class: 'allowed' }));
  for (const n of pm.nearZeros ?? []) z.push(markerSvg('ring', X(n.theta[0]), Y(n.theta[1]), 4.5, ZERO_INK));
  for (const p of pm.zeroPoints ?? []) {
    z.push(el('circle', { cx: X(p.theta[0]), cy: Y(p.theta[1]), r: 4.5, fill: ZERO_INK, stroke: '#ffffff', 'stroke-width': 1.2, class: 'zero-point' }));
    // the charge beside its point, kept inside the square
    const tx = Math.min(X(p.theta[0]) + 7, L.left + P - textWidth(chargeLabel(p.charge), fs) - 2);
    const ty = Math.max(Y(p.theta[1]) - 7, L.top + fs);
    z.push(text(tx, ty, chargeLabel(p.charge), { 'font-size': fs, 'font-weight': 700, fill: '#ffffff', stroke: '#161a33', 'stroke-width': 3, 'paint-order': 'stroke', class: 'charge' }));
  }
  body.push(el('g', { 'clip-path': `url(#${clip})`, class: 'zero-set' }, z));
  body.push(el('rect', { x: L.left, y: L.top, width: P, height: P, fill: 'none', stroke: '#2b2f35' }));
  const sx = scaleLinear().domain([0, 1]).range([X(0), X(1)]);
  const sy = scaleLinear().domain([0, 1]).range([Y(0), Y(1)]);
  body.push(axisSvg(sx, turnTicks(X), { orient: 'bottom', at: L.top + P, label: 'θ₁ (turns)', fontSize: fs }));
  body.push(axisSvg(sy, turnTicks(Y), { orient: 'left', at: L.left, label: 'θ₂ (turns)', fontSize: fs, labelOffset: 3.4 * fs }));
  body.push(colourBar(range, L.bar, pm.genericKernel, `${o.idPrefix}-ramp`, fs));
  const items: LegendItem[] = [
    { label: 'zero line', colour: ZERO_INK, line: true },
    { label: 'zero curve', colour: ZERO_INK, line: true, dash: '6 3' },
    { label: 'zero (charge)', colour: ZERO_INK, marker: 'circle' },
    { label: 'near zero', colour: ZERO_INK, marker: 'ring' },
  ];
  body.push(legendSvg(items, { x: L.left - 40, y: L.top + P + 2.6 * fs + 10, fontSize: fs, maxWidth: L.width - L.left + 30 }).svg);
  return { body, layout: L, range };
}

function colourBarGradient(id: string): string {
  return el(
    'linearGradient',
    { id, x1: 0, x2: 0, y1: 1, y2: 0 },
    PHASE_STOPS.map((c, i) => el('stop', { offset: num(i / (PHASE_STOPS.length - 1)), 'stop-color': c })),
  );
}

/** The colour bar: the ramp bottom (lo) to top (hi), a tick per decade (fewer when many), its title. */
function colourBar(range: { lo: number; hi: number; clipped: boolean }, bar: PhaseMapLayout['bar'], k0: number, gradient: string, fs: number): string {
  const y = scaleLinear().domain([range.lo, range.hi]).range([bar.y + bar.height, bar.y]);
  const span = range.hi - range.lo;
  const step = span <= 8 ? 1 : span <= 16 ? 2 : 4;
  const ticks: Tick[] = [];
  for (let v = range.hi; v >= range.lo; v -= step) ticks.push({ value: v, at: y(v), label: tickLabel(v) });
  if (range.clipped) {
    // values below the range take its darkest colour: the bottom tick says so
    if (ticks[ticks.length - 1].value !== range.lo) ticks.push({ value: range.lo, at: y(range.lo), label: null });
    const last = ticks[ticks.length - 1];
    last.label = `≤ ${tickLabel(range.lo)}`;
    const prev = ticks[ticks.length - 2];
    if (prev && Math.abs(prev.at - last.at) < 1.3 * fs) prev.label = null;
  }
  const what = sigmaName(k0);
  return el('g', { class: 'colour-bar', 'data-testid': 'phasemap-colorbar', 'data-lo': range.lo, 'data-hi': range.hi }, [
    el('rect', { x: bar.x, y: bar.y, width: bar.width, height: bar.height, fill: `url(#${gradient})`, stroke: '#2b2f35' }),
    axisSvg(y, ticks, { orient: 'right', at: bar.x + bar.width, label: `log₁₀(${what}/σ_max)`, fontSize: fs, labelOffset: 3.9 * fs }),
  ]);
}

/** The whole figure as an SVG document. */
export function phaseMapFigure(pm: PhaseMapData, o: PhaseMapFigureOptions & { prolog: boolean; attrs?: Record<string, string> }): string {
  const { body, layout } = phaseMapBody(pm, o);
  return svgDocument({
    width: layout.width,
    height: layout.height,
    title: o.title,
    description: `Phase map made by shimmy: log10 of sigma_${pm.genericKernel + 1}/sigma_max of the unit-cell symbol over the torus of Bloch phases (${pm.grid}×${pm.grid} grid), with its zero set.`,
    background: o.background,
    body,
    prolog: o.prolog,
    attrs: o.attrs,
  });
}

