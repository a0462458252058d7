/**
 * The app state in a link: the URL hash (`#framework=…&cells=6x6&…`), written with only the keys
 * that differ from the defaults and read back key by key with every problem named (state.ts
 * holds the state, its defaults, the field checks and the state file).
 */
import { InputError, type Problem } from '../errors.js';
import { SOLVER_CHOICES, type SolverChoice } from '../flex/solver.js';
import type { FigureSize } from './export/compose.js';
import type { ArrowMode } from './stage/scene.js';
import {
  ARROWS,
  bcText,
  boolText,
  cellsText,
  checkNumber,
  defaultState,
  FIGURE_UNITS,
  figureSizeRange,
  frameworkSpec,
  frameworkText,
  inUnit,
  LIMITS,
  NUMBER,
  numberText,
  rangeText,
  type AppState,
} from './state.js';


/**
 * `framework=…&cells=6x6&bc=free&flex=0` always; other keys only when they differ from the
 * defaults. Values are URL-encoded with encodeURIComponent.
 */
export function stateToHash(s: AppState): string {
  const d = defaultState();
  const parts: [string, string][] = [
    ['framework', frameworkSpec(s.framework)],
    ['cells', `${s.cells[0]}x${s.cells[1]}`],
    ['bc', s.bc],
    ['flex', String(s.view.flex)],
  ];
  const opt = (key: string, value: string, dflt: string) => {
    if (value !== dflt) parts.push([key, value]);
  };
  const b = (v: boolean) => (v ? '1' : '0');
  opt('tol', String(s.tolerance), String(d.tolerance));
  opt('solver', s.solver, d.solver);
  opt('window', String(s.window), String(d.window));
  opt('strip', String(s.strip), String(d.strip));
  opt('stresses', b(s.stresses), b(d.stresses));
  opt('classify', b(s.classify), b(d.classify));
  const v = s.view;
  const dv = d.view;
  opt('show', v.show, dv.show);
  opt('stress', String(v.stress), String(dv.stress));
  opt('amp', String(v.amplitude), String(dv.amplitude));
  opt('speed', String(v.speed), String(dv.speed));
  opt('play', b(v.playing), b(dv.playing));
  opt('phase', String(v.phase), String(dv.phase));
  opt('arrows', v.arrows, dv.arrows);
  opt('colour', b(v.colour), b(dv.colour));
  opt('rest', b(v.rest), b(dv.rest));
  opt('zoom', String(v.zoom), String(dv.zoom));
  if (v.centre) parts.push(['centre', `${v.centre[0]},${v.centre[1]}`]);
  opt('gifframes', String(s.gif.frames), String(d.gif.frames));
  opt('gifwidth', String(s.gif.width), String(d.gif.width));
  opt('gifperiod', String(s.gif.period), String(d.gif.period));
  // The figure settings travel like the view and the GIF settings: a key only when it differs
  // from the default, so a link with the default figure is no longer, and a link (or Back /
  // Undo, which reopen the link of an earlier history entry as a whole state) keeps a chosen
  // figure instead of falling back to the defaults.
  const f = s.figure;
  const df = d.figure;
  opt('figwidth', String(f.width), String(df.width));
  opt('figheight', String(f.height), String(df.height));
  opt('figunit', f.unit, df.unit);
  opt('figdpi', String(f.dpi), String(df.dpi));
  opt('figtransparent', b(f.transparent), b(df.transparent));
  opt('figcaption', b(f.caption), b(df.caption));
  opt('figcaution', b(f.caution), b(df.caution));
  opt('figarrows', String(f.arrowScale), String(df.arrowScale));
  opt('figlines', String(f.lineScale), String(df.lineScale));
  return '#' + parts.map(([k, val]) => `${k}=${encodeURIComponent(val)}`).join('&');
}

const HASH_KEYS = [
  'framework', 'cells', 'bc', 'flex', 'tol', 'solver', 'window', 'strip', 'stresses', 'classify', 'show', 'stress', 'amp', 'speed',
  'play', 'phase', 'arrows', 'colour', 'rest', 'zoom', 'centre', 'gifframes', 'gifwidth', 'gifperiod',
  'figwidth', 'figheight', 'figunit', 'figdpi', 'figtransparent', 'figcaption', 'figcaution', 'figarrows', 'figlines',
];

/** Reads a URL hash; keys not given keep their defaults. Throws InputError naming every bad key. */
export function stateFromHash(hash: string): AppState {
  const s = defaultState();
  const problems: Problem[] = [];
  const body = hash.startsWith('#') ? hash.slice(1) : hash;
  const seen = new Set<string>();
  // width and height are checked once the unit is known (keys come in any order)
  const figureSize: { figwidth?: string; figheight?: string } = {};
  for (const piece of body.split('&')) {
    if (piece === '') continue;
    const eq = piece.indexOf('=');
    const key = eq < 0 ? piece : piece.slice(0, eq);
    let value: string;
    try {
      value = decodeURIComponent(eq < 0 ? '' : piece.slice(eq + 1));
    } catch {
      problems.push({ where: `URL #${key}`, what: 'the value is not valid URL encoding', fix: 'encode the value with encodeURIComponent' });
      continue;
    }
    const where = `URL #${key}`;
    if (!HASH_KEYS.includes(key)) {
      problems.push({ where, what: `"${key}" is not a key of the app's URL`, fix: `use the keys ${HASH_KEYS.join(', ')}` });
      continue;
    }
    if (seen.has(key)) {
      problems.push({ where, what: `${key} is given twice`, fix: `give ${key} once` });
      continue;
    }
    seen.add(key);
    const set = <T>(v: T | undefined, apply: (v: T) => void) => {
      if (v !== undefined) apply(v);
    };
    switch (key) {
      case 'framework':
        set(frameworkText(value, where, problems), (v) => (s.framework = v));
        break;
      case 'cells':
        set(cellsText(value, where, problems), (v) => (s.cells = v));
        break;
      case 'bc':
        set(bcText(value, where, problems), (v) => (s.bc = v));
        break;
      case 'flex':
        set(numberText(value, where, LIMITS.flex, problems), (v) => (s.view.flex = v));
        break;
      case 'tol':
        set(numberText(value, where, LIMITS.tolerance, problems), (v) => (s.tolerance = v));
        break;
      case 'solver':
        if ((SOLVER_CHOICES as string[]).includes(value)) s.solver = value as SolverChoice;
        else problems.push({ where, what: `"${value}" is not a solver`, fix: `write one of ${SOLVER_CHOICES.join(', ')}` });
        break;
      case 'window':
        set(numberText(value, where, LIMITS.window, problems), (v) => (s.window = v));
        break;
      case 'strip':
        set(numberText(value, where, LIMITS.strip, problems), (v) => (s.strip = v));
        break;
      case 'stresses':
        set(boolText(value, where, problems), (v) => (s.stresses = v));
        break;
      case 'classify':
        set(boolText(value, where, problems), (v) => (s.classify = v));
        break;
      case 'show':
        if (value === 'flex' || value === 'stress') s.view.show = value;
        else problems.push({ where, what: `"${value}" is not something the stage shows`, fix: 'write flex or stress' });
        break;
      case 'stress':
        set(numberText(value, where, LIMITS.flex, problems), (v) => (s.view.stress = v));
        break;
      case 'amp':
        set(numberText(value, where, LIMITS.amplitude, problems), (v) => (s.view.amplitude = v));
        break;
      case 'speed':
        set(numberText(value, where, LIMITS.speed, problems), (v) => (s.view.speed = v));
        break;
      case 'play':
        set(boolText(value, where, problems), (v) => (s.view.playing = v));
        break;
      case 'phase':
        set(numberText(value, where, LIMITS.phase, problems), (v) => (s.view.phase = v));
        break;
      case 'arrows':
        if ((ARROWS as string[]).includes(value)) s.view.arrows = value as ArrowMode;
        else problems.push({ where, what: `"${value}" is not an arrow mode`, fix: `write one of ${ARROWS.join(', ')}` });
        break;
      case 'colour':
        set(boolText(value, where, problems), (v) => (s.view.colour = v));
        break;
      case 'rest':
        set(boolText(value, where, problems), (v) => (s.view.rest = v));
        break;
      case 'zoom':
        set(numberText(value, where, LIMITS.zoom, problems), (v) => (s.view.zoom = v));
        break;
      case 'centre': {
        const xy = value.split(',');
        if (xy.length !== 2 || !xy.every((t) => NUMBER.test(t.trim()))) problems.push({ where, what: `"${value}" is not a point`, fix: 'write x,y, e.g. 1.5,2' });
        else s.view.centre = [Number(xy[0]), Number(xy[1])];
        break;
      }
      case 'gifframes':
        set(numberText(value, where, LIMITS.gifFrames, problems), (v) => (s.gif.frames = v));
        break;
      case 'gifwidth':
        set(numberText(value, where, LIMITS.gifWidth, problems), (v) => (s.gif.width = v));
        break;
      case 'gifperiod':
        set(numberText(value, where, LIMITS.gifPeriod, problems), (v) => (s.gif.period = v));
        break;
      case 'figwidth':
      case 'figheight':
        figureSize[key] = value;
        break;
      case 'figunit':
        if ((FIGURE_UNITS as readonly string[]).includes(value)) s.figure.unit = value as FigureSize['unit'];
        else problems.push({ where, what: `"${value}" is not a figure unit`, fix: `write one of ${FIGURE_UNITS.join(', ')}` });
        break;
      case 'figdpi':
        set(numberText(value, where, LIMITS.figureDpi, problems), (v) => (s.figure.dpi = v));
        break;
      case 'figtransparent':
        set(boolText(value, where, problems), (v) => (s.figure.transparent = v));
        break;
      case 'figcaption':
        set(boolText(value, where, problems), (v) => (s.figure.caption = v));
        break;
      case 'figcaution':
        set(boolText(value, where, problems), (v) => (s.figure.caution = v));
        break;
      case 'figarrows':
        set(numberText(value, where, LIMITS.figureScale, problems), (v) => (s.figure.arrowScale = v));
        break;
      case 'figlines':
        set(numberText(value, where, LIMITS.figureScale, problems), (v) => (s.figure.lineScale = v));
        break;
    }
  }
  const range = figureSizeRange(s.figure.unit);
  for (const [key, field] of [['figwidth', 'width'], ['figheight', 'height']] as const) {
    const text = figureSize[key];
    if (text !== undefined) {
      const v = inUnit(s.figure.unit, problems, (p) => numberText(text, `URL #${key}`, range, p));
      if (v !== undefined) s.figure[field] = v;
    } else if (checkNumber(s.figure[field], `URL #${key}`, range, []) === undefined) {
      // a unit without its sizes would read the default pixel sizes as millimetres
      problems.push({ where: `URL #${key}`, what: `not given, and the default ${s.figure[field]} is outside the sizes in ${s.figure.unit}`, fix: `give ${key} in ${s.figure.unit}: ${rangeText(range)}` });
    }
  }
  if (problems.length) throw new InputError('The link cannot be opened:', problems);
  return s;
}

