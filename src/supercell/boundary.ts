/**
 * Boundary rules of a supercell.
 *
 * Each axis is either twisted with a phase θ (in turns; θ = 0 is periodic) or has two sides,
 * each free or pinned. Axis 1 (x) has the sides left/right, axis 2 (y) bottom/top.
 *
 * Text grammar (the CLI's `--bc` and the app's URL state):
 *   free | pinned | twist:θ1,θ2 | periodic
 *   or a comma list of  x=RULE | y=RULE | left=SIDE | right=SIDE | bottom=SIDE | top=SIDE
 *   with RULE = free | pinned | twist:θ | periodic and SIDE = free | pinned.
 * Later entries override earlier ones; anything unspecified is free. A side named on an axis
 * that the same list twists (x=periodic,left=pinned) is refused: a twisted axis has no sides.
 */
import { InputError, type Problem } from '../errors.js';

export type SideRule = 'free' | 'pinned';
export type AxisRule =
  | { kind: 'twist'; theta: number }
  | SidesRule;
export interface Boundary {
  /** Axis 1 (lattice vector a1): sides left (low) and right (high). */
  x: AxisRule;
  /** Axis 2 (lattice vector a2): sides bottom (low) and top (high). */
  y: AxisRule;
}

export const FREE: Boundary = { x: sides('free', 'free'), y: sides('free', 'free') };

type SidesRule = { kind: 'sides'; low: SideRule; high: SideRule };
function sides(low: SideRule, high: SideRule): SidesRule {
  return { kind: 'sides', low, high };
}

/** θ reduced to [0, 1). */
export function reduceTurns(theta: number): number {
  const r = theta - Math.floor(theta);
  return r >= 1 ? 0 : r;
}

export function isTwisted(rule: AxisRule): rule is { kind: 'twist'; theta: number } {
  return rule.kind === 'twist';
}

/** True when every twist phase factor exp(2πiθ) is ±1 exactly (θ ≡ 0 or ½). */
export function boundaryIsReal(b: Boundary): boolean {
  return [b.x, b.y].every((r) => r.kind !== 'twist' || [0, 0.5].includes(reduceTurns(r.theta)));
}

export function hasPinnedSide(b: Boundary): boolean {
  return [b.x, b.y].some((r) => r.kind === 'sides' && (r.low === 'pinned' || r.high === 'pinned'));
}

const GRAMMAR =
  'write free, pinned, periodic, twist:θ1,θ2, or a comma list such as x=twist:0.25,y=free,top=pinned ' +
  '(keys x, y, left, right, bottom, top; values free, pinned, periodic, twist:θ with θ in turns)';

/** A plain decimal number such as 0.25, -1, .5 or 2e-3 (no hex, binary, octal or Infinity). */
const DECIMAL = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/**
 * Largest |θ| accepted, in turns: below 2^20 a double keeps θ's fraction of a turn to 2^-32,
 * so reducing θ modulo 1 keeps the phase the user wrote; far above it the fraction is lost.
 */
export const MAX_TWIST_TURNS = 2 ** 20;

function parseTheta(text: string, where: string, problems: Problem[]): number | undefined {
  const t = text.trim();
  const v = DECIMAL.test(t) ? Number(t) : NaN;
  if (!Number.isFinite(v)) {
    problems.push({ where, what: `the twist phase "${text}" is not a plain decimal number`, fix: 'give θ in turns as a decimal number, e.g. twist:0.25 (θ = 0 is periodic)' });
    return undefined;
  }
  if (Math.abs(v) >= MAX_TWIST_TURNS) {
    problems.push({
      where,
      what: `the twist phase ${t} is too large: at |θ| ≥ ${MAX_TWIST_TURNS} turns its fraction of a turn is not kept exactly`,
      fix: 'give θ reduced to one turn (only θ modulo 1 matters), e.g. twist:0.25',
    });
    return undefined;
  }
  return v + 0;
}

function parseAxisRule(value: string, where: string, problems: Problem[]): AxisRule | undefined {
  const v = value.trim();
  if (v === 'free' || v === 'pinned') return sides(v, v);
  if (v === 'periodic') return { kind: 'twist', theta: 0 };
  if (v.startsWith('twist:')) {
    const theta = parseTheta(v.slice(6), where, problems);
    return theta === undefined ? undefined : { kind: 'twist', theta };
  }
  problems.push({ where, what: `"${value}" is not an axis rule`, fix: 'use free, pinned, periodic or twist:θ' });
  return undefined;
}

/** Parse the `--bc` grammar. Throws InputError naming the flag and the fix. */
export function parseBoundary(spec: string, flag = '--bc'): Boundary {
  const problems: Problem[] = [];
  const s = spec.trim();
  const b: Boundary = { x: FREE.x, y: FREE.y };
  if (s === '') {
    problems.push({ where: flag, what: 'the boundary rule is empty', fix: GRAMMAR });
  } else if (s === 'free' || s === 'pinned') {
    b.x = sides(s, s);
    b.y = sides(s, s);
  } else if (s === 'periodic') {
    b.x = { kind: 'twist', theta: 0 };
    b.y = { kind: 'twist', theta: 0 };
  } else if (s.startsWith('twist:')) {
    const parts = s.slice(6).split(',');
    if (parts.length !== 2) {
      problems.push({ where: flag, what: `"${spec}" needs two phases, one per axis`, fix: 'write twist:θ1,θ2, e.g. twist:0,0.5' });
    } else {
      const t1 = parseTheta(parts[0], flag, problems);
      const t2 = parseTheta(parts[1], flag, problems);
      if (t1 !== undefined && t2 !== undefined) {
        b.x = { kind: 'twist', theta: t1 };
        b.y = { kind: 'twist', theta: t2 };
      }
    }
  } else {
    // A comma list of key=value entries. "twist:θ" values contain no commas in this form.
    const sideNamed: Record<'x' | 'y', string | null> = { x: null, y: null };
    const twistNamed: Record<'x' | 'y', string | null> = { x: null, y: null };
    const contradiction = (axis: 'x' | 'y', side: string, twist: string) =>
      problems.push({
        where: `${flag} ${side.split('=')[0]}`,
        what: `"${twist}" wraps axis ${axis === 'x' ? 1 : 2}, so it has no ${side.split('=')[0]} side to make ${side.split('=')[1]}; "${side}" contradicts it`,
        fix: `drop one of the two: keep ${twist} (a twisted axis has no sides), or replace it with ${axis}=free and keep ${side}`,
      });
    for (const entry of s.split(',')) {
      const eq = entry.indexOf('=');
      if (eq < 0) {
        problems.push({ where: flag, what: `the entry "${entry}" has no "="`, fix: GRAMMAR });
        continue;
      }
      const key = entry.slice(0, eq).trim();
      const value = entry.slice(eq + 1).trim();
      const where = `${flag} ${key}`;
      if (key === 'x' || key === 'y') {
        const rule = parseAxisRule(value, where, problems);
        if (rule?.kind === 'twist') {
          twistNamed[key] = `${key}=${value}`;
          if (sideNamed[key]) contradiction(key, sideNamed[key], twistNamed[key]);
        } else if (rule) twistNamed[key] = null;
        if (rule) b[key] = rule;
      } else if (key === 'left' || key === 'right' || key === 'bottom' || key === 'top') {
        if (value !== 'free' && value !== 'pinned') {
          problems.push({ where, what: `a side is free or pinned, not "${value}"`, fix: `write ${key}=free or ${key}=pinned (twist a whole axis with x= or y=)` });
          continue;
        }
        const axis = key === 'left' || key === 'right' ? 'x' : 'y';
        sideNamed[axis] = `${key}=${value}`;
        const twist = twistNamed[axis];
        if (twist) {
          contradiction(axis, sideNamed[axis], twist);
          continue;
        }
        const cur = b[axis];
        const base: SidesRule = cur.kind === 'sides' ? cur : sides('free', 'free');
        const low = key === 'left' || key === 'bottom';
        b[axis] = sides(low ? value : base.low, low ? base.high : value);
      } else {
        problems.push({ where: flag, what: `"${key}" is not a boundary key`, fix: GRAMMAR });
      }
    }
  }
  if (problems.length) throw new InputError(`The boundary rule "${spec}" cannot be used:`, problems);
  return b;
}

function axisText(r: AxisRule): string {
  if (r.kind === 'twist') return r.theta === 0 ? 'periodic' : `twist:${r.theta}`;
  return r.low === r.high ? r.low : '';
}

/** Canonical text in the `--bc` grammar; parseBoundary(formatBoundary(b)) equals b. */
export function formatBoundary(b: Boundary): string {
  const x = b.x;
  const y = b.y;
  if (x.kind === 'sides' && y.kind === 'sides' && x.low === x.high && y.low === y.high && x.low === y.low) return x.low;
  if (x.kind === 'twist' && y.kind === 'twist') return `twist:${x.theta},${y.theta}`;
  const parts: string[] = [];
  const add = (axis: 'x' | 'y', r: AxisRule, lowKey: string, highKey: string) => {
    const t = axisText(r);
    if (t) parts.push(`${axis}=${t}`);
    else if (r.kind === 'sides') parts.push(`${lowKey}=${r.low}`, `${highKey}=${r.high}`);
  };
  add('x', x, 'left', 'right');
  add('y', y, 'bottom', 'top');
  return parts.join(',');
}

/** A one-line human description, e.g. "x twisted θ=0.25, y: bottom free, top pinned". */
export function describeBoundary(b: Boundary): string {
  const one = (name: string, r: AxisRule, lo: string, hi: string) =>
    r.kind === 'twist'
      ? `${name} ${r.theta === 0 ? 'periodic' : `twisted θ=${r.theta}`}`
      : r.low === r.high
        ? `${name} ${r.low}`
        : `${name}: ${lo} ${r.low}, ${hi} ${r.high}`;
  return `${one('x', b.x, 'left', 'right')}; ${one('y', b.y, 'bottom', 'top')}`;
}
