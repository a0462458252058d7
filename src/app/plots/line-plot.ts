/**
 * A 2D plot of point series with curves through them (d3-shape draws the paths): title, axes
 * (linear or log), legend below the plot (wrapping to the width). Returns SVG markup and the scales used, so a test can
 * check a path against the scale and the page can map the pointer back to data.
 */
import { line } from 'd3-shape';
import { axisSvg, makeScale, ticksOf, type AxisKind, type Scale } from './axis.js';
import { legendSvg, markerSvg, type MarkerShape } from './legend.js';
import { el, svgDocument, text } from './svg.js';

export interface PlotSeries {
  key: string;
  label: string;
  colour: string;
  marker: MarkerShape;
  /** Data points, drawn as markers. */
  points: [number, number][];
  /** Curves, one path each (a fit, or the branches of a multi-valued quantity). */
  curves: [number, number][][];
  dashed?: boolean;
}

export interface PlotAxis {
  label: string;
  kind: AxisKind;
  /** Fixed domain; by default the range of the points (y from 0 on a linear axis). */
  domain?: [number, number];
}

export interface LinePlotSpec {
  width: number;
  height: number;
  title: string;
  subtitle?: string;
  x: PlotAxis;
  y: PlotAxis;
  series: PlotSeries[];
  legend: boolean;
  /** Prefix of element ids (a clip path), unique in the page. */
  idPrefix: string;
  /** Shown where the plot is empty (e.g. no positive values on a log axis). */
  emptyNote?: string;
}

export interface LinePlot {
  body: string[];
  x: Scale;
  y: Scale;
  frame: { left: number; top: number; width: number; height: number };
}

export const PLOT_INK = '#2b2f35';
const FS = 13;

/** Whether a value can be placed on an axis of this kind. */
export function plottable(v: number, kind: AxisKind): boolean {
  return Number.isFinite(v) && (kind === 'linear' || v > 0);
}

function extent(values: number[], kind: AxisKind, fromZero: boolean): [number, number] {
  const ok = values.filter((v) => plottable(v, kind));
  if (!ok.length) return kind === 'log' ? [1, 10] : [0, 1];
  let lo = Math.min(...ok);
  const hi = Math.max(...ok);
  if (fromZero && kind === 'linear') lo = Math.min(0, lo);
  return [lo, hi];
}

export function linePlot(spec: LinePlotSpec): LinePlot {
  const top = spec.subtitle ? 2 * FS + 26 : FS + 22;
  const left = 68;
  const bottom = 52;
  const right = 20;
  const items = spec.series.map((s) => ({ label: s.label, colour: s.colour, marker: s.marker, line: s.curves.length > 0, dash: s.dashed ? '5 4' : null }));
  const legendWidth = spec.width - left - right + 40;
  const legendHeight = spec.legend ? legendSvg(items, { x: 0, y: 0, fontSize: FS, maxWidth: legendWidth }).height + 8 : 0;
  const frame = { left, top, width: Math.max(60, spec.width - left - right), height: Math.max(60, spec.height - top - bottom - legendHeight) };
  const xs = spec.series.flatMap((s) => s.points.map((p) => p[0]));
  const ys = spec.series.flatMap((s) => s.points.map((p) => p[1]));
  const x = makeScale(spec.x.kind, spec.x.domain ?? extent(xs, spec.x.kind, false), [frame.left, frame.left + frame.width]);
  const y = makeScale(spec.y.kind, spec.y.domain ?? extent(ys, spec.y.kind, true), [frame.top + frame.height, frame.top]);
  const clip = `${spec.idPrefix}-clip`;
  const body: string[] = [];
  body.push(el('defs', {}, el('clipPath', { id: clip }, el('rect', { x: frame.left, y: frame.top, width: frame.width, height: frame.height }))));
  body.push(text(12, FS + 6, spec.title, { 'font-size': FS + 2, 'font-weight': 600, fill: PLOT_INK, class: 'plot-title' }));
  if (spec.subtitle) body.push(text(12, 2 * FS + 14, spec.subtitle, { 'font-size': FS, fill: '#5a6068', class: 'plot-subtitle' }));
  body.push(axisSvg(x, ticksOf(x, spec.x.kind, 8), { orient: 'bottom', at: frame.top + frame.height, label: spec.x.label, grid: frame.height }));
  body.push(axisSvg(y, ticksOf(y, spec.y.kind, 6), { orient: 'left', at: frame.left, label: spec.y.label, grid: frame.width }));
  body.push(el('rect', { x: frame.left, y: frame.top, width: frame.width, height: frame.height, fill: 'none', stroke: PLOT_INK, 'stroke-width': 1 }));
  const ok = (p: [number, number]) => plottable(p[0], spec.x.kind) && plottable(p[1], spec.y.kind);
  const path = line<[number, number]>()
    .defined(ok)
    .x((p) => x(p[0]))
    .y((p) => y(p[1]));
  const layers: string[] = [];
  let drawn = 0;
  for (const s of spec.series) {
    const g: string[] = [];
    for (const c of s.curves) g.push(el('path', { d: path(c) ?? '', fill: 'none', stroke: s.colour, 'stroke-width': 2, 'stroke-dasharray': s.dashed ? '5 4' : null, 'data-series': s.key, class: 'series-curve' }));
    for (const p of s.points)
      if (ok(p)) {
        g.push(markerSvg(s.marker, x(p[0]), y(p[1]), 4, s.colour));
        drawn++;
      }
    layers.push(el('g', { class: 'series', 'data-series': s.key }, g));
  }
  body.push(el('g', { 'clip-path': `url(#${clip})` }, layers));
  if (!drawn && spec.emptyNote) body.push(text(frame.left + frame.width / 2, frame.top + frame.height / 2, spec.emptyNote, { 'text-anchor': 'middle', fill: '#5a6068', 'font-size': FS }));
  if (spec.legend) body.push(legendSvg(items, { x: left - 40, y: frame.top + frame.height + bottom, fontSize: FS, maxWidth: legendWidth }).svg);
  return { body, x, y, frame };
}

/** The plot as a whole SVG document. */
export function linePlotDocument(spec: LinePlotSpec, o: { background: string | null; prolog: boolean; description?: string; attrs?: Record<string, string> }): { svg: string; plot: LinePlot } {
  const plot = linePlot(spec);
  const svg = svgDocument({ width: spec.width, height: spec.height, title: spec.title, description: o.description, background: o.background, body: plot.body, prolog: o.prolog, attrs: o.attrs });
  return { svg, plot };
}
