/**
 * Scales, tick values and axes (d3-scale for the mapping and the linear tick values; log ticks
 * and all labels are ours). Pure: an axis is SVG markup.
 */
import { scaleLinear, scaleLog, type ScaleLinear, type ScaleLogarithmic } from 'd3-scale';
import { el, text, type AttrValue } from './svg.js';

export type AxisKind = 'linear' | 'log';
export type Scale = ScaleLinear<number, number> | ScaleLogarithmic<number, number>;

export interface Tick {
  value: number;
  /** Pixel position along the axis. */
  at: number;
  /** Shown text, or null for an unlabelled (minor) tick. */
  label: string | null;
}

const SUPERSCRIPT: Record<string, string> = { '-': '⁻', '0': '⁰', '1': '¹', '2': '²', '3': '³', '4': '⁴', '5': '⁵', '6': '⁶', '7': '⁷', '8': '⁸', '9': '⁹' };

/** A tick label: plain decimals from 0.001 to 99999, else m×10ⁿ; a typographic minus. */
export function tickLabel(v: number): string {
  if (v === 0) return '0';
  const a = Math.abs(v);
  let s: string;
  if (a >= 1e-3 && a < 1e5) s = String(Number(a.toPrecision(10)));
  else {
    const e = Math.floor(Math.log10(a));
    const m = Number((a / 10 ** e).toPrecision(6));
    const p = String(e).replace(/./g, (c) => SUPERSCRIPT[c] ?? c);
    s = m === 1 ? `10${p}` : `${m}×10${p}`;
  }
  return (v < 0 ? '−' : '') + s;
}

/**
 * A scale over `domain` onto `range` (pixels). Linear domains are widened to round tick values
 * (d3's nice); a log domain must be positive and is widened to whole decades.
 */
export function makeScale(kind: AxisKind, domain: [number, number], range: [number, number]): Scale {
  let [lo, hi] = domain;
  if (kind === 'log') {
    if (!(lo > 0) || !(hi > 0)) throw new RangeError(`a log axis needs a positive domain, not [${lo}, ${hi}]`);
    if (lo === hi) [lo, hi] = [lo / 2, hi * 2];
    return scaleLog().domain([lo, hi]).range(range).nice();
  }
  if (lo === hi) [lo, hi] = [lo - 1, hi + 1];
  return scaleLinear().domain([lo, hi]).range(range).nice();
}

/**
 * Tick values. Linear: d3's round steps (about `count` of them), all labelled. Log: 1…9 × 10ⁿ
 * inside the domain; powers of ten are labelled, and 2 and 5 too when the domain spans at most
 * two decades (every tick when no power of ten falls inside).
 */
export function ticksOf(scale: Scale, kind: AxisKind, count = 6): Tick[] {
  const [d0, d1] = scale.domain() as [number, number];
  const lo = Math.min(d0, d1);
  const hi = Math.max(d0, d1);
  if (kind === 'linear') {
    return (scale as ScaleLinear<number, number>).ticks(count).map((v) => ({ value: v, at: scale(v), label: tickLabel(Number(v.toPrecision(12))) }));
  }
  const e0 = Math.floor(Math.log10(lo));
  const e1 = Math.ceil(Math.log10(hi));
  const inside = (v: number) => v >= lo * (1 - 1e-12) && v <= hi * (1 + 1e-12);
  const raw: { value: number; m: number }[] = [];
  for (let e = e0; e <= e1; e++)
    for (let m = 1; m <= 9; m++) {
      // m·10^e written so that 10^−3 is 0.001 exactly, not 0.0010000000000000002
      const v = e >= 0 ? m * 10 ** e : m / 10 ** -e;
      if (inside(v)) raw.push({ value: v, m });
    }
  const decades = Math.log10(hi / lo);
  const anyPower = raw.some((t) => t.m === 1);
  const labelled = (m: number) => !anyPower || m === 1 || (decades <= 2 && (m === 2 || m === 5));
  return raw.map(({ value, m }) => ({ value, at: scale(value), label: labelled(m) ? tickLabel(value) : null }));
}

export interface AxisOptions {
  orient: 'bottom' | 'left' | 'right';
  /** Pixel position of the axis line across it (y for a bottom axis, x for a left or right one). */
  at: number;
  label?: string;
  /** Distance of the axis title from the axis line (px). */
  labelOffset?: number;
  /** Grid lines across the plot, this long (px), towards the plot; 0 for none. */
  grid?: number;
  fontSize?: number;
  colour?: string;
}

/** An axis as a <g>: the line, ticks (minor ones shorter), tick labels and the axis title. */
export function axisSvg(scale: Scale, ticks: Tick[], o: AxisOptions): string {
  const colour = o.colour ?? '#2b2f35';
  const fs = o.fontSize ?? 13;
  const [r0, r1] = scale.range() as [number, number];
  const out: string[] = [];
  const horizontal = o.orient === 'bottom';
  const dir = o.orient === 'left' ? -1 : 1;
  const line = (x1: number, y1: number, x2: number, y2: number, attrs: Record<string, AttrValue> = {}) => el('line', { x1, y1, x2, y2, ...attrs });
  const label = (x: number, y: number, s: string, attrs: Record<string, AttrValue>) => text(x, y, s, { fill: colour, stroke: 'none', ...attrs });
  const grid = { class: 'grid', stroke: '#dcd8cf' };
  if (o.grid)
    for (const t of ticks)
      if (t.label !== null) out.push(horizontal ? line(t.at, o.at, t.at, o.at - o.grid, grid) : line(o.at, t.at, o.at - dir * o.grid, t.at, grid));
  out.push(horizontal ? line(r0, o.at, r1, o.at) : line(o.at, r0, o.at, r1));
  for (const t of ticks) {
    const len = t.label === null ? 3 : 6;
    if (horizontal) {
      out.push(line(t.at, o.at, t.at, o.at + len));
      if (t.label !== null) out.push(label(t.at, o.at + len + fs, t.label, { 'text-anchor': 'middle' }));
    } else {
      out.push(line(o.at, t.at, o.at + dir * len, t.at));
      if (t.label !== null) out.push(label(o.at + dir * (len + 3), t.at, t.label, { 'text-anchor': dir < 0 ? 'end' : 'start', dy: '0.35em' }));
    }
  }
  if (o.label) {
    const off = o.labelOffset ?? (horizontal ? 2.6 * fs + 6 : 3.6 * fs);
    const mid = (r0 + r1) / 2;
    if (horizontal) out.push(label(mid, o.at + off, o.label, { 'text-anchor': 'middle', class: 'axis-title' }));
    else {
      const x = o.at + dir * off;
      out.push(label(x, mid, o.label, { 'text-anchor': 'middle', transform: `rotate(${dir < 0 ? -90 : 90} ${Math.round(x * 100) / 100} ${Math.round(mid * 100) / 100})`, class: 'axis-title' }));
    }
  }
  return el('g', { class: `axis axis-${o.orient}`, stroke: colour, fill: 'none', 'font-size': fs }, out);
}
