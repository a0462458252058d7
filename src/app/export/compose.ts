/**
 * Pure helpers of the figures: the drawn motion (one flex, or a weighted sum of two, with the
 * rigid motions optionally projected out), figure size in pixels from px or mm at a dpi, the
 * caption lines, per-frame phase captions, file names, and the joint under a click.
 */
import { CAUTION_SHORT } from '../../caution.js';
import { describeBoundary, parseBoundary } from '../../supercell/boundary.js';
import type { AnalyseResult, RigidData } from '../../worker/protocol.js';
import { frameworkTitle, LIMITS, slug, type AppState, type FrameworkSource } from '../state.js';

/** A velocity field, 2 entries per joint; im null when real. */
export interface Motion {
  re: Float64Array;
  im: Float64Array | null;
}

/** How the drawn flex is made from the list: flex a (the selection), plus wb × flex b, minus rigid motions. */
export interface MotionRecipe {
  /** Weight of the selected flex. */
  wa: number;
  /** Index of the second flex, or null for none. */
  b: number | null;
  wb: number;
  /** Project out the rigid motions the boundary allows. */
  projectRigid: boolean;
}

export const PLAIN_RECIPE: MotionRecipe = { wa: 1, b: null, wb: 0, projectRigid: false };

/** wa·a + wb·b (b may be null). */
export function superpose(a: Motion, wa: number, b: Motion | null, wb: number): Motion {
  const n = a.re.length;
  const re = new Float64Array(n);
  const complex = a.im !== null || (b !== null && b.im !== null);
  const im = complex ? new Float64Array(n) : null;
  for (let i = 0; i < n; i++) {
    re[i] = wa * a.re[i] + (b ? wb * b.re[i] : 0);
    if (im) im[i] = wa * (a.im ? a.im[i] : 0) + (b && b.im ? wb * b.im[i] : 0);
  }
  return { re, im };
}

/**
 * u − Σ_k t_k (t_kᵀ u) for orthonormal real fields t_k (the rigid motions of src/flex/rigid.ts
 * are orthonormal); real and imaginary parts separately.
 */
export function projectOut(u: Motion, fields: readonly Float64Array[]): Motion {
  const re = Float64Array.from(u.re);
  const im = u.im ? Float64Array.from(u.im) : null;
  for (const t of fields) {
    for (const part of im ? [re, im] : [re]) {
      let c = 0;
      for (let i = 0; i < t.length; i++) c += t[i] * part[i];
      for (let i = 0; i < t.length; i++) part[i] -= c * t[i];
    }
  }
  return { re, im };
}

/** The motion drawn for flex `a` of the result under the recipe, or null when a (or b) does not exist. */
export function drawnMotion(r: AnalyseResult, a: number, recipe: MotionRecipe): Motion | null {
  const ma = r.modes[a];
  if (!ma) return null;
  const mb = recipe.b === null ? null : r.modes[recipe.b];
  if (recipe.b !== null && !mb) return null;
  let u: Motion = recipe.wa === 1 && !mb ? { re: ma.re, im: ma.im } : superpose(ma, recipe.wa, mb ?? null, recipe.wb);
  if (recipe.projectRigid) u = projectOut(u, rigidFields(r.rigid));
  return u;
}

function rigidFields(rigid: readonly RigidData[] | undefined): Float64Array[] {
  return (rigid ?? []).map((m) => m.field);
}

/** Whether the recipe changes the selected flex (then captions and file names say so). */
export function recipeIsPlain(recipe: MotionRecipe): boolean {
  return recipe.wa === 1 && recipe.b === null && !recipe.projectRigid;
}

// ---- size --------------------------------------------------------------------------------------

export interface FigureSize {
  width: number;
  height: number;
  unit: 'px' | 'mm';
  /** Pixels per inch (a css px is 1/96 inch, so 96 dpi draws 1 px per css px). */
  dpi: number;
}

/** The sizes are the state's (a state file or link holds only sizes in these ranges); the pixel count is checked at export. */
export const FIGURE_LIMITS = { px: LIMITS.figurePx, mm: LIMITS.figureMm, dpi: LIMITS.figureDpi, maxPixels: 40e6 };

/**
 * Pixels of the image file, and the layout size in css px (text and lines are laid out there
 * and scaled by dpi/96): px sizes are the file's pixels; mm sizes are mm/25.4 × dpi pixels.
 */
export function figurePixels(s: FigureSize): { pixels: [number, number]; scale: number; layout: [number, number] } {
  const toPx = (v: number) => (s.unit === 'mm' ? Math.round((v / 25.4) * s.dpi) : Math.round(v));
  const pixels: [number, number] = [Math.max(1, toPx(s.width)), Math.max(1, toPx(s.height))];
  const scale = s.dpi / 96;
  return { pixels, scale, layout: [pixels[0] / scale, pixels[1] / scale] };
}

/** Problems with a figure size, as field / what / fix (empty when fine). */
export function checkFigureSize(s: FigureSize): { where: string; what: string; fix: string }[] {
  const out: { where: string; what: string; fix: string }[] = [];
  const r = FIGURE_LIMITS[s.unit];
  for (const [k, v] of [['width', s.width], ['height', s.height]] as const) {
    if (!Number.isFinite(v) || v < r.min || v > r.max) out.push({ where: `figure ${k}`, what: `${Number.isFinite(v) ? v : 'nothing'} ${s.unit} is outside the allowed sizes`, fix: `give ${r.min} to ${r.max} ${s.unit}` });
  }
  if (!Number.isFinite(s.dpi) || s.dpi < FIGURE_LIMITS.dpi.min || s.dpi > FIGURE_LIMITS.dpi.max) out.push({ where: 'figure dpi', what: `${s.dpi} is outside the allowed resolutions`, fix: `give ${FIGURE_LIMITS.dpi.min} to ${FIGURE_LIMITS.dpi.max} dpi` });
  if (!out.length) {
    const { pixels } = figurePixels(s);
    if (pixels[0] * pixels[1] > FIGURE_LIMITS.maxPixels) out.push({ where: 'figure size', what: `${pixels[0]} × ${pixels[1]} pixels is more than the browser can draw at once`, fix: 'lower the size or the dpi' });
  }
  return out;
}

// ---- text --------------------------------------------------------------------------------------

/** A phase in turns with up to 4 decimals and no trailing zeros: 0.25 → "0.25", 1/6 → "0.1667". */
export function turnsText(t: number): string {
  const r = Math.round(t * 1e4) / 1e4;
  return String(r >= 1 ? 0 : r);
}

/** The caption of one GIF frame or still: "φ = 0.25 turns". */
export function phaseCaption(t: number): string {
  return `φ = ${turnsText(t)} turns`;
}

export interface CaptionInput {
  result: AnalyseResult | null;
  /** Settings of the result (cells, boundary) and the view (selection, amplitude). */
  resultState: AppState;
  view: AppState['view'];
  recipe: MotionRecipe;
}

/** The line naming the setup and what is drawn (no phase: that is per frame). */
export function setupLine(c: CaptionInput): string {
  const s = c.resultState;
  const title = `${frameworkTitle(s.framework)}, ${s.cells[0]}×${s.cells[1]} cells`;
  const r = c.result;
  const v = c.view;
  let what = '';
  if (r) {
    if (v.show === 'stress' && r.stresses[v.stress]) what = `self-stress ${v.stress} of ${r.stresses.length}`;
    else if (r.modes[v.flex]) {
      const m = r.modes[v.flex];
      what = `${motionName(v.flex, c.recipe)} of ${r.modes.length}${m.class && c.recipe.b === null ? ` (${m.class})` : ''}, amplitude ${v.amplitude} bar lengths`;
    }
  }
  let bcText = s.bc;
  try {
    bcText = describeBoundary(parseBoundary(s.bc));
  } catch {
    // keep the raw text
  }
  return `${title}; ${bcText}${what ? `; ${what}` : ''}`;
}

/** "flex 3", "1·flex 3 + 0.5·flex 5", with ", rigid motions removed". */
export function motionName(a: number, recipe: MotionRecipe): string {
  const w = (x: number) => (x === 1 ? '' : `${x}·`);
  let s = recipe.b === null ? (recipe.wa === 1 ? `flex ${a}` : `${recipe.wa}·flex ${a}`) : `${w(recipe.wa)}flex ${a} ${recipe.wb < 0 ? '−' : '+'} ${w(Math.abs(recipe.wb))}flex ${recipe.b}`;
  if (recipe.projectRigid) s += ', rigid motions removed';
  return s;
}

/** The caption lines: setup, then the phase (when given), then the short caution (when asked). */
export function captionLines(c: CaptionInput, o: { caption: boolean; caution: boolean; turns: number | null }): string[] {
  const out: string[] = [];
  if (o.caption) out.push(o.turns === null ? setupLine(c) : `${setupLine(c)}; ${phaseCaption(o.turns)}`);
  if (o.caution) out.push(`shimmy — ${CAUTION_SHORT}`);
  return out;
}

/** Breaks caption lines at spaces so that each fits `width` pixels at about `charWidth` per character. */
export function wrapLines(lines: string[], width: number, charWidth: number): string[] {
  const max = Math.max(20, Math.floor(width / charWidth));
  const out: string[] = [];
  for (const line of lines) {
    let rest = line;
    while (rest.length > max) {
      let cut = rest.lastIndexOf(' ', max);
      if (cut <= 0) cut = max;
      out.push(rest.slice(0, cut));
      rest = rest.slice(cut).trimStart();
    }
    out.push(rest);
  }
  return out;
}

// ---- file names ----------------------------------------------------------------------------------

/** A name piece that keeps digits, signs and decimal points: "15.5" stays "15.5". */
function piece(s: string): string {
  return s
    .normalize('NFKD')
    .replace(/[^\w.+-]+/g, '-')
    .replace(/-{2,}/g, '-')
    .replace(/^-|-$/g, '')
    .toLowerCase();
}

/** The framework's part of a file name: "twisted-kagome_twist-15.5" (gallery) or the file's name. */
export function frameworkStem(src: FrameworkSource): string {
  if (src.kind === 'file') return slug(src.framework.name ?? src.fileName.replace(/\.json$/i, ''));
  const keys = Object.keys(src.params).sort();
  return [piece(src.name), ...keys.map((k) => `${piece(k)}-${String(src.params[k])}`)].join('_');
}

/**
 * File name stem of a figure or data export: framework, cells, boundary, what is drawn, e.g.
 * twisted-kagome_twist-15.5_6x6_free_flex-3 (decimals kept, no "15-5").
 */
export function fileStem(s: AppState, view: AppState['view'], recipe: MotionRecipe = PLAIN_RECIPE): string {
  const bc = s.bc
    .split(',')
    .map((p) => piece(p.replace(/[=:]/g, '-')))
    .join('_');
  let sel = view.show === 'stress' ? `stress-${view.stress}` : `flex-${view.flex}`;
  if (view.show !== 'stress') {
    if (recipe.b !== null) sel += `+${recipe.wb}x${recipe.b}`;
    if (recipe.wa !== 1) sel = `${recipe.wa}x${sel}`;
    if (recipe.projectRigid) sel += '_no-rigid';
  }
  return [frameworkStem(s.framework), `${s.cells[0]}x${s.cells[1]}`, bc || 'bc', sel].join('_');
}

// ---- the joint under a click ------------------------------------------------------------------------

/** The joint nearest to (x, y) among positions (2 per joint), if within `radius`; else null. */
export function nearestJoint(positions: ArrayLike<number>, x: number, y: number, radius: number): number | null {
  let best = -1;
  let bestD = radius * radius;
  for (let k = 0; 2 * k + 1 < positions.length; k++) {
    const d = (positions[2 * k] - x) ** 2 + (positions[2 * k + 1] - y) ** 2;
    if (d <= bestD) {
      bestD = d;
      best = k;
    }
  }
  return best < 0 ? null : best;
}

export interface JointVelocity {
  joint: number;
  ux: [number, number];
  uy: [number, number];
  /** |u_k| = √(|ux|² + |uy|²). */
  norm: number;
  /** |u_k| / max_j |u_j|. */
  relative: number;
}

/** Velocity of joint k in a motion (complex parts as [re, im]). */
export function jointVelocity(u: Motion, k: number): JointVelocity {
  const part = (v: Float64Array | null, i: number) => (v ? v[i] : 0);
  const ux: [number, number] = [u.re[2 * k], part(u.im, 2 * k)];
  const uy: [number, number] = [u.re[2 * k + 1], part(u.im, 2 * k + 1)];
  const norm = Math.hypot(ux[0], ux[1], uy[0], uy[1]);
  let max = 0;
  for (let j = 0; 2 * j < u.re.length; j++) max = Math.max(max, Math.hypot(u.re[2 * j], u.re[2 * j + 1], part(u.im, 2 * j), part(u.im, 2 * j + 1)));
  return { joint: k, ux, uy, norm, relative: max > 0 ? norm / max : 0 };
}
