/**
 * Reading a mode-data file back (`parseModesJson`): every problem at once with its JSON path and
 * the fix, the numbers bit for bit, and the consistency of counts, classes and vector lengths.
 * The format itself is src/io/modes.ts.
 */
import { InputError, type Problem } from '../errors.js';
import { FLEX_CLASSES, type Anchor, type FlexClass } from '../flex/classes.js';
import type { FlexCounts } from '../flex/spaces.js';
import type { SolveStatus } from '../flex/solver.js';
import { validateFramework } from '../framework/validate.js';
import { MAX_CELLS_PER_AXIS } from '../supercell/supercell.js';
import type { MacroStress } from '../stress/classify/macroscopic.js';
import type { Framework } from '../framework/types.js';
import { frameworkCopy, MODE_DATA_FORMAT, MODE_DATA_SCHEMA, MODE_DATA_VERSION, type ComplexData, type ModeBar, type ModeJoint, type ModeClassification, type ModeData, type ModeFlex, type ModeStress, type ModeStressClassification } from './modes.js';

// ---------------------------------------------------------------------------------------------
// Reading

const TOP = '(top level)';
const MAX_PROBLEMS = 20;
const REEXPORT = 'export the file again with shimmy export-modes --json or the app’s Mode data (JSON) button';

function describe(v: unknown): string {
  if (v === null) return 'null';
  if (Array.isArray(v)) return `a list of ${v.length} entries`;
  if (typeof v === 'string') return `the text ${JSON.stringify(v.length > 40 ? v.slice(0, 40) + '…' : v)}`;
  if (typeof v === 'number' || typeof v === 'boolean') return `${typeof v} ${v}`;
  return `an ${typeof v}`;
}

const at = (path: string, key: string | number) => (typeof key === 'number' ? `${path}[${key}]` : path ? `${path}.${key}` : key);

class Reader {
  problems: Problem[] = [];
  more = 0;
  report(where: string, what: string, fix: string): undefined {
    if (this.problems.length < MAX_PROBLEMS) this.problems.push({ where: where || TOP, what, fix });
    else this.more++;
    return undefined;
  }
  expected(where: string, v: unknown, what: string, fix: string): undefined {
    // A missing field was reported once by record(); do not report it again as a wrong value.
    if (v === undefined) return this.problems.some((p) => p.where === where) ? undefined : this.report(where, 'the required field is missing', `add it (or ${REEXPORT})`);
    return this.report(where, `expected ${what}, found ${describe(v)}`, fix);
  }
  num(v: unknown, p: string): number | undefined {
    return typeof v === 'number' && Number.isFinite(v) ? v : this.expected(p, v, 'a finite number', 'write a number such as 0.5');
  }
  /** A whole number, at least `min` when given. */
  int(v: unknown, p: string, min: number | null = 0): number | undefined {
    if (typeof v === 'number' && Number.isInteger(v) && (min === null || v >= min)) return v;
    return min === null ? this.expected(p, v, 'a whole number', 'write a whole number such as -1, 0 or 2') : this.expected(p, v, `a whole number of at least ${min}`, `write a whole number ≥ ${min}`);
  }
  str(v: unknown, p: string): string | undefined {
    return typeof v === 'string' ? v : this.expected(p, v, 'a text', 'write a JSON string in double quotes');
  }
  bool(v: unknown, p: string): boolean | undefined {
    return typeof v === 'boolean' ? v : this.expected(p, v, 'true or false', 'write true or false');
  }
  oneOf<T extends string>(v: unknown, p: string, values: readonly T[]): T | undefined {
    return typeof v === 'string' && (values as readonly string[]).includes(v) ? (v as T) : this.expected(p, v, `one of ${values.map((x) => `"${x}"`).join(', ')}`, `write one of ${values.join(', ')}`);
  }
  nullable<T>(v: unknown, p: string, f: (v: unknown, p: string) => T | undefined): T | null | undefined {
    return v === null ? null : f(v, p);
  }
  list<T>(v: unknown, p: string, f: (v: unknown, p: string) => T | undefined): T[] | undefined {
    if (!Array.isArray(v)) return this.expected(p, v, 'a list', 'write a JSON list [ … ]');
    const out: T[] = [];
    let ok = true;
    v.forEach((x, i) => {
      const y = f(x, at(p, i));
      if (y === undefined) ok = false;
      else out.push(y);
    });
    return ok ? out : undefined;
  }
  pair(v: unknown, p: string, f: (v: unknown, p: string) => number | undefined = (x, q) => this.num(x, q)): [number, number] | undefined {
    if (!Array.isArray(v) || v.length !== 2) return this.expected(p, v, 'a list of 2 numbers', 'write [a, b]');
    const a = f(v[0], at(p, 0));
    const b = f(v[1], at(p, 1));
    return a === undefined || b === undefined ? undefined : [a, b];
  }
  numbers(v: unknown, p: string): Float64Array | undefined {
    if (!Array.isArray(v)) return this.expected(p, v, 'a list of numbers', 'write a JSON list of numbers');
    const out = new Float64Array(v.length);
    let ok = true;
    for (let i = 0; i < v.length; i++) {
      const x = v[i];
      if (typeof x === 'number' && Number.isFinite(x)) out[i] = x;
      else ok = this.expected(at(p, i), x, 'a finite number', 'write a number') ?? false;
    }
    return ok ? out : undefined;
  }
  /** An object with any field names. */
  object(v: unknown, p: string): Record<string, unknown> | undefined {
    return typeof v === 'object' && v !== null && !Array.isArray(v) ? (v as Record<string, unknown>) : this.expected(p, v, 'an object { … }', REEXPORT);
  }
  /**
   * The fields of an object: reports a non-object, missing required and unknown fields; returns
   * the object whenever it is one, so that its fields are checked too.
   */
  record(v: unknown, p: string, required: readonly string[], optional: readonly string[] = []): Record<string, unknown> | undefined {
    const o = this.object(v, p);
    if (!o) return undefined;
    for (const k of required) {
      if (!Object.prototype.hasOwnProperty.call(o, k)) this.report(at(p, k), `the required field "${k}" is missing`, `add "${k}" (or ${REEXPORT})`);
    }
    const known = new Set([...required, ...optional]);
    for (const k of Object.keys(o)) {
      if (!known.has(k)) this.report(at(p, k), `"${k}" is not a field here (known: ${[...known].join(', ')})`, `remove "${k}" or correct its spelling`);
    }
    return o;
  }
}

type Fields<T> = { [K in keyof T]: T[K] | undefined };

/** Every field read (none undefined); optional ones may be absent. */
function complete<T extends object>(o: Fields<T>, optional: readonly string[] = []): T | undefined {
  for (const [k, v] of Object.entries(o)) if (v === undefined && !optional.includes(k)) return undefined;
  for (const k of optional) if ((o as Record<string, unknown>)[k] === undefined) delete (o as Record<string, unknown>)[k];
  return o as T;
}

function readSchemaVersion(r: Reader, v: unknown): typeof MODE_DATA_SCHEMA | undefined {
  if (v === MODE_DATA_SCHEMA) return MODE_DATA_SCHEMA;
  return r.report('schemaVersion', `expected "${MODE_DATA_SCHEMA}", found ${describe(v)}`, `remove the field or write "${MODE_DATA_SCHEMA}" (or ${REEXPORT})`);
}

function readComplex(r: Reader, v: unknown, p: string): ComplexData | undefined {
  const o = r.record(v, p, ['re', 'im']);
  if (!o) return undefined;
  return complete<ComplexData>({ re: r.numbers(o.re, at(p, 're')), im: r.nullable(o.im, at(p, 'im'), (x, q) => r.numbers(x, q)) });
}

function readCounts(r: Reader, v: unknown, p: string): FlexCounts | undefined {
  const req = ['joints', 'bars', 'dof', 'flexes', 'trivialFlexes', 'rigidMotionsTested', 'selfStresses', 'rank', 'tolerance', 'sigmaMax', 'gap', 'maxwellCalladine', 'real', 'solver', 'solverReason', 'groundedBars', 'droppedBars'];
  const o = r.record(v, p, req, ['gapNote', 'status']);
  if (!o) return undefined;
  const q = (k: string) => at(p, k);
  const tol = r.record(o.tolerance, q('tolerance'), ['relative', 'absolute']);
  const gap = r.record(o.gap, q('gap'), ['kept', 'dropped', 'ratio', 'ambiguous']);
  const mc = r.record(o.maxwellCalladine, q('maxwellCalladine'), ['lhs', 'rhs', 'ok']);
  const num = (x: unknown, w: string) => r.num(x, w);
  return complete<FlexCounts>(
    {
      joints: r.int(o.joints, q('joints')),
      bars: r.int(o.bars, q('bars')),
      dof: r.int(o.dof, q('dof')),
      flexes: r.int(o.flexes, q('flexes')),
      trivialFlexes: r.int(o.trivialFlexes, q('trivialFlexes')),
      rigidMotionsTested: r.list(o.rigidMotionsTested, q('rigidMotionsTested'), (x, w) => r.oneOf(x, w, ['translation x', 'translation y', 'rotation'] as const)),
      selfStresses: r.int(o.selfStresses, q('selfStresses')),
      rank: r.int(o.rank, q('rank')),
      tolerance: tol && complete({ relative: r.num(tol.relative, at(q('tolerance'), 'relative')), absolute: r.num(tol.absolute, at(q('tolerance'), 'absolute')) }),
      sigmaMax: r.num(o.sigmaMax, q('sigmaMax')),
      gap:
        gap &&
        complete({
          kept: r.nullable(gap.kept, at(q('gap'), 'kept'), num),
          dropped: r.nullable(gap.dropped, at(q('gap'), 'dropped'), num),
          ratio: r.nullable(gap.ratio, at(q('gap'), 'ratio'), num),
          ambiguous: r.bool(gap.ambiguous, at(q('gap'), 'ambiguous')),
        }),
      gapNote: o.gapNote === undefined ? undefined : r.str(o.gapNote, q('gapNote')),
      // flexes − self-stresses = 2·joints − bars is negative when bars outnumber the degrees of freedom
      maxwellCalladine: mc && complete({ lhs: r.int(mc.lhs, at(q('maxwellCalladine'), 'lhs'), null), rhs: r.int(mc.rhs, at(q('maxwellCalladine'), 'rhs'), null), ok: r.bool(mc.ok, at(q('maxwellCalladine'), 'ok')) }),
      real: r.bool(o.real, q('real')),
      solver: r.oneOf(o.solver, q('solver'), ['dense', 'bloch', 'sparse'] as const),
      solverReason: r.str(o.solverReason, q('solverReason')),
      groundedBars: r.int(o.groundedBars, q('groundedBars')),
      droppedBars: r.int(o.droppedBars, q('droppedBars')),
      status: o.status === undefined ? UNRECORDED_STATUS : readStatus(r, o.status, q('status')),
    },
    ['gapNote'],
  );
}

/** Files written before counts carried a status read as uncertified, saying why. */
const UNRECORDED_STATUS: SolveStatus = { certified: false, criterion: 'singular-values', converged: true, fallback: null, reasons: ['this file does not record how the count was decided'], keptSigma: 'measured' };

function readStatus(r: Reader, v: unknown, p: string): SolveStatus | undefined {
  const o = r.record(v, p, ['certified', 'criterion', 'converged', 'fallback', 'reasons'], ['keptSigma']);
  if (!o) return undefined;
  const q = (k: string) => at(p, k);
  const solvers = ['dense', 'bloch', 'sparse'] as const;
  const fallback = r.nullable(o.fallback, q('fallback'), (x, w) => {
    const f = r.record(x, w, ['from', 'to', 'reason']);
    return f ? complete<NonNullable<SolveStatus['fallback']>>({ from: r.oneOf(f.from, at(w, 'from'), solvers), to: r.oneOf(f.to, at(w, 'to'), solvers), reason: r.str(f.reason, at(w, 'reason')) }) : undefined;
  });
  return complete<SolveStatus>({
    certified: r.bool(o.certified, q('certified')),
    criterion: r.oneOf(o.criterion, q('criterion'), ['singular-values', 'inertia-and-residuals'] as const),
    converged: r.bool(o.converged, q('converged')),
    fallback,
    reasons: r.list(o.reasons, q('reasons'), (x, w) => r.str(x, w)),
    keptSigma: o.keptSigma === undefined ? 'measured' : r.oneOf(o.keptSigma, q('keptSigma'), ['measured', 'lower-bound'] as const),
  });
}

/** Class counts and thresholds (any names, each a number or a text), as both classifications write them. */
function readCountsAndThresholds(r: Reader, o: Record<string, unknown>, p: string) {
  const co = r.record(o.counts, at(p, 'counts'), FLEX_CLASSES);
  const counts = co && complete<Record<FlexClass, number>>(Object.fromEntries(FLEX_CLASSES.map((k) => [k, r.int(co[k], at(at(p, 'counts'), k))])) as Fields<Record<FlexClass, number>>);
  let thresholds: Record<string, number | string> | undefined;
  const to = r.object(o.thresholds, at(p, 'thresholds'));
  if (to) {
    thresholds = {};
    for (const [k, x] of Object.entries(to)) {
      if (typeof x === 'string' || (typeof x === 'number' && Number.isFinite(x))) thresholds[k] = x;
      else r.expected(at(at(p, 'thresholds'), k), x, 'a number or a text', 'write the threshold as a number or a string');
    }
  }
  return { counts, thresholds };
}

function readClassification(r: Reader, v: unknown, p: string): ModeClassification | undefined {
  const o = r.record(v, p, ['counts', 'thresholds', 'shortStripFlexes', 'warnings']);
  if (!o) return undefined;
  const { counts, thresholds } = readCountsAndThresholds(r, o, p);
  return complete<ModeClassification>({
    counts,
    thresholds,
    shortStripFlexes: r.int(o.shortStripFlexes, at(p, 'shortStripFlexes')),
    warnings: r.list(o.warnings, at(p, 'warnings'), (x, w) => r.str(x, w)),
  });
}

/** The optional metrics a flex and a self-stress entry share (support, extents, direction, anchor, decay fit, region). */
function readMetrics(r: Reader, o: Record<string, unknown>, p: string) {
  const opt = <T>(k: string, f: (x: unknown, w: string) => T | undefined): T | undefined => (o[k] === undefined ? undefined : f(o[k], at(p, k)));
  return {
    support: opt('support', (x, w) => r.int(x, w)),
    extents: opt('extents', (x, w) => r.pair(x, w)),
    direction: opt('direction', (x, w) => r.pair(x, w, (y, u) => r.int(y, u, null))),
    anchor: opt('anchor', (x, w) => readAnchor(r, x, w)),
    decayLength: opt('decayLength', (x, w) => r.num(x, w)),
    region: opt('region', (x, w) => r.str(x, w)),
    fitQuality: opt('fitQuality', (x, w) => r.num(x, w)),
    headWeight: opt('headWeight', (x, w) => r.num(x, w)),
  };
}

const FLEX_OPTIONAL = ['support', 'extents', 'direction', 'anchor', 'decayLength', 'region', 'fitQuality', 'headWeight', 'affine'] as const;

function readFlex(r: Reader, v: unknown, p: string): ModeFlex | undefined {
  const o = r.record(v, p, ['mode', 'class', 'participation', 'velocity'], FLEX_OPTIONAL);
  if (!o) return undefined;
  const q = (k: string) => at(p, k);
  const opt = <T>(k: string, f: (x: unknown, w: string) => T | undefined): T | undefined => (o[k] === undefined ? undefined : f(o[k], q(k)));
  const flex: Fields<ModeFlex> = {
    mode: r.int(o.mode, q('mode')),
    class: r.nullable(o.class, q('class'), (x, w) => r.oneOf(x, w, FLEX_CLASSES)),
    participation: r.num(o.participation, q('participation')),
    ...readMetrics(r, o, p),
    affine: opt('affine', (x, w) => r.bool(x, w)),
    velocity: readComplex(r, o.velocity, q('velocity')),
  };
  // (An optional metric present but unreadable has been reported; the whole read then fails.)
  return complete<ModeFlex>(flex, FLEX_OPTIONAL);
}

const STRESS_OPTIONAL = ['class', 'participation', 'support', 'extents', 'direction', 'anchor', 'decayLength', 'region', 'fitQuality', 'headWeight', 'macroscopicStress', 'axialForce'] as const;

function readAnchor(r: Reader, x: unknown, w: string): Anchor | undefined {
  const a = r.record(x, w, ['kind', 'name', 'at']);
  return a && complete<Anchor>({ kind: r.oneOf(a.kind, at(w, 'kind'), ['side', 'corner', 'point'] as const), name: r.str(a.name, at(w, 'name')), at: r.pair(a.at, at(w, 'at')) });
}

function readStress(r: Reader, v: unknown, p: string): ModeStress | undefined {
  const o = r.record(v, p, ['index', 'tension'], STRESS_OPTIONAL);
  if (!o) return undefined;
  const q = (k: string) => at(p, k);
  const opt = <T>(k: string, f: (x: unknown, w: string) => T | undefined): T | undefined => (o[k] === undefined ? undefined : f(o[k], q(k)));
  const stress: Fields<ModeStress> = {
    index: r.int(o.index, q('index')),
    class: opt('class', (x, w) => r.oneOf(x, w, FLEX_CLASSES)),
    participation: opt('participation', (x, w) => r.num(x, w)),
    ...readMetrics(r, o, p),
    macroscopicStress: opt('macroscopicStress', (x, w) => {
      const ms = r.record(x, w, ['xx', 'xy', 'yy', 'trace', 'traceless']);
      return ms && complete<MacroStress>({ xx: r.num(ms.xx, at(w, 'xx')), xy: r.num(ms.xy, at(w, 'xy')), yy: r.num(ms.yy, at(w, 'yy')), trace: r.num(ms.trace, at(w, 'trace')), traceless: r.bool(ms.traceless, at(w, 'traceless')) });
    }),
    tension: readComplex(r, o.tension, q('tension')),
    axialForce: opt('axialForce', (x, w) => readComplex(r, x, w)),
  };
  return complete<ModeStress>(stress, STRESS_OPTIONAL);
}

function readStressClassification(r: Reader, v: unknown, p: string): ModeStressClassification | undefined {
  const o = r.record(v, p, ['counts', 'thresholds', 'shortStripStresses', 'warnings', 'macroscopic']);
  if (!o) return undefined;
  const { counts, thresholds } = readCountsAndThresholds(r, o, p);
  const w = at(p, 'macroscopic');
  const macroscopic = r.nullable(o.macroscopic, w, (x) => {
    const m = r.record(x, w, ['cellArea', 'convention', 'rank', 'traceless', 'largestTrace', 'scale']);
    return (
      m &&
      complete<NonNullable<ModeStressClassification['macroscopic']>>({
        cellArea: r.num(m.cellArea, at(w, 'cellArea')),
        convention: r.str(m.convention, at(w, 'convention')),
        rank: r.int(m.rank, at(w, 'rank')),
        traceless: r.bool(m.traceless, at(w, 'traceless')),
        largestTrace: r.num(m.largestTrace, at(w, 'largestTrace')),
        scale: r.num(m.scale, at(w, 'scale')),
      })
    );
  });
  return complete<ModeStressClassification>({
    counts,
    thresholds,
    shortStripStresses: r.int(o.shortStripStresses, at(p, 'shortStripStresses')),
    warnings: r.list(o.warnings, at(p, 'warnings'), (x, q) => r.str(x, q)),
    macroscopic,
  });
}

function checkLength(r: Reader, v: ComplexData, p: string, n: number, what: string): void {
  if (v.re.length !== n) r.report(at(p, 're'), `has ${v.re.length} entries but needs ${n} (${what})`, REEXPORT);
  if (v.im && v.im.length !== n) r.report(at(p, 'im'), `has ${v.im.length} entries but needs ${n} (${what})`, `give ${n} entries, or null for a real vector`);
}

/** Cross-field checks on a structurally valid document. */
function checkConsistency(r: Reader, d: ModeData): void {
  const [N1, N2] = d.cells;
  d.cells.forEach((n, i) => {
    if (n < 1 || n > MAX_CELLS_PER_AXIS) r.report(`cells[${i}]`, `${n} cells is outside 1 to ${MAX_CELLS_PER_AXIS}`, 'write a positive whole number of cells');
  });
  const S = d.framework.unitCell.joints.length;
  const J = N1 * N2 * S;
  if (d.joints.length !== J) r.report('joints', `has ${d.joints.length} entries but ${N1}×${N2} cells of ${S} joints make ${J}`, REEXPORT);
  d.joints.forEach((j, k) => {
    if (j.joint !== k) r.report(`joints[${k}].joint`, `is ${j.joint} but the joints must be listed in order (joint ${k} here)`, `write ${k}`);
    const cell = Math.floor(k / S);
    if (j.cell_i !== cell % N1 || j.cell_j !== Math.floor(cell / N1)) r.report(`joints[${k}]`, `cell (${j.cell_i}, ${j.cell_j}) does not match joint ${k} = (j·N1 + i)·S + s`, `write cell_i ${cell % N1}, cell_j ${Math.floor(cell / N1)}`);
    const site = d.framework.unitCell.joints[k % S]?.id;
    if (site !== undefined && j.site !== site) r.report(`joints[${k}].site`, `is "${j.site}" but joint ${k} is unit-cell joint "${site}"`, `write "${site}"`);
  });
  const c = d.counts;
  if (c.joints !== J) r.report('counts.joints', `is ${c.joints} but the supercell has ${J} joints`, REEXPORT);
  if (c.dof !== 2 * J) r.report('counts.dof', `is ${c.dof} but ${J} joints have ${2 * J} degrees of freedom`, REEXPORT);
  if (c.bars !== d.bars.length) r.report('counts.bars', `is ${c.bars} but "bars" lists ${d.bars.length}`, REEXPORT);
  if (c.tolerance.relative !== d.tolerance) r.report('tolerance', `is ${d.tolerance} but counts.tolerance.relative is ${c.tolerance.relative}`, 'make the two agree');
  d.bars.forEach((b, i) => {
    for (const k of ['from', 'to'] as const) {
      if (b[k] < -1 || b[k] >= J || !Number.isInteger(b[k])) r.report(`bars[${i}].${k}`, `joint ${b[k]} does not exist (0 to ${J - 1}, or −1 for ground)`, REEXPORT);
    }
  });
  if (d.flexes.length !== c.flexes) r.report('flexes', `lists ${d.flexes.length} modes but counts.flexes is ${c.flexes}`, REEXPORT);
  const perClass: Record<string, number> = {};
  d.flexes.forEach((f, i) => {
    const p = `flexes[${i}]`;
    if (f.mode !== i) r.report(`${p}.mode`, `is ${f.mode} but the modes must be numbered in order (${i} here)`, `write ${i}`);
    if ((f.class === null) !== (d.classification === null)) {
      r.report(`${p}.class`, d.classification === null ? `is "${f.class}" but there is no classification` : 'is null but the flexes are classified', d.classification === null ? 'write null' : 'write local, line, decaying or bulk');
    }
    if (f.class !== null) perClass[f.class] = (perClass[f.class] ?? 0) + 1;
    checkLength(r, f.velocity, `${p}.velocity`, 2 * J, `x and y for each of ${J} joints`);
  });
  if (d.classification) {
    for (const k of FLEX_CLASSES) {
      const n = d.classification.counts[k];
      if (n !== (perClass[k] ?? 0)) r.report(`classification.counts.${k}`, `is ${n} but "flexes" holds ${perClass[k] ?? 0} of class ${k}`, REEXPORT);
    }
  }
  if (d.selfStresses) {
    if (d.selfStresses.length !== c.selfStresses) r.report('selfStresses', `lists ${d.selfStresses.length} but counts.selfStresses is ${c.selfStresses}`, 'list every self-stress, or write null when the basis was not computed');
    d.selfStresses.forEach((s, i) => {
      if (s.index !== i) r.report(`selfStresses[${i}].index`, `is ${s.index} but the self-stresses must be numbered in order (${i} here)`, `write ${i}`);
      checkLength(r, s.tension, `selfStresses[${i}].tension`, d.bars.length, `one per bar, ${d.bars.length} bars`);
      if (s.axialForce) checkLength(r, s.axialForce, `selfStresses[${i}].axialForce`, d.bars.length, `one per bar, ${d.bars.length} bars`);
      if ((s.class === undefined) !== (d.stressClassification === undefined)) {
        r.report(`selfStresses[${i}].class`, d.stressClassification === undefined ? 'is given but there is no stressClassification' : 'is missing but the self-stresses are classified', REEXPORT);
      }
    });
    if (d.stressClassification) {
      for (const k of FLEX_CLASSES) {
        const n = d.stressClassification.counts[k];
        const found = d.selfStresses.filter((s) => s.class === k).length;
        if (n !== found) r.report(`stressClassification.counts.${k}`, `is ${n} but "selfStresses" holds ${found} of class ${k}`, REEXPORT);
      }
    }
  } else if (d.stressClassification) {
    r.report('stressClassification', 'is given but selfStresses is null', REEXPORT);
  }
}

/**
 * Read mode-data JSON text (format "shimmy mode data", version 2). Throws InputError listing the
 * problems, each naming its field; never repairs.
 */
export function parseModesJson(text: string, source = 'mode data file'): ModeData {
  const context = `The ${source} cannot be read:`;
  const body = text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
  let value: unknown;
  try {
    value = JSON.parse(body);
  } catch (e) {
    throw new InputError(context, [{ where: TOP, what: `it is not valid JSON (${(e as Error).message})`, fix: REEXPORT }]);
  }
  // Format and version first: a file of another kind would otherwise list every field as wrong.
  const top = value as Record<string, unknown> | null;
  const isObject = typeof value === 'object' && value !== null && !Array.isArray(value);
  if (isObject && top!.format !== MODE_DATA_FORMAT) {
    throw new InputError(context, [{ where: 'format', what: `expected "${MODE_DATA_FORMAT}", found ${top!.format === undefined ? 'no "format" field' : describe(top!.format)}`, fix: 'read a file written by shimmy export-modes --json or the app’s Mode data (JSON) export' }]);
  }
  if (isObject && top!.version !== MODE_DATA_VERSION) {
    const what = top!.version === 1 ? 'version 1 (the app’s earlier export) has a different layout' : `expected ${MODE_DATA_VERSION}, found ${top!.version === undefined ? 'no "version" field' : describe(top!.version)}`;
    throw new InputError(context, [{ where: 'version', what, fix: `export the run again with this shimmy (version ${MODE_DATA_VERSION})` }]);
  }
  const r = new Reader();
  const required = ['format', 'version', 'caution', 'framework', 'cells', 'boundary', 'tolerance', 'counts', 'classification', 'conventions', 'joints', 'bars', 'flexes', 'selfStresses'];
  const o = r.record(value, '', required, ['schemaVersion', 'classificationNote', 'selfStressNote', 'stressClassification']);
  if (!o) throw new InputError(context, r.problems);

  let framework: ModeData['framework'] | undefined;
  const fo = r.record(o.framework, 'framework', ['spec', 'name', 'unitCell']);
  if (fo) {
    const fwProblems = fo.unitCell === undefined ? [] : validateFramework(fo.unitCell);
    for (const p of fwProblems) r.report(p.where === TOP ? 'framework.unitCell' : `framework.unitCell.${p.where}`, p.what, p.fix);
    framework = complete({
      spec: r.nullable(fo.spec, 'framework.spec', (x, w) => r.str(x, w)),
      name: r.nullable(fo.name, 'framework.name', (x, w) => r.str(x, w)),
      unitCell: fwProblems.length || fo.unitCell === undefined ? undefined : frameworkCopy(fo.unitCell as Framework),
    });
  }

  let conventions: Record<string, string> | undefined;
  const co = r.object(o.conventions, 'conventions');
  if (co) {
    conventions = {};
    for (const [k, x] of Object.entries(co)) {
      const s = r.str(x, at('conventions', k));
      if (s !== undefined) conventions[k] = s;
    }
  }

  const doc = complete<ModeData>(
    {
      format: MODE_DATA_FORMAT,
      version: MODE_DATA_VERSION,
      schemaVersion: o.schemaVersion === undefined ? undefined : readSchemaVersion(r, o.schemaVersion),
      caution: r.str(o.caution, 'caution'),
      framework,
      cells: r.pair(o.cells, 'cells', (x, w) => r.int(x, w, 1)),
      boundary: r.str(o.boundary, 'boundary'),
      tolerance: r.num(o.tolerance, 'tolerance'),
      counts: readCounts(r, o.counts, 'counts'),
      classification: r.nullable(o.classification, 'classification', (x, w) => readClassification(r, x, w)),
      classificationNote: o.classificationNote === undefined ? undefined : r.str(o.classificationNote, 'classificationNote'),
      conventions,
      joints: r.list(o.joints, 'joints', (x, p) => {
        const j = r.record(x, p, ['joint', 'cell_i', 'cell_j', 'site', 'x', 'y']);
        return j && complete<ModeJoint>({ joint: r.int(j.joint, at(p, 'joint')), cell_i: r.int(j.cell_i, at(p, 'cell_i')), cell_j: r.int(j.cell_j, at(p, 'cell_j')), site: r.str(j.site, at(p, 'site')), x: r.num(j.x, at(p, 'x')), y: r.num(j.y, at(p, 'y')) });
      }),
      bars: r.list(o.bars, 'bars', (x, p) => {
        const b = r.record(x, p, ['from', 'to', 'vector', 'phase', 'wraps']);
        const int = (y: unknown, w: string) => r.int(y, w, null);
        return b && complete<ModeBar>({ from: r.int(b.from, at(p, 'from'), -1), to: r.int(b.to, at(p, 'to'), -1), vector: r.pair(b.vector, at(p, 'vector')), phase: r.pair(b.phase, at(p, 'phase')), wraps: r.pair(b.wraps, at(p, 'wraps'), int) });
      }),
      flexes: r.list(o.flexes, 'flexes', (x, p) => readFlex(r, x, p)),
      selfStresses: r.nullable(o.selfStresses, 'selfStresses', (x, w) => r.list(x, w, (y, p) => readStress(r, y, p))),
      selfStressNote: o.selfStressNote === undefined ? undefined : r.str(o.selfStressNote, 'selfStressNote'),
      stressClassification: o.stressClassification === undefined ? undefined : readStressClassification(r, o.stressClassification, 'stressClassification'),
    },
    ['schemaVersion', 'classificationNote', 'selfStressNote', 'stressClassification'],
  );
  if (doc && r.problems.length === 0) checkConsistency(r, doc);
  if (r.more) r.problems.push({ where: '(more)', what: `${r.more} further problems are not listed`, fix: 'fix the ones above and read the file again' });
  if (r.problems.length || !doc) throw new InputError(context, r.problems.length ? r.problems : [{ where: TOP, what: 'the file could not be read', fix: REEXPORT }]);
  return doc;
}
