/**
 * Reading and checking the framework file format.
 *
 * The format (see also schema/framework.schema.json):
 *
 *   { "name": "optional text", "description": "optional text",
 *     "lattice": [[a1x, a1y], [a2x, a2y]],
 *     "joints": [ {"id": "A", "at": [x, y]}, ... ],
 *     "bars":   [ {"from": "A", "to": "B", "shift": [s1, s2]}, ... ] }
 *
 * A bar joins joint `from` in cell c to joint `to` in cell c + shift; cell c's origin is
 * c1·a1 + c2·a2 and `at` is Cartesian.
 *
 * `validateFramework` reports every problem it can find in one pass. Checks that depend on
 * something already broken (geometry with an unusable lattice, bar ends when the joint ids are
 * broken) are skipped rather than reported as follow-on noise. Nothing is ever repaired: a value
 * is either accepted as written or reported.
 */
import { InputError, type Problem } from '../errors.js';
import { closestWord as closest } from '../suggest.js';
import type { Bar, Framework, Joint, Vec2 } from './types.js';

const TOP_LEVEL = '(top level)';
const JSON_TEXT = '(JSON text)';

const FRAMEWORK_FIELDS = ['name', 'description', 'lattice', 'joints', 'bars'] as const;
const JOINT_FIELDS = ['id', 'at'] as const;
const BAR_FIELDS = ['from', 'to', 'shift'] as const;

/** Other words people plausibly use for our fields; only used to suggest a rename. */
const SYNONYMS: Record<string, readonly string[]> = {
  title: ['name'],
  label: ['name', 'id'],
  comment: ['description'],
  comments: ['description'],
  note: ['description'],
  notes: ['description'],
  desc: ['description'],
  basis: ['lattice'],
  vectors: ['lattice'],
  lattice_vectors: ['lattice'],
  latticevectors: ['lattice'],
  periods: ['lattice'],
  nodes: ['joints'],
  vertices: ['joints'],
  sites: ['joints'],
  points: ['joints'],
  edges: ['bars'],
  links: ['bars'],
  members: ['bars'],
  struts: ['bars'],
  name: ['id'],
  pos: ['at'],
  position: ['at'],
  xy: ['at'],
  coords: ['at'],
  coordinates: ['at'],
  source: ['from'],
  start: ['from'],
  target: ['to'],
  end: ['to'],
  offset: ['shift'],
  cell: ['shift'],
  translation: ['shift'],
  periodicity: ['shift'],
};

/** Geometry tolerances, relative to the lattice scale max(|a1|, |a2|). */
const SPAN_TOL = 1e-12;
const ZERO_BAR_TOL = 1e-12;
const COINCIDE_TOL = 1e-9;
/**
 * A computed length at most this times the size of the terms summed to get it (|positions| +
 * |shift|·|lattice vectors|) is rounding error: the ends coincide (64 units of double rounding).
 */
const ROUNDING_TOL = 64 * Number.EPSILON;

// ---------------------------------------------------------------------------------------------
// Small helpers

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

function hasOwn(obj: Record<string, unknown>, key: string): boolean {
  return Object.prototype.hasOwnProperty.call(obj, key) && obj[key] !== undefined;
}

const IDENT = /^[A-Za-z_$][A-Za-z0-9_$]*$/;

function field(base: string, key: string): string {
  const k = IDENT.test(key) ? key : JSON.stringify(key);
  if (base === '') return IDENT.test(key) ? key : `[${k}]`;
  return IDENT.test(key) ? `${base}.${key}` : `${base}[${k}]`;
}

function quote(s: string): string {
  const shown = s.length > 40 ? `${s.slice(0, 37)}...` : s;
  return JSON.stringify(shown);
}

function fmtNum(x: number): string {
  if (Number.isNaN(x)) return 'NaN';
  if (x === Infinity) return 'Infinity';
  if (x === -Infinity) return '-Infinity';
  if (Object.is(x, -0)) return '0';
  return String(x);
}

function fmtVec(v: readonly number[]): string {
  return `[${v.map(fmtNum).join(', ')}]`;
}

/** A short description of a value found in the input, for messages. */
function describe(v: unknown): string {
  if (v === undefined) return 'nothing';
  if (v === null) return 'null';
  if (typeof v === 'boolean') return `the value ${v}`;
  if (typeof v === 'number') {
    if (Number.isFinite(v)) return `the number ${fmtNum(v)}`;
    if (Number.isNaN(v)) return 'NaN';
    return `a number too large to represent (${fmtNum(v)})`;
  }
  if (typeof v === 'string') return `the text ${quote(v)}`;
  if (Array.isArray(v)) {
    if (v.length === 0) return 'an empty list';
    return v.length === 1 ? 'a list of 1 item' : `a list of ${v.length} items`;
  }
  if (typeof v === 'object') return 'an object';
  return `a value of type ${typeof v}`;
}



function suggestField(key: string, known: readonly string[]): string | undefined {
  // own keys only: a field named "constructor" or "__proto__" must not reach Object.prototype
  const lower = key.toLowerCase();
  const syn = (Object.prototype.hasOwnProperty.call(SYNONYMS, lower) ? SYNONYMS[lower] : []).find((c) => known.includes(c));
  return syn ?? closest(key, known);
}

function listQuoted(items: readonly string[], max = 10): string {
  const shown = items.slice(0, max).map((s) => JSON.stringify(s));
  const more = items.length > max ? `, ... (${items.length - max} more)` : '';
  if (shown.length === 1) return shown[0] + more;
  if (more) return shown.join(', ') + more;
  return `${shown.slice(0, -1).join(', ')} and ${shown[shown.length - 1]}`;
}

/** For a number written as text ("1.5"), say how to write it; otherwise the general advice. */
function numberFix(x: unknown, general: string): string {
  if (typeof x === 'string' && x.trim() !== '' && Number.isFinite(Number(x))) {
    return `write it as the number ${x.trim()} without quotes`;
  }
  return general;
}

function norm(v: Vec2): number {
  return Math.hypot(v[0], v[1]);
}

// ---------------------------------------------------------------------------------------------
// Field-level checks

/**
 * Report fields of `obj` that are not in `known`, each at its own path, with a rename
 * suggestion when the name looks like a typo or a synonym of a known field.
 * Returns a map from missing known field to the unknown key that probably meant it.
 */
function checkUnknownFields(
  obj: Record<string, unknown>,
  known: readonly string[],
  base: string,
  problems: Problem[],
): Map<string, string> {
  const meant = new Map<string, string>();
  for (const key of Object.keys(obj)) {
    if (known.includes(key)) continue;
    const where = field(base, key);
    const guess = suggestField(key, known);
    const allowed = listQuoted(known);
    let fix: string;
    if (guess !== undefined && !hasOwn(obj, guess)) {
      fix = `rename it to ${JSON.stringify(guess)} if that is what you meant, or remove it (allowed here: ${allowed})`;
      if (!meant.has(guess)) meant.set(guess, key);
    } else if (guess !== undefined) {
      fix = `remove it; it looks like a second ${JSON.stringify(guess)}, which is already given (allowed here: ${allowed})`;
    } else {
      fix = `remove it; the fields allowed here are ${allowed}`;
    }
    problems.push({ where, what: `the field ${quote(key)} is not part of the format`, fix });
  }
  return meant;
}

function missing(where: string, what: string, fix: string, meantBy: string | undefined): Problem {
  const hint = meantBy !== undefined ? ` (the field ${quote(meantBy)} may be a misspelling of it)` : '';
  return { where, what, fix: fix + hint };
}

/**
 * Check a 2-vector of finite numbers at `where`. Returns it when usable, else undefined
 * (after reporting every broken component).
 */
function checkVec2(v: unknown, where: string, role: string, example: string, problems: Problem[]): Vec2 | undefined {
  if (!Array.isArray(v) || v.length !== 2) {
    problems.push({
      where,
      what: `${role} must be a list of two numbers, but it is ${describe(v)}`,
      fix: `write two numbers in square brackets, e.g. ${example}`,
    });
    return undefined;
  }
  let ok = true;
  for (let k = 0; k < 2; k++) {
    const x: unknown = v[k];
    const w = `${where}[${k}]`;
    if (typeof x !== 'number') {
      problems.push({
        where: w,
        what: `a coordinate of ${role} must be a number, but it is ${describe(x)}`,
        fix: numberFix(x, 'write a plain number without quotes, e.g. 0.5'),
      });
      ok = false;
    } else if (!Number.isFinite(x)) {
      problems.push({
        where: w,
        what: `a coordinate of ${role} is ${describe(x)}, not a finite number`,
        fix: 'write an ordinary finite number (values such as 1e999 overflow to infinity)',
      });
      ok = false;
    }
  }
  return ok ? [v[0] as number, v[1] as number] : undefined;
}

function checkLattice(v: unknown, problems: Problem[]): [Vec2, Vec2] | undefined {
  const where = 'lattice';
  if (!Array.isArray(v) || v.length !== 2) {
    problems.push({
      where,
      what: `the lattice must be a list of two vectors, but it is ${describe(v)}`,
      fix: 'write the two lattice vectors a1 and a2 as [[a1x, a1y], [a2x, a2y]], e.g. [[1, 0], [0, 1]]',
    });
    return undefined;
  }
  const a1 = checkVec2(v[0], 'lattice[0]', 'lattice vector a1', '[1, 0]', problems);
  const a2 = checkVec2(v[1], 'lattice[1]', 'lattice vector a2', '[0, 1]', problems);
  if (a1 === undefined || a2 === undefined) return undefined;
  let ok = true;
  for (const [k, a] of [a1, a2].entries()) {
    if (norm(a) === 0) {
      problems.push({
        where: `lattice[${k}]`,
        what: `lattice vector a${k + 1} is the zero vector ${fmtVec(a)}`,
        fix: `give a${k + 1} a nonzero length, e.g. ${k === 0 ? '[1, 0]' : '[0, 1]'}`,
      });
      ok = false;
    }
  }
  if (!ok) return undefined;
  // Normalise first so that the test is the sine of the angle between a1 and a2 and cannot
  // overflow or underflow: |det(a1, a2)| <= tol * |a1| * |a2|.
  const n1 = norm(a1);
  const n2 = norm(a2);
  const sine = (a1[0] / n1) * (a2[1] / n2) - (a1[1] / n1) * (a2[0] / n2);
  if (!(Math.abs(sine) > SPAN_TOL)) {
    problems.push({
      where,
      what: `lattice vectors a1 = ${fmtVec(a1)} and a2 = ${fmtVec(a2)} are parallel, so they do not span the plane`,
      fix: 'choose two lattice vectors pointing in different directions, e.g. [[1, 0], [0, 1]]',
    });
    return undefined;
  }
  return [a1, a2];
}

function checkOptionalText(obj: Record<string, unknown>, key: 'name' | 'description', problems: Problem[]): void {
  if (!hasOwn(obj, key)) return;
  const v = obj[key];
  if (typeof v !== 'string') {
    problems.push({
      where: key,
      what: `the ${key} must be text, but it is ${describe(v)}`,
      fix: `write the ${key} as text in double quotes, e.g. "${key === 'name' ? 'square grid' : 'a square grid of unit bars'}", or leave the field out`,
    });
  }
}

interface JointInfo {
  /** Usable id, or undefined when the id is broken. */
  id?: string;
  /** Usable position, or undefined when broken. */
  at?: Vec2;
}

function jointLabel(index: number, info: JointInfo | undefined): string {
  return info?.id !== undefined ? `joints[${index}] (${quote(info.id)})` : `joints[${index}]`;
}

function checkJoints(v: unknown, problems: Problem[]): { infos: JointInfo[]; idsOk: boolean } | undefined {
  if (!Array.isArray(v)) {
    problems.push({
      where: 'joints',
      what: `the joints must be a list, but they are ${describe(v)}`,
      fix: 'write the joints as a list of objects, e.g. [{"id": "A", "at": [0, 0]}]',
    });
    return undefined;
  }
  if (v.length === 0) {
    problems.push({
      where: 'joints',
      what: 'the joint list is empty, but a framework needs at least one joint',
      fix: 'list at least one joint, e.g. [{"id": "A", "at": [0, 0]}]',
    });
    return { infos: [], idsOk: true };
  }
  const infos: JointInfo[] = [];
  let idsOk = true;
  for (let i = 0; i < v.length; i++) {
    const base = `joints[${i}]`;
    const j: unknown = v[i];
    const info: JointInfo = {};
    infos.push(info);
    if (!isRecord(j)) {
      problems.push({
        where: base,
        what: `each joint must be an object, but this one is ${describe(j)}`,
        fix: 'write the joint as {"id": "A", "at": [x, y]}',
      });
      idsOk = false;
      continue;
    }
    const meant = checkUnknownFields(j, JOINT_FIELDS, base, problems);
    // id
    if (!hasOwn(j, 'id')) {
      problems.push(
        missing(`${base}.id`, 'this joint has no "id"', 'add an id that no other joint uses, e.g. "id": "A"', meant.get('id')),
      );
      idsOk = false;
    } else if (typeof j.id !== 'string' || j.id.trim() === '') {
      problems.push({
        where: `${base}.id`,
        what: `a joint id must be non-empty text, but it is ${describe(j.id)}`,
        fix:
          typeof j.id === 'number'
            ? `write the id in double quotes, e.g. "${fmtNum(j.id)}"`
            : 'write a short name in double quotes, e.g. "A"',
      });
      idsOk = false;
    } else {
      info.id = j.id;
    }
    // at
    if (!hasOwn(j, 'at')) {
      problems.push(
        missing(
          `${base}.at`,
          `${jointLabel(i, info)} has no position "at"`,
          'add the Cartesian position of the joint, e.g. "at": [0, 0]',
          meant.get('at'),
        ),
      );
    } else {
      const at = checkVec2(j.at, `${base}.at`, 'a joint position', '[0.5, 0.5]', problems);
      if (at !== undefined) info.at = at;
    }
  }
  // duplicate ids: every later use is reported against the first one
  const first = new Map<string, number>();
  const used = new Set(infos.map((x) => x.id).filter((x): x is string => x !== undefined));
  for (let i = 0; i < infos.length; i++) {
    const id = infos[i].id;
    if (id === undefined) continue;
    const f = first.get(id);
    if (f === undefined) {
      first.set(id, i);
      continue;
    }
    let n = 2;
    while (used.has(`${id}${n}`)) n++;
    const fresh = `${id}${n}`;
    used.add(fresh);
    problems.push({
      where: `joints[${i}].id`,
      what: `the joint id ${quote(id)} is used twice, by joints[${f}] and joints[${i}]`,
      fix: `give every joint its own id, e.g. rename joints[${i}] to ${JSON.stringify(fresh)}`,
    });
  }
  return { infos, idsOk };
}

interface BarInfo {
  from?: string;
  to?: string;
  shift?: [number, number];
}

function checkBarEnd(
  bar: Record<string, unknown>,
  key: 'from' | 'to',
  base: string,
  meant: Map<string, string>,
  problems: Problem[],
): string | undefined {
  const where = `${base}.${key}`;
  const role = key === 'from' ? 'the joint the bar starts at' : 'the joint the bar ends at';
  if (!hasOwn(bar, key)) {
    problems.push(
      missing(where, `this bar has no "${key}"`, `add the id of ${role}, e.g. "${key}": "A"`, meant.get(key)),
    );
    return undefined;
  }
  const v = bar[key];
  if (typeof v !== 'string') {
    problems.push({
      where,
      what: `"${key}" must be a joint id written as text, but it is ${describe(v)}`,
      fix:
        typeof v === 'number'
          ? `write the id in double quotes, e.g. "${fmtNum(v)}"`
          : `write the id of ${role} in double quotes, e.g. "A"`,
    });
    return undefined;
  }
  return v;
}

function checkShift(v: unknown, where: string, problems: Problem[]): [number, number] | undefined {
  if (!Array.isArray(v) || v.length !== 2) {
    problems.push({
      where,
      what: `the cell shift must be a list of two whole numbers, but it is ${describe(v)}`,
      fix: 'write how many cells the far end is moved along a1 and a2, e.g. [0, 0] for the same cell or [1, 0] for the next cell along a1',
    });
    return undefined;
  }
  let ok = true;
  for (let k = 0; k < 2; k++) {
    const x: unknown = v[k];
    const w = `${where}[${k}]`;
    if (typeof x !== 'number') {
      problems.push({
        where: w,
        what: `a cell shift must be a whole number, but it is ${describe(x)}`,
        fix: numberFix(x, 'write a plain whole number without quotes, e.g. 0, 1 or -1'),
      });
      ok = false;
    } else if (!Number.isInteger(x)) {
      const hint = Number.isFinite(x) ? `, e.g. ${fmtNum(Math.round(x))}` : ', e.g. 0, 1 or -1';
      problems.push({
        where: w,
        what: `a cell shift must be a whole number, but it is ${fmtNum(x)}`,
        fix: `shifts count whole cells, so write an integer${hint}; to place a joint part-way into a cell, change its "at" instead`,
      });
      ok = false;
    } else if (!Number.isSafeInteger(x)) {
      problems.push({
        where: w,
        what: `the cell shift ${fmtNum(x)} is too large to count exactly`,
        fix: `use a whole number between -${Number.MAX_SAFE_INTEGER} and ${Number.MAX_SAFE_INTEGER}`,
      });
      ok = false;
    }
  }
  return ok ? [(v[0] as number) + 0, (v[1] as number) + 0] : undefined;
}

/** A key that is the same for a bar and for its reverse (to, from, −shift). */
function barKey(from: string, to: string, s: [number, number]): string {
  let a = from;
  let b = to;
  let t: [number, number] = s;
  const neg: [number, number] = [-s[0] + 0, -s[1] + 0];
  if (from > to) {
    a = to;
    b = from;
    t = neg;
  } else if (from === to) {
    // pick the one of ±shift whose first nonzero component is positive
    if (s[0] < 0 || (s[0] === 0 && s[1] < 0)) t = neg;
  }
  return JSON.stringify([a, b, t[0] + 0, t[1] + 0]);
}

function checkBars(
  v: unknown,
  joints: { infos: JointInfo[]; idsOk: boolean } | undefined,
  lattice: [Vec2, Vec2] | undefined,
  problems: Problem[],
): void {
  if (!Array.isArray(v)) {
    problems.push({
      where: 'bars',
      what: `the bars must be a list, but they are ${describe(v)}`,
      fix: 'write the bars as a list of objects, e.g. [{"from": "A", "to": "A", "shift": [1, 0]}], or [] for no bars',
    });
    return;
  }
  // joint lookup: only trusted when every joint id is usable
  const idIndex = new Map<string, number>();
  const dupIds = new Set<string>();
  const canResolve = joints !== undefined && joints.idsOk && joints.infos.length > 0;
  if (joints !== undefined) {
    joints.infos.forEach((info, i) => {
      if (info.id === undefined) return;
      if (idIndex.has(info.id)) dupIds.add(info.id);
      else idIndex.set(info.id, i);
    });
  }
  const knownIds = [...idIndex.keys()];

  const bars: BarInfo[] = [];
  for (let i = 0; i < v.length; i++) {
    const base = `bars[${i}]`;
    const b: unknown = v[i];
    const info: BarInfo = {};
    bars.push(info);
    if (!isRecord(b)) {
      problems.push({
        where: base,
        what: `each bar must be an object, but this one is ${describe(b)}`,
        fix: 'write the bar as {"from": "A", "to": "B", "shift": [0, 0]}',
      });
      continue;
    }
    const meant = checkUnknownFields(b, BAR_FIELDS, base, problems);
    info.from = checkBarEnd(b, 'from', base, meant, problems);
    info.to = checkBarEnd(b, 'to', base, meant, problems);
    if (!hasOwn(b, 'shift')) {
      problems.push(
        missing(
          `${base}.shift`,
          'this bar has no cell shift "shift"',
          'add the cell offset of the "to" end, e.g. "shift": [0, 0] for the same cell',
          meant.get('shift'),
        ),
      );
    } else {
      info.shift = checkShift(b.shift, `${base}.shift`, problems);
    }

    // ends must name known joints
    let resolved = true;
    if (canResolve) {
      for (const key of ['from', 'to'] as const) {
        const id = info[key];
        if (id === undefined) {
          resolved = false;
          continue;
        }
        if (!idIndex.has(id)) {
          resolved = false;
          const guess = closest(id, knownIds);
          problems.push({
            where: `${base}.${key}`,
            what: `no joint has the id ${quote(id)}`,
            fix:
              guess !== undefined
                ? `write ${JSON.stringify(guess)} if that is what you meant; the joint ids are ${listQuoted(knownIds)}`
                : `use one of the joint ids ${listQuoted(knownIds)}, or add a joint with this id`,
          });
        }
      }
    } else {
      resolved = false;
    }

    // zero length: same joint, same cell — needs no geometry
    const s = info.shift;
    if (info.from !== undefined && info.to !== undefined && s !== undefined) {
      if (info.from === info.to && s[0] === 0 && s[1] === 0) {
        problems.push({
          where: base,
          what: `this bar joins joint ${quote(info.from)} to itself in the same cell (shift [0, 0]), so it has zero length`,
          fix: `remove the bar, or give it a nonzero shift such as [1, 0] to join ${quote(info.from)} to its copy in the next cell`,
        });
        continue;
      }
      // geometric zero length
      if (
        resolved &&
        lattice !== undefined &&
        !dupIds.has(info.from) &&
        !dupIds.has(info.to)
      ) {
        const iFrom = idIndex.get(info.from)!;
        const iTo = idIndex.get(info.to)!;
        const p = joints!.infos[iFrom].at;
        const q = joints!.infos[iTo].at;
        if (p !== undefined && q !== undefined) {
          const [a1, a2] = lattice;
          const dx = q[0] + s[0] * a1[0] + s[1] * a2[0] - p[0];
          const dy = q[1] + s[0] * a1[1] + s[1] * a2[1] - p[1];
          // the scale of the numbers the bar vector is formed from: (q − p) is exact for nearby
          // ends wherever the sample sits, then the lattice vectors are added (R is built that way),
          // so a far-away placement loses nothing more than the input's own rounding
          const scale = norm(a1) + norm(a2) + Math.hypot(q[0] - p[0], q[1] - p[1]);
          const len = Math.hypot(dx, dy);
          const terms = norm(p) + norm(q) + Math.abs(s[0]) * norm(a1) + Math.abs(s[1]) * norm(a2);
          if (len <= ROUNDING_TOL * terms) {
            problems.push({
              where: base,
              what: `this bar from ${quote(info.from)} to ${quote(info.to)} with shift ${fmtVec(s)} has zero length, because both ends land on the same point`,
              fix: 'remove the bar, or move one of the two joints so that its ends are apart',
            });
          } else if (len <= ZERO_BAR_TOL * scale) {
            problems.push({
              where: base,
              what:
                `this bar from ${quote(info.from)} to ${quote(info.to)} with shift ${fmtVec(s)} is ${shortNum(len)} long, but the lattice vectors and ` +
                `the distance between its ends reach ${shortNum(scale)}: at a ratio under ${ZERO_BAR_TOL} the computation loses the bar to rounding (doubles keep about 16 digits)`,
              fix: 'check the lattice vectors and positions for a wrong exponent or unit; bars and lattice vectors must be of comparable size, e.g. rescale all coordinates by one factor',
            });
          }
        }
      }
    }
  }

  // the same bar twice, also as its reverse
  const seen = new Map<string, number>();
  for (let i = 0; i < bars.length; i++) {
    const { from, to, shift } = bars[i];
    if (from === undefined || to === undefined || shift === undefined) continue;
    if (from === to && shift[0] === 0 && shift[1] === 0) continue; // reported above
    const key = barKey(from, to, shift);
    const f = seen.get(key);
    if (f === undefined) {
      seen.set(key, i);
      continue;
    }
    const other = bars[f];
    const reversed = !(other.from === from && other.to === to && other.shift![0] === shift[0] && other.shift![1] === shift[1]);
    problems.push({
      where: `bars[${i}]`,
      what: reversed
        ? `this bar (${quote(from)} to ${quote(to)}, shift ${fmtVec(shift)}) is bars[${f}] (${quote(other.from!)} to ${quote(other.to!)}, shift ${fmtVec(other.shift!)}) listed again in reverse`
        : `this bar (${quote(from)} to ${quote(to)}, shift ${fmtVec(shift)}) is listed twice, as bars[${f}] and bars[${i}]`,
      fix: `remove bars[${i}]; each bar is listed once, in either direction`,
    });
  }
}

/** A short form of a length for messages: 1.00e+13 rather than 10000000000001. */
function shortNum(x: number): string {
  return Math.abs(x) >= 1e6 || (x !== 0 && Math.abs(x) < 1e-4) ? x.toExponential(2) : fmtNum(Number(x.toPrecision(6)));
}

/**
 * Candidate pairs (i < j) for checkCoincidentJoints, each j's candidates ascending: joints whose
 * positions reduced modulo the lattice fall in neighbouring buckets of width h (in lattice
 * coordinates, wrapping at 1). Two joints the exact test accepts differ by an integer to within
 * COINCIDE_TOL ≪ h, so no accepted pair is missed; the work grows like the number of joints
 * instead of its square. Returns null when positions are too far out for the reduction to be
 * exact enough (every pair is then tried).
 */
function coincidenceCandidates(infos: JointInfo[], lattice: [Vec2, Vec2]): Map<number, number[]> | null {
  const [a1, a2] = lattice;
  const det = a1[0] * a2[1] - a1[1] * a2[0];
  const frac: (Vec2 | undefined)[] = infos.map((info) => {
    const p = info.at;
    if (p === undefined) return undefined;
    return [(p[0] * a2[1] - p[1] * a2[0]) / det, (a1[0] * p[1] - a1[1] * p[0]) / det];
  });
  let big = 0;
  for (const f of frac) if (f) big = Math.max(big, Math.abs(f[0]), Math.abs(f[1]));
  const h = Math.max(1e-6, 1e3 * Number.EPSILON * big);
  if (!(h <= 0.1)) return null;
  const M = Math.floor(1 / h);
  const bucket = (t: number) => Math.min(M - 1, Math.floor((t - Math.floor(t)) * M));
  const buckets = new Map<number, number[]>();
  const out = new Map<number, number[]>();
  frac.forEach((f, j) => {
    if (!f) return;
    const b1 = bucket(f[0]);
    const b2 = bucket(f[1]);
    const found: number[] = [];
    for (let d1 = -1; d1 <= 1; d1++)
      for (let d2 = -1; d2 <= 1; d2++) {
        const key = (((b1 + d1 + M) % M) * M + ((b2 + d2 + M) % M));
        for (const i of buckets.get(key) ?? []) if (!found.includes(i)) found.push(i);
      }
    if (found.length) out.set(j, found.sort((x, y) => x - y));
    const own = b1 * M + b2;
    const list = buckets.get(own);
    if (list) list.push(j);
    else buckets.set(own, [j]);
  });
  return out;
}

/** Joints i ≠ j with at_j − at_i = n1·a1 + n2·a2 for whole numbers n1, n2. */
function checkCoincidentJoints(infos: JointInfo[], lattice: [Vec2, Vec2], problems: Problem[]): void {
  const [a1, a2] = lattice;
  const det = a1[0] * a2[1] - a1[1] * a2[0];
  const scale = Math.max(norm(a1), norm(a2));
  const reported = new Set<number>();
  const candidates = coincidenceCandidates(infos, lattice);
  const allBefore = (j: number) => Array.from({ length: j }, (_, i) => i);
  for (let j = 1; j < infos.length; j++) {
    const q = infos[j].at;
    if (q === undefined) continue;
    for (const i of candidates ? (candidates.get(j) ?? []) : allBefore(j)) {
      const p = infos[i].at;
      if (p === undefined || reported.has(i)) continue;
      const dx = q[0] - p[0];
      const dy = q[1] - p[1];
      // Cramer's rule for [a1 a2] n = d
      const n1 = (dx * a2[1] - dy * a2[0]) / det;
      const n2 = (a1[0] * dy - a1[1] * dx) / det;
      const r1 = Math.round(n1);
      const r2 = Math.round(n2);
      if (!(Math.abs(n1 - r1) <= COINCIDE_TOL && Math.abs(n2 - r2) <= COINCIDE_TOL)) continue;
      const ex = dx - r1 * a1[0] - r2 * a2[0];
      const ey = dy - r1 * a1[1] - r2 * a2[1];
      const apart = Math.hypot(ex, ey);
      if (!(apart <= COINCIDE_TOL * scale)) continue;
      const a = jointLabel(i, infos[i]);
      const b = jointLabel(j, infos[j]);
      const copy = r1 === 0 && r2 === 0 ? a : `the copy of ${a}`;
      const cell = r1 === 0 && r2 === 0 ? '' : ` in cell [${fmtNum(r1 + 0)}, ${fmtNum(r2 + 0)}]`;
      const terms = norm(p) + norm(q) + Math.abs(r1) * norm(a1) + Math.abs(r2) * norm(a2);
      // apart beyond rounding: distinct points, but closer than the tolerance relative to the cell
      const exact = apart <= ROUNDING_TOL * terms;
      const what = exact
        ? `${b} at ${fmtVec(q)} is at the same place as ${copy} at ${fmtVec(p)}${cell}`
        : `${b} at ${fmtVec(q)} is only ${shortNum(apart)} from ${copy} at ${fmtVec(p)}${cell}, under ${COINCIDE_TOL} of the lattice scale ${shortNum(scale)}, so the two count as the same place`;
      problems.push({
        where: `joints[${j}].at`,
        what,
        fix: `move one of the two joints, or remove joints[${j}] and let its bars use ${a} with the cell shift changed by [${fmtNum(-r1 + 0)}, ${fmtNum(-r2 + 0)}]${exact ? '' : '; if the lattice vectors are not meant to be that long, correct them'}`,
      });
      reported.add(j);
      break;
    }
  }
}

// ---------------------------------------------------------------------------------------------
// Public API

/** Check a parsed JSON value against the framework format; returns every problem (none = valid). */
export function validateFramework(value: unknown): Problem[] {
  const problems: Problem[] = [];
  if (!isRecord(value)) {
    problems.push({
      where: TOP_LEVEL,
      what: `a framework must be a JSON object, but this is ${describe(value)}`,
      fix: 'write one object of the form {"lattice": [[1, 0], [0, 1]], "joints": [...], "bars": [...]}',
    });
    return problems;
  }
  const meant = checkUnknownFields(value, FRAMEWORK_FIELDS, '', problems);
  checkOptionalText(value, 'name', problems);
  checkOptionalText(value, 'description', problems);

  let lattice: [Vec2, Vec2] | undefined;
  if (!hasOwn(value, 'lattice')) {
    problems.push(
      missing(
        'lattice',
        'the required field "lattice" is missing',
        'add the two lattice vectors, e.g. "lattice": [[1, 0], [0, 1]]',
        meant.get('lattice'),
      ),
    );
  } else {
    lattice = checkLattice(value.lattice, problems);
  }

  let joints: { infos: JointInfo[]; idsOk: boolean } | undefined;
  if (!hasOwn(value, 'joints')) {
    problems.push(
      missing(
        'joints',
        'the required field "joints" is missing',
        'add the list of joints, e.g. "joints": [{"id": "A", "at": [0, 0]}]',
        meant.get('joints'),
      ),
    );
  } else {
    joints = checkJoints(value.joints, problems);
  }

  if (!hasOwn(value, 'bars')) {
    problems.push(
      missing(
        'bars',
        'the required field "bars" is missing',
        'add the list of bars, e.g. "bars": [{"from": "A", "to": "A", "shift": [1, 0]}], or "bars": [] for none',
        meant.get('bars'),
      ),
    );
  } else {
    checkBars(value.bars, joints, lattice, problems);
  }

  if (lattice !== undefined && joints !== undefined) {
    checkCoincidentJoints(joints.infos, lattice, problems);
  }
  return problems;
}

/** A fresh copy of a value that `validateFramework` accepted. */
function copyFramework(v: Record<string, unknown>): Framework {
  const lat = v.lattice as [Vec2, Vec2];
  const out: Partial<Framework> = {};
  if (hasOwn(v, 'name')) out.name = v.name as string;
  if (hasOwn(v, 'description')) out.description = v.description as string;
  out.lattice = [
    [lat[0][0], lat[0][1]],
    [lat[1][0], lat[1][1]],
  ];
  out.joints = (v.joints as Joint[]).map((j) => ({ id: j.id, at: [j.at[0], j.at[1]] }));
  out.bars = (v.bars as Bar[]).map((b) => ({ from: b.from, to: b.to, shift: [b.shift[0], b.shift[1]] }));
  return out as Framework;
}

/**
 * Check a framework built in code (e.g. by the gallery); throws InputError listing every
 * problem, otherwise returns a deep copy.
 */
export function checkFramework(fw: Framework, source = 'framework'): Framework {
  const problems = validateFramework(fw);
  if (problems.length > 0) throw new InputError(`${source} is not a valid shimmy framework:`, problems);
  return copyFramework(fw as unknown as Record<string, unknown>);
}

/**
 * Parse framework JSON text. Malformed JSON is reported with line and column; a well-formed
 * value is checked by `validateFramework`. Throws InputError listing every problem; otherwise
 * returns a deep copy typed as Framework.
 */
export function parseFramework(text: string, source = 'framework file'): Framework {
  const context = `${source} is not a valid shimmy framework:`;
  // A leading byte-order mark is an encoding artefact, not content.
  const body = text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
  const offset = body === text ? 0 : 1;
  let value: unknown;
  try {
    value = JSON.parse(body);
  } catch (e) {
    throw new InputError(context, [jsonSyntaxProblem(body, e, offset, text)]);
  }
  const problems = [...duplicateKeyProblems(body, offset, text), ...validateFramework(value)];
  if (problems.length > 0) throw new InputError(context, problems);
  return copyFramework(value as Record<string, unknown>);
}

// ---------------------------------------------------------------------------------------------
// JSON syntax errors: positions, line and column

/** 1-based line and column of a character offset; \r\n, \n and \r each end a line. */
function lineColumn(text: string, pos: number): { line: number; column: number } {
  let line = 1;
  let lineStart = 0;
  const end = Math.min(Math.max(pos, 0), text.length);
  for (let i = 0; i < end; i++) {
    const c = text.charCodeAt(i);
    if (c === 10) {
      line++;
      lineStart = i + 1;
    } else if (c === 13) {
      if (text.charCodeAt(i + 1) === 10 && i + 1 < end) i++;
      line++;
      lineStart = i + 1;
    }
  }
  return { line, column: end - lineStart + 1 };
}

function describeChar(text: string, pos: number): string {
  if (pos >= text.length) return 'the end of the text';
  const c = text[pos];
  if (c === '\n' || c === '\r') return 'a line break';
  if (c === '\t') return 'a tab';
  if (c === ' ') return 'a space';
  const cp = text.codePointAt(pos)!;
  if (cp < 0x20) return `the control character U+${cp.toString(16).toUpperCase().padStart(4, '0')}`;
  if (c === '"') return 'a double quote';
  if (c === "'") return 'a single quote';
  return `the character ${JSON.stringify(String.fromCodePoint(cp))}`;
}

function prevNonSpace(text: string, pos: number): string | undefined {
  for (let i = Math.min(pos, text.length) - 1; i >= 0; i--) {
    const c = text[i];
    if (c !== ' ' && c !== '\t' && c !== '\n' && c !== '\r') return c;
  }
  return undefined;
}

function jsonSyntaxProblem(body: string, err: unknown, offset: number, original: string): Problem {
  const message = err instanceof Error ? err.message : String(err);
  if (body.trim() === '') {
    return {
      where: 'line 1, column 1',
      what: 'the text is empty, so it holds no framework',
      fix: 'write a framework object such as {"lattice": [[1, 0], [0, 1]], "joints": [{"id": "A", "at": [0, 0]}], "bars": []}',
    };
  }
  // Node 20: "... in JSON at position N"; later versions may add "(line L column C)".
  const m = /at position (\d+)/.exec(message);
  let pos: number | undefined;
  if (m) pos = Number(m[1]);
  else if (/Unexpected end of JSON input/i.test(message)) pos = body.length;
  else pos = scanJson(body).errorAt;
  const detail = message
    .replace(/\s+at position \d+[\s\S]*$/, '')
    .replace(/\s+in JSON$/, '')
    .replace(/,\s*(\.\.\.)?"[\s\S]*is not valid JSON\s*$/, '')
    .replace(/^JSON\.parse:\s*/, '')
    .trim();
  const reason = detail === '' ? 'invalid JSON' : detail.charAt(0).toLowerCase() + detail.slice(1);
  if (pos === undefined) {
    return {
      where: JSON_TEXT,
      what: `the text is not valid JSON (${reason})`,
      fix: 'check the JSON syntax: field names and text in double quotes, commas between items, every bracket closed',
    };
  }
  const { line, column } = lineColumn(original, pos + offset);
  const found = describeChar(body, pos);
  const prev = prevNonSpace(body, pos);
  let fix: string;
  const c = body[pos];
  if (pos >= body.length) {
    fix = 'the text stops early; close every open bracket, brace and quote';
  } else if ((c === ']' || c === '}') && prev === ',') {
    fix = 'remove the comma before the closing bracket; JSON allows no trailing comma';
  } else if (/after JSON/i.test(detail)) {
    fix = 'the file must hold exactly one JSON object; remove what follows its closing brace';
  } else if (/after (property value|array element)/i.test(detail)) {
    fix = 'put a comma between the two items, or close the open bracket or brace';
  } else if (c === "'") {
    fix = 'JSON text and field names use double quotes ("), not single quotes';
  } else if (/property name/i.test(detail)) {
    fix = 'write each field name in double quotes followed by a colon, e.g. "lattice": ...';
  } else if (/control character/i.test(detail)) {
    fix = 'a text value contains a raw line break or tab; write it as \\n or \\t, or remove it';
  } else if (/after property name/i.test(detail)) {
    fix = 'put a colon between the field name and its value';
  } else {
    fix = 'correct the JSON syntax here; common causes are a missing or extra comma, an unclosed bracket or quote, and words such as NaN that JSON does not allow';
  }
  return {
    where: `line ${line}, column ${column}`,
    what: `the text is not valid JSON (${reason}), found ${found}`,
    fix,
  };
}

// ---------------------------------------------------------------------------------------------
// A small JSON scanner. It is only used to find where a syntax error is when JSON.parse does
// not say, and to find fields written twice in one object (JSON.parse silently keeps the last).

interface ScanResult {
  /** Offset of the first syntax error, if any. */
  errorAt?: number;
  /** Fields given twice in one object: path of the field and offset of the second key. */
  duplicates: { path: string; at: number; key: string }[];
}

class ScanError {
  constructor(readonly at: number) {}
}

function scanJson(text: string): ScanResult {
  const duplicates: ScanResult['duplicates'] = [];
  let i = 0;
  const n = text.length;
  const ws = () => {
    while (i < n) {
      const c = text.charCodeAt(i);
      if (c === 32 || c === 9 || c === 10 || c === 13) i++;
      else break;
    }
  };
  const fail = (at = i): never => {
    throw new ScanError(at);
  };
  const str = (): string => {
    if (text[i] !== '"') fail();
    const start = i;
    i++;
    while (i < n) {
      const c = text.charCodeAt(i);
      if (c === 34) {
        i++;
        return JSON.parse(text.slice(start, i)) as string;
      }
      if (c < 0x20) fail();
      if (c === 92) {
        const e = text[i + 1];
        if (e === 'u') {
          if (!/^[0-9a-fA-F]{4}$/.test(text.slice(i + 2, i + 6))) fail(i + 2);
          i += 6;
        } else if (e !== undefined && '"\\/bfnrt'.includes(e)) {
          i += 2;
        } else {
          fail(i + 1);
        }
      } else {
        i++;
      }
    }
    return fail(n);
  };
  const digits = () => {
    const s = i;
    while (i < n && text.charCodeAt(i) >= 48 && text.charCodeAt(i) <= 57) i++;
    if (i === s) fail();
  };
  const num = () => {
    if (text[i] === '-') i++;
    if (text[i] === '0') i++;
    else digits();
    if (text[i] === '.') {
      i++;
      digits();
    }
    if (text[i] === 'e' || text[i] === 'E') {
      i++;
      if (text[i] === '+' || text[i] === '-') i++;
      digits();
    }
  };
  const value = (path: string): void => {
    ws();
    const c = text[i];
    if (c === '{') {
      i++;
      ws();
      const keys = new Set<string>();
      if (text[i] === '}') {
        i++;
        return;
      }
      for (;;) {
        ws();
        const at = i;
        const key = str();
        if (keys.has(key)) duplicates.push({ path: field(path, key), at, key });
        keys.add(key);
        ws();
        if (text[i] !== ':') fail();
        i++;
        value(field(path, key));
        ws();
        if (text[i] === ',') {
          i++;
          continue;
        }
        if (text[i] === '}') {
          i++;
          return;
        }
        fail();
      }
    } else if (c === '[') {
      i++;
      ws();
      if (text[i] === ']') {
        i++;
        return;
      }
      for (let k = 0; ; k++) {
        value(`${path}[${k}]`);
        ws();
        if (text[i] === ',') {
          i++;
          continue;
        }
        if (text[i] === ']') {
          i++;
          return;
        }
        fail();
      }
    } else if (c === '"') {
      str();
    } else if (c === '-' || (c !== undefined && c >= '0' && c <= '9')) {
      num();
    } else {
      for (const word of ['true', 'false', 'null']) {
        if (text.startsWith(word, i)) {
          i += word.length;
          return;
        }
      }
      fail();
    }
  };
  try {
    value('');
    ws();
    if (i < n) fail();
    return { duplicates };
  } catch (e) {
    if (e instanceof ScanError) return { errorAt: e.at, duplicates };
    return { duplicates }; // e.g. nesting too deep for the stack: give no position
  }
}

function duplicateKeyProblems(body: string, offset: number, original: string): Problem[] {
  return scanJson(body).duplicates.map((d) => {
    const { line, column } = lineColumn(original, d.at + offset);
    return {
      where: d.path,
      what: `the field ${quote(d.key)} is written twice in the same object (again at line ${line}, column ${column}), and only one value can count`,
      fix: 'keep one of the two and delete the other',
    };
  });
}
