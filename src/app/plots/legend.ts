/** Point markers (distinct shapes, so series stay apart in greyscale print) and a legend. */
import { el, num, text } from './svg.js';

export type MarkerShape = 'circle' | 'square' | 'triangle' | 'diamond' | 'cross' | 'ring';

/** One marker centred at (x, y) with half-size r. */
export function markerSvg(shape: MarkerShape, x: number, y: number, r: number, colour: string): string {
  const p = (pts: [number, number][]) => el('polygon', { points: pts.map(([a, b]) => `${num(a)},${num(b)}`).join(' '), fill: colour });
  switch (shape) {
    case 'circle':
      return el('circle', { cx: x, cy: y, r, fill: colour });
    case 'ring':
      return el('circle', { cx: x, cy: y, r, fill: 'white', stroke: colour, 'stroke-width': 1.5 });
    case 'square':
      return el('rect', { x: x - r * 0.9, y: y - r * 0.9, width: 1.8 * r, height: 1.8 * r, fill: colour });
    case 'triangle':
      return p([[x, y - 1.15 * r], [x + r, y + 0.75 * r], [x - r, y + 0.75 * r]]);
    case 'diamond':
      return p([[x, y - 1.25 * r], [x + r, y], [x, y + 1.25 * r], [x - r, y]]);
    case 'cross':
      return el('path', { d: `M${num(x - r)},${num(y - r)}L${num(x + r)},${num(y + r)}M${num(x - r)},${num(y + r)}L${num(x + r)},${num(y - r)}`, stroke: colour, 'stroke-width': 2, fill: 'none' });
  }
}

export interface LegendItem {
  label: string;
  colour: string;
  marker?: MarkerShape | null;
  /** Draw a line sample; a dash array makes it dashed. */
  line?: boolean;
  dash?: string | null;
}

/** Rough width of a text in px (no font metrics outside a browser): 0.58 em per character. */
export function textWidth(s: string, fontSize: number): number {
  return [...s].length * 0.58 * fontSize;
}

/**
 * A legend as a <g> at (x, y): each entry a line sample and/or marker and its text. One entry
 * per row by default; with `maxWidth` the entries flow left to right and wrap at that width.
 */
export function legendSvg(items: LegendItem[], o: { x: number; y: number; fontSize?: number; maxWidth?: number; colour?: string }): { svg: string; width: number; height: number } {
  const fs = o.fontSize ?? 13;
  const rowH = Math.round(fs * 1.45);
  const sample = 26;
  const gap = 18;
  const parts: string[] = [];
  let x = 0;
  let y = 0;
  let width = 0;
  for (const it of items) {
    const w = sample + 6 + textWidth(it.label, fs);
    if (o.maxWidth === undefined) {
      if (parts.length) y += rowH;
    } else if (x > 0 && x + w > o.maxWidth) {
      x = 0;
      y += rowH;
    }
    const cy = y + rowH / 2;
    if (it.line) parts.push(el('line', { x1: x, y1: cy, x2: x + sample, y2: cy, stroke: it.colour, 'stroke-width': 2, 'stroke-dasharray': it.dash ?? null }));
    if (it.marker) parts.push(markerSvg(it.marker, x + sample / 2, cy, 4, it.colour));
    parts.push(text(x + sample + 6, cy, it.label, { dy: '0.35em', fill: o.colour ?? '#2b2f35' }));
    width = Math.max(width, x + w);
    if (o.maxWidth !== undefined) x += w + gap;
  }
  return { svg: el('g', { class: 'legend', transform: `translate(${num(o.x)} ${num(o.y)})`, 'font-size': fs }, parts), width, height: items.length ? y + rowH : 0 };
}
