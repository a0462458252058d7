/**
 * Everything that defines what the app shows: the framework, the supercell settings, the
 * view, and the GIF and figure export settings. The same state is written to a state file
 * (JSON, here) and to the URL hash (state-link.ts), and read back from both; reading checks every
 * field and reports problems by name (InputError), never repairs.
 */
import { InputError, type Problem } from '../errors.js';
import { GALLERY, galleryEntry, gallerySpec, parseGallerySpec } from '../framework/gallery.js';
import type { Framework } from '../framework/types.js';
import { checkFramework, parseFramework } from '../framework/validate.js';
import { formatBoundary, parseBoundary, type Boundary } from '../supercell/boundary.js';
import { MAX_CELLS_PER_AXIS } from '../supercell/supercell.js';
import { SOLVER_CHOICES, type SolverChoice } from '../flex/solver.js';
import type { ArrowMode } from './stage/scene.js';
import type { FigureSize } from './export/compose.js';
import type { AnalyseJob } from '../worker/protocol.js';

export type FrameworkSource =
  | { kind: 'gallery'; name: string; params: Record<string, number> }
  | { kind: 'file'; framework: Framework; fileName: string };

export interface ViewState {
  /** What the stage shows: a flex (animated) or a self-stress (bar colours). */
  show: 'flex' | 'stress';
  /** Index in the displayed flex list. */
  flex: number;
  stress: number;
  /** Largest joint displacement, in median bar lengths. */
  amplitude: number;
  /** Animation periods per second. */
  speed: number;
  playing: boolean;
  /** Phase φ/2π in [0, 1). */
  phase: number;
  arrows: ArrowMode;
  /** Colour joints by amplitude. */
  colour: boolean;
  /** Draw the rest shape faintly under the moving one. */
  rest: boolean;
  /** 1 = the whole supercell fits the stage. */
  zoom: number;
  /** World point at the stage centre; null = centred. */
  centre: [number, number] | null;
}

export interface GifState {
  frames: number;
  /** Width in pixels (height follows the stage's aspect). */
  width: number;
  /** Seconds per animation period in the GIF. */
  period: number;
}

/** The Export panel's figure settings (PNG, SVG; the GIF takes the aspect from width / height). */
export interface FigureState extends FigureSize {
  /** No background in PNG and SVG. */
  transparent: boolean;
  /** Print the caption (setup and phase) under the drawing. */
  caption: boolean;
  /** Add the short caution about first-order motions to the caption. */
  caution: boolean;
  /** Arrow lengths and line widths relative to the stage's. */
  arrowScale: number;
  lineScale: number;
}

/** Everything a run needs (the worker's job, with the framework as the user gave it) plus the view. */
export interface AppState extends Omit<AnalyseJob, 'framework'> {
  framework: FrameworkSource;
  view: ViewState;
  gif: GifState;
  figure: FigureState;
}

export const STATE_FORMAT = 'shimmy app state';
/**
 * Still 1 with the `figure` part: a file without it (written before) reads as before, with the
 * default figure, so every version-1 file stays valid and nothing needs telling apart.
 */
export const STATE_VERSION = 1;

/** The demo the app opens on (a gallery lattice; nothing invented about the numbers). */
export function defaultState(): AppState {
  return {
    framework: { kind: 'gallery', name: 'twisted-kagome', params: { twist: 15 } },
    cells: [6, 6],
    bc: 'free',
    tolerance: 1e-9,
    solver: 'auto',
    window: 3,
    strip: 2,
    stresses: true,
    classify: true,
    view: defaultView(),
    gif: { frames: 24, width: 640, period: 2 },
    figure: defaultFigure(),
  };
}

export function defaultFigure(): FigureState {
  return { width: 1200, height: 900, unit: 'px', dpi: 192, transparent: false, caption: true, caution: false, arrowScale: 1, lineScale: 1 };
}

export function defaultView(): ViewState {
  return { show: 'flex', flex: 0, stress: 0, amplitude: 0.3, speed: 0.5, playing: true, phase: 0, arrows: 'none', colour: true, rest: false, zoom: 1, centre: null };
}

export function cloneState(s: AppState): AppState {
  return JSON.parse(JSON.stringify(s)) as AppState;
}

export function frameworkOf(src: FrameworkSource): Framework {
  return src.kind === 'gallery' ? galleryEntry(src.name).build(src.params) : src.framework;
}

/** `gallery:NAME?k=v` or the framework as compact JSON. */
export function frameworkSpec(src: FrameworkSource): string {
  return src.kind === 'gallery' ? gallerySpec(src.name, src.params) : JSON.stringify(src.framework);
}

export function frameworkTitle(src: FrameworkSource): string {
  if (src.kind === 'file') return src.framework.name ?? src.fileName;
  const e = GALLERY.find((g) => g.name === src.name);
  const ps = e?.params.map((p) => `${p.key} ${src.params[p.key] ?? p.default}${p.unit ?? ''}`).join(', ');
  return `${e?.title ?? src.name}${ps ? ` (${ps})` : ''}`;
}

// ---------------------------------------------------------------------------------------------
// Field checks

export interface Range {
  min: number;
  max: number;
  integer?: boolean;
  /** max is excluded */
  open?: boolean;
}

export const LIMITS = {
  cells: { min: 1, max: MAX_CELLS_PER_AXIS, integer: true },
  tolerance: { min: 0, max: 1, open: true },
  window: { min: 1, max: 50, integer: true },
  strip: { min: 1, max: 50, integer: true },
  flex: { min: 0, max: 1e6, integer: true },
  amplitude: { min: 0, max: 5 },
  speed: { min: 0.05, max: 5 },
  phase: { min: 0, max: 1, open: true },
  zoom: { min: 0.02, max: 200 },
  gifFrames: { min: 2, max: 240, integer: true },
  gifWidth: { min: 64, max: 2048, integer: true },
  gifPeriod: { min: 0.2, max: 30 },
  /** Figure width and height by unit (the export also checks the pixel count, FIGURE_LIMITS.maxPixels). */
  figurePx: { min: 64, max: 8000 },
  figureMm: { min: 10, max: 1000 },
  figureDpi: { min: 36, max: 1200 },
  /** Arrow and line scales of a figure. */
  figureScale: { min: 0.1, max: 10 },
} satisfies Record<string, Range>;

export const FIGURE_UNITS = ['px', 'mm'] as const;

/** The allowed figure width and height in a unit. */
export function figureSizeRange(unit: FigureSize['unit']): Range {
  return unit === 'mm' ? LIMITS.figureMm : LIMITS.figurePx;
}

export function rangeText(r: Range): string {
  return `${r.integer ? 'a whole number' : 'a number'} from ${r.min} ${r.open ? 'up to (not including)' : 'to'} ${r.max}`;
}

export function checkNumber(v: unknown, where: string, r: Range, problems: Problem[]): number | undefined {
  if (typeof v !== 'number' || !Number.isFinite(v)) {
    problems.push({ where, what: `expected a number, got ${describe(v)}`, fix: `give ${rangeText(r)}` });
    return undefined;
  }
  if ((r.integer && !Number.isInteger(v)) || v < r.min || (r.open ? v >= r.max : v > r.max)) {
    problems.push({ where, what: `${v} is outside the allowed values`, fix: `give ${rangeText(r)}` });
    return undefined;
  }
  return v;
}

/** A figure width or height check whose fix names the unit the range is in. */
export function inUnit<T>(unit: FigureSize['unit'], problems: Problem[], check: (p: Problem[]) => T | undefined): T | undefined {
  const found: Problem[] = [];
  const v = check(found);
  problems.push(...found.map((p) => ({ ...p, fix: `${p.fix} ${unit === 'mm' ? 'millimetres' : 'pixels'} (the unit given)` })));
  return v;
}

export function describe(v: unknown): string {
  if (v === undefined) return 'nothing';
  if (v === null) return 'null';
  if (typeof v === 'string') return `the text ${JSON.stringify(v.length > 40 ? v.slice(0, 40) + '…' : v)}`;
  if (Array.isArray(v)) return 'a list';
  return typeof v === 'object' ? 'an object' : String(v);
}

export const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

export function numberText(text: string, where: string, r: Range, problems: Problem[]): number | undefined {
  if (!NUMBER.test(text.trim())) {
    problems.push({ where, what: `"${text}" is not a number`, fix: `give ${rangeText(r)}` });
    return undefined;
  }
  return checkNumber(Number(text), where, r, problems);
}

export function boolText(text: string, where: string, problems: Problem[]): boolean | undefined {
  if (text === '1' || text === 'true') return true;
  if (text === '0' || text === 'false') return false;
  problems.push({ where, what: `"${text}" is not on or off`, fix: 'write 1 (on) or 0 (off)' });
  return undefined;
}

export function cellsText(text: string, where: string, problems: Problem[]): [number, number] | undefined {
  const m = /^\s*(\d+)\s*[x×]\s*(\d+)\s*$/.exec(text);
  if (!m) {
    problems.push({ where, what: `"${text}" is not a supercell size`, fix: 'write N1xN2, e.g. 6x6' });
    return undefined;
  }
  const a = checkNumber(Number(m[1]), where, LIMITS.cells, problems);
  const b = checkNumber(Number(m[2]), where, LIMITS.cells, problems);
  return a !== undefined && b !== undefined ? [a, b] : undefined;
}

/** The app's boundary text: the `--bc` canonical form, with both axes periodic written `periodic`. */
export function boundaryText(b: Boundary): string {
  return b.x.kind === 'twist' && b.y.kind === 'twist' && b.x.theta === 0 && b.y.theta === 0 ? 'periodic' : formatBoundary(b);
}

/** boundaryText of a `--bc` string, or the string itself when it does not parse. */
export function displayBoundary(text: string): string {
  try {
    return boundaryText(parseBoundary(text));
  } catch {
    return text;
  }
}

export function bcText(text: string, where: string, problems: Problem[]): string | undefined {
  try {
    return boundaryText(parseBoundary(text, where));
  } catch (e) {
    if (e instanceof InputError) problems.push(...e.problems);
    else throw e;
    return undefined;
  }
}

export function frameworkText(text: string, where: string, problems: Problem[]): FrameworkSource | undefined {
  try {
    if (text.trim().startsWith('gallery:')) {
      const { name, params } = parseGallerySpec(text);
      return { kind: 'gallery', name, params };
    }
    const fw = parseFramework(text, where);
    return { kind: 'file', framework: fw, fileName: `${slug(fw.name ?? 'framework')}.json` };
  } catch (e) {
    if (!(e instanceof InputError)) throw e;
    problems.push(...e.problems.map((p) => (p.where.startsWith('gallery') ? p : { ...p, where: `${where}: ${p.where}` })));
    return undefined;
  }
}

export function slug(s: string): string {
  return (
    s
      .normalize('NFKD')
      .replace(/[^\w\s-]/g, '')
      .trim()
      .replace(/\s+/g, '-')
      .toLowerCase()
      .slice(0, 60) || 'framework'
  );
}

/** The arrow modes of the view. */
export const ARROWS: ArrowMode[] = ['none', 'velocity', 'displacement'];

// ---------------------------------------------------------------------------------------------
// State file

/** The state file: stable field order, so equal states give identical files. */
export function stateToFile(s: AppState): string {
  const fw =
    s.framework.kind === 'gallery'
      ? { gallery: s.framework.name, params: sortedParams(s.framework.name, s.framework.params) }
      : { file: s.framework.framework, fileName: s.framework.fileName };
  const v = s.view;
  const f = s.figure;
  const out = {
    format: STATE_FORMAT,
    version: STATE_VERSION,
    framework: fw,
    cells: [s.cells[0], s.cells[1]],
    bc: s.bc,
    tolerance: s.tolerance,
    solver: s.solver,
    window: s.window,
    strip: s.strip,
    stresses: s.stresses,
    classify: s.classify,
    view: {
      show: v.show,
      flex: v.flex,
      stress: v.stress,
      amplitude: v.amplitude,
      speed: v.speed,
      playing: v.playing,
      phase: v.phase,
      arrows: v.arrows,
      colour: v.colour,
      rest: v.rest,
      zoom: v.zoom,
      centre: v.centre ? [v.centre[0], v.centre[1]] : null,
    },
    gif: { frames: s.gif.frames, width: s.gif.width, period: s.gif.period },
    figure: {
      width: f.width,
      height: f.height,
      unit: f.unit,
      dpi: f.dpi,
      transparent: f.transparent,
      caption: f.caption,
      caution: f.caution,
      arrowScale: f.arrowScale,
      lineScale: f.lineScale,
    },
  };
  return JSON.stringify(out, null, 2) + '\n';
}

function sortedParams(name: string, params: Record<string, number>): Record<string, number> {
  const e = GALLERY.find((g) => g.name === name);
  const out: Record<string, number> = {};
  for (const p of e?.params ?? []) out[p.key] = params[p.key] ?? p.default;
  return out;
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

/** True when a parsed JSON value looks like a state file rather than a framework file. */
export function looksLikeState(v: unknown): boolean {
  return isRecord(v) && v.format === STATE_FORMAT;
}

/** Reads a state file. Throws InputError listing every problem with its JSON path. */
export function stateFromFile(text: string, source = 'state file'): AppState {
  let v: unknown;
  try {
    v = JSON.parse(text);
  } catch (e) {
    throw new InputError(`${source} cannot be read:`, [{ where: source, what: `the text is not valid JSON (${e instanceof Error ? e.message : String(e)})`, fix: 'load a state file saved by the app, unchanged' }]);
  }
  const problems: Problem[] = [];
  const s = defaultState();
  if (!isRecord(v) || v.format !== STATE_FORMAT) {
    throw new InputError(`${source} is not an app state file:`, [{ where: 'format', what: `a state file has "format": "${STATE_FORMAT}"`, fix: 'load a state file saved with "Save state", or load a framework file with "Open…"' }]);
  }
  if (v.version !== STATE_VERSION) problems.push({ where: 'version', what: `version ${JSON.stringify(v.version)} is not understood`, fix: `this app reads version ${STATE_VERSION}` });
  const known = ['format', 'version', 'framework', 'cells', 'bc', 'tolerance', 'solver', 'window', 'strip', 'stresses', 'classify', 'view', 'gif', 'figure'];
  for (const k of Object.keys(v)) if (!known.includes(k)) problems.push({ where: k, what: `"${k}" is not a field of a state file`, fix: `remove it (fields: ${known.join(', ')})` });

  const fw = v.framework;
  if (isRecord(fw) && typeof fw.gallery === 'string') {
    try {
      const spec = gallerySpec(fw.gallery, isRecord(fw.params) ? (fw.params as Record<string, number>) : {});
      const { name, params } = parseGallerySpec(spec);
      s.framework = { kind: 'gallery', name, params };
    } catch (e) {
      if (!(e instanceof InputError)) throw e;
      problems.push(...e.problems.map((p) => ({ ...p, where: `framework: ${p.where}` })));
    }
  } else if (isRecord(fw) && isRecord(fw.file)) {
    try {
      const f = checkFramework(fw.file as unknown as Framework, 'framework.file');
      s.framework = { kind: 'file', framework: f, fileName: typeof fw.fileName === 'string' ? fw.fileName : 'framework.json' };
    } catch (e) {
      if (!(e instanceof InputError)) throw e;
      problems.push(...e.problems.map((p) => ({ ...p, where: `framework.file.${p.where}` })));
    }
  } else {
    problems.push({ where: 'framework', what: 'expected {"gallery": NAME, "params": {...}} or {"file": FRAMEWORK}', fix: 'save the state again from the app' });
  }
  const cells = v.cells;
  if (Array.isArray(cells) && cells.length === 2) {
    const a = checkNumber(cells[0], 'cells[0]', LIMITS.cells, problems);
    const b = checkNumber(cells[1], 'cells[1]', LIMITS.cells, problems);
    if (a !== undefined && b !== undefined) s.cells = [a, b];
  } else problems.push({ where: 'cells', what: `expected [N1, N2], got ${describe(cells)}`, fix: 'write e.g. "cells": [6, 6]' });
  if (typeof v.bc === 'string') {
    const bc = bcText(v.bc, 'bc', problems);
    if (bc !== undefined) s.bc = bc;
  } else problems.push({ where: 'bc', what: `expected boundary text, got ${describe(v.bc)}`, fix: 'write e.g. "bc": "free"' });
  const num = (obj: Record<string, unknown>, key: string, path: string, r: Range, apply: (n: number) => void) => {
    const x = checkNumber(obj[key], path, r, problems);
    if (x !== undefined) apply(x);
  };
  const bool = (obj: Record<string, unknown>, key: string, path: string, apply: (b: boolean) => void) => {
    if (typeof obj[key] === 'boolean') apply(obj[key] as boolean);
    else problems.push({ where: path, what: `expected true or false, got ${describe(obj[key])}`, fix: `write "${key}": true or false` });
  };
  num(v, 'tolerance', 'tolerance', LIMITS.tolerance, (x) => (s.tolerance = x));
  if ((SOLVER_CHOICES as unknown[]).includes(v.solver)) s.solver = v.solver as SolverChoice;
  else problems.push({ where: 'solver', what: `expected one of ${SOLVER_CHOICES.join(', ')}, got ${describe(v.solver)}`, fix: 'write "solver": "auto"' });
  num(v, 'window', 'window', LIMITS.window, (x) => (s.window = x));
  num(v, 'strip', 'strip', LIMITS.strip, (x) => (s.strip = x));
  bool(v, 'stresses', 'stresses', (x) => (s.stresses = x));
  bool(v, 'classify', 'classify', (x) => (s.classify = x));
  const view = v.view;
  if (isRecord(view)) {
    if (view.show === 'flex' || view.show === 'stress') s.view.show = view.show;
    else problems.push({ where: 'view.show', what: `expected "flex" or "stress", got ${describe(view.show)}`, fix: 'write "show": "flex"' });
    num(view, 'flex', 'view.flex', LIMITS.flex, (x) => (s.view.flex = x));
    num(view, 'stress', 'view.stress', LIMITS.flex, (x) => (s.view.stress = x));
    num(view, 'amplitude', 'view.amplitude', LIMITS.amplitude, (x) => (s.view.amplitude = x));
    num(view, 'speed', 'view.speed', LIMITS.speed, (x) => (s.view.speed = x));
    bool(view, 'playing', 'view.playing', (x) => (s.view.playing = x));
    num(view, 'phase', 'view.phase', LIMITS.phase, (x) => (s.view.phase = x));
    if ((ARROWS as unknown[]).includes(view.arrows)) s.view.arrows = view.arrows as ArrowMode;
    else problems.push({ where: 'view.arrows', what: `expected one of ${ARROWS.join(', ')}, got ${describe(view.arrows)}`, fix: 'write "arrows": "none"' });
    bool(view, 'colour', 'view.colour', (x) => (s.view.colour = x));
    bool(view, 'rest', 'view.rest', (x) => (s.view.rest = x));
    num(view, 'zoom', 'view.zoom', LIMITS.zoom, (x) => (s.view.zoom = x));
    const c = view.centre;
    if (c === null) s.view.centre = null;
    else if (Array.isArray(c) && c.length === 2 && c.every((x) => typeof x === 'number' && Number.isFinite(x))) s.view.centre = [c[0] as number, c[1] as number];
    else problems.push({ where: 'view.centre', what: `expected null or [x, y], got ${describe(c)}`, fix: 'write "centre": null' });
  } else problems.push({ where: 'view', what: `expected an object, got ${describe(view)}`, fix: 'save the state again from the app' });
  const gif = v.gif;
  if (isRecord(gif)) {
    num(gif, 'frames', 'gif.frames', LIMITS.gifFrames, (x) => (s.gif.frames = x));
    num(gif, 'width', 'gif.width', LIMITS.gifWidth, (x) => (s.gif.width = x));
    num(gif, 'period', 'gif.period', LIMITS.gifPeriod, (x) => (s.gif.period = x));
  } else problems.push({ where: 'gif', what: `expected an object, got ${describe(gif)}`, fix: 'save the state again from the app' });
  // `figure` came later within version 1: a file without it gets the default figure
  const figure = v.figure;
  if (isRecord(figure)) {
    const fields = ['width', 'height', 'unit', 'dpi', 'transparent', 'caption', 'caution', 'arrowScale', 'lineScale'];
    for (const k of Object.keys(figure)) if (!fields.includes(k)) problems.push({ where: `figure.${k}`, what: `"${k}" is not a figure setting`, fix: `remove it (settings: ${fields.join(', ')})` });
    if ((FIGURE_UNITS as readonly unknown[]).includes(figure.unit)) s.figure.unit = figure.unit as FigureSize['unit'];
    else problems.push({ where: 'figure.unit', what: `expected one of ${FIGURE_UNITS.map((u) => `"${u}"`).join(', ')}, got ${describe(figure.unit)}`, fix: 'write "unit": "px" (pixels) or "mm" (millimetres)' });
    // sizes in the unit given (pixels when the unit itself is bad)
    const range = figureSizeRange(s.figure.unit);
    for (const k of ['width', 'height'] as const) {
      const x = inUnit(s.figure.unit, problems, (p) => checkNumber(figure[k], `figure.${k}`, range, p));
      if (x !== undefined) s.figure[k] = x;
    }
    num(figure, 'dpi', 'figure.dpi', LIMITS.figureDpi, (x) => (s.figure.dpi = x));
    bool(figure, 'transparent', 'figure.transparent', (x) => (s.figure.transparent = x));
    bool(figure, 'caption', 'figure.caption', (x) => (s.figure.caption = x));
    bool(figure, 'caution', 'figure.caution', (x) => (s.figure.caution = x));
    num(figure, 'arrowScale', 'figure.arrowScale', LIMITS.figureScale, (x) => (s.figure.arrowScale = x));
    num(figure, 'lineScale', 'figure.lineScale', LIMITS.figureScale, (x) => (s.figure.lineScale = x));
  } else if (figure !== undefined) problems.push({ where: 'figure', what: `expected an object, got ${describe(figure)}`, fix: 'save the state again from the app, or remove "figure" for the default figure' });
  if (problems.length) throw new InputError(`${source} cannot be used:`, problems);
  return s;
}
