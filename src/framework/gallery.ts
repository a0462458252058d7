/**
 * A gallery of parametric periodic lattices, built on demand from a short spec string such as
 * `gallery:twisted-kagome?twist=15`.
 *
 * Every entry returns a one-cell `Framework` (see types.ts): Cartesian joint positions in cell
 * (0, 0) and bars `from → to` with an integer cell shift. Lengths are in the lattice's own
 * units; each entry's summary states its bond length.
 */
import { InputError, type Problem } from '../errors.js';
import { closestWord } from '../suggest.js';
import type { Bar, Framework, Joint, Vec2 } from './types.js';

export interface GalleryParam {
  /** Name used in a spec, e.g. `twist` in `gallery:twisted-kagome?twist=15`. */
  key: string;
  label: string;
  default: number;
  /** Smallest allowed value (inclusive). */
  min: number;
  /** Largest allowed value (inclusive). */
  max: number;
  /** Suggested increment for sliders and steppers; values need not be multiples of it. */
  step: number;
  /** Unit shown after the value, e.g. `°`. */
  unit?: string;
  help: string;
}

export interface GalleryEntry {
  name: string;
  title: string;
  summary: string;
  params: GalleryParam[];
  /**
   * Builds the framework. Missing parameters take their defaults; unknown keys, non-finite or
   * out-of-range values throw an InputError.
   */
  build(p: Record<string, number>): Framework;
}

/** The spec prefix that marks a gallery lattice instead of a file. */
export const GALLERY_PREFIX = 'gallery:';

// ---------------------------------------------------------------------------------------------
// Small geometry helpers

const SQRT3 = Math.sqrt(3);
const DEG = Math.PI / 180;

function add(a: Vec2, b: Vec2): Vec2 {
  // `+ 0` turns a negative zero into a positive one so that coordinates compare cleanly.
  return [a[0] + b[0] + 0, a[1] + b[1] + 0];
}
function sub(a: Vec2, b: Vec2): Vec2 {
  return [a[0] - b[0], a[1] - b[1]];
}
function scale(k: number, a: Vec2): Vec2 {
  return [k * a[0], k * a[1]];
}
function dot(a: Vec2, b: Vec2): number {
  return a[0] * b[0] + a[1] * b[1];
}
/** Rotation of `v` by +90°. */
function perp(v: Vec2): Vec2 {
  return [-v[1], v[0]];
}
function unit(v: Vec2): Vec2 {
  return scale(1 / Math.hypot(v[0], v[1]), v);
}

/**
 * The displacement R(θ)·v − v, written so that θ = 0 gives exactly (0, 0); used to move a
 * joint when a rigid polygon turns by θ about its centre (v = joint − centre).
 */
function turnShift(theta: number, v: Vec2): Vec2 {
  const c1 = Math.cos(theta) - 1;
  const s = Math.sin(theta);
  return [c1 * v[0] - s * v[1], s * v[0] + c1 * v[1]];
}

function joint(id: string, at: Vec2): Joint {
  return { id, at: [at[0] + 0, at[1] + 0] };
}
function bar(from: string, to: string, s1: number, s2: number): Bar {
  return { from, to, shift: [s1, s2] };
}

// ---------------------------------------------------------------------------------------------
// Lattices

/** Regular kagome in the reference convention: a1 = (1,0), a2 = (1/2, √3/2), bond 1/2. */
const KAGOME_A1: Vec2 = [1, 0];
const KAGOME_A2: Vec2 = [0.5, SQRT3 / 2];
const KAGOME_SITES: Record<'A' | 'B' | 'C', Vec2> = {
  A: [0, 0],
  B: [0.5, 0],
  C: [0.25, SQRT3 / 4],
};
/** Up triangle A(0)B(0)C(0); down triangle B(0), A(+a1), C(+a1−a2). */
const KAGOME_BARS: Bar[] = [
  bar('A', 'B', 0, 0),
  bar('A', 'C', 0, 0),
  bar('B', 'C', 0, 0),
  bar('B', 'A', 1, 0),
  bar('B', 'C', 1, -1),
  bar('A', 'C', 0, -1),
];

function kagomeBars(): Bar[] {
  return KAGOME_BARS.map((b) => bar(b.from, b.to, b.shift[0], b.shift[1]));
}

function square(): Omit<Framework, 'name' | 'description'> {
  return {
    lattice: [
      [1, 0],
      [0, 1],
    ],
    joints: [joint('A', [0, 0])],
    bars: [bar('A', 'A', 1, 0), bar('A', 'A', 0, 1)],
  };
}

function squareDiagonal(): Omit<Framework, 'name' | 'description'> {
  const f = square();
  f.bars.push(bar('A', 'A', 1, 1));
  return f;
}

function triangular(): Omit<Framework, 'name' | 'description'> {
  return {
    lattice: [
      [1, 0],
      [0.5, SQRT3 / 2],
    ],
    joints: [joint('A', [0, 0])],
    bars: [bar('A', 'A', 1, 0), bar('A', 'A', 0, 1), bar('A', 'A', -1, 1)],
  };
}

function kagome(): Omit<Framework, 'name' | 'description'> {
  return {
    lattice: [[...KAGOME_A1], [...KAGOME_A2]],
    joints: (['A', 'B', 'C'] as const).map((id) => joint(id, KAGOME_SITES[id])),
    bars: kagomeBars(),
  };
}

/**
 * Twisted kagome: each up-triangle turns by +α about its centre, each down-triangle by −α.
 * Every joint is the midpoint of the centres of its up- and down-triangle, so corner sharing
 * survives only if the whole pattern of centres shrinks by cos α: a_i → cos α · a_i, with the
 * up-triangle centre c_u of cell 0 moving to cos α · c_u. A joint P of the up-triangle goes to
 * cos α · c_u + R(α)(P − c_u), i.e. P + (R(α) − 1)(P − c_u) + (cos α − 1) c_u.
 */
function twistedKagome(p: Record<string, number>): Omit<Framework, 'name' | 'description'> {
  const alpha = p.twist * DEG;
  const k = Math.cos(alpha);
  const { A, B, C } = KAGOME_SITES;
  const centre = scale(1 / 3, add(add(A, B), C));
  const centreShift = scale(k - 1, centre);
  const place = (P: Vec2): Vec2 => add(P, add(turnShift(alpha, sub(P, centre)), centreShift));
  return {
    lattice: [add(KAGOME_A1, scale(k - 1, KAGOME_A1)), add(KAGOME_A2, scale(k - 1, KAGOME_A2))],
    joints: [joint('A', place(A)), joint('B', place(B)), joint('C', place(C))],
    bars: kagomeBars(),
  };
}

/**
 * Honeycomb with bond length 1 and lattice constant √3: a1 = (√3, 0), a2 = (√3/2, 3/2),
 * A = (0, 0), B = (√3/2, 1/2); A's neighbours are B in cells (0,0), (−1,0) and (0,−1).
 */
function honeycomb(): Omit<Framework, 'name' | 'description'> {
  return {
    lattice: [
      [SQRT3, 0],
      [SQRT3 / 2, 1.5],
    ],
    joints: [joint('A', [0, 0]), joint('B', [SQRT3 / 2, 0.5])],
    bars: [bar('A', 'B', 0, 0), bar('A', 'B', -1, 0), bar('A', 'B', 0, -1)],
  };
}

/**
 * Rotating squares, primitive cell: unit squares [i, i+1]×[j, j+1] with i + j even, each
 * sharing its four corners with its diagonal neighbours. a1 = (1,1), a2 = (1,−1); A = (0,0),
 * B = (1,0). The square of cell (0,0) has corners A(0,0), B(0,0), A(1,0) = (1,1) and
 * B(0,−1) = (0,1); its diagonal is A → A(1,0).
 */
function rotatingSquares(): Omit<Framework, 'name' | 'description'> {
  return {
    lattice: [
      [1, 1],
      [1, -1],
    ],
    joints: [joint('A', [0, 0]), joint('B', [1, 0])],
    bars: [
      bar('A', 'B', 0, 0), // (0,0)–(1,0)
      bar('B', 'A', 1, 0), // (1,0)–(1,1)
      bar('A', 'B', -1, -1), // A(1,0) = (1,1) to B(0,−1) = (0,1), written from cell (1,0)
      bar('B', 'A', 0, 1), // (0,1)–(0,0), written from cell (0,−1)
      bar('A', 'A', 1, 0), // diagonal (0,0)–(1,1)
    ],
  };
}

/**
 * Rotating squares with a two-square cell, squares turned alternately by +θ and −θ.
 * At θ = 0: a1 = (2,0), a2 = (0,2), joints A (0,0), B (1,0), C (1,1), D (0,1); square P is
 * [0,1]² (corners A, B, C, D of cell 0) and square Q is [1,2]² (corners C, D(1,0), A(1,1),
 * B(0,1)). As for the twisted kagome every joint is the midpoint of its two square centres, so
 * the centres shrink by cos θ: a_i → cos θ · a_i, P turns by +θ and Q by −θ.
 */
function rotatingSquaresTilted(p: Record<string, number>): Omit<Framework, 'name' | 'description'> {
  const theta = p.tilt * DEG;
  const k = Math.cos(theta);
  const centre: Vec2 = [0.5, 0.5];
  const centreShift = scale(k - 1, centre);
  const place = (P: Vec2): Vec2 => add(P, add(turnShift(theta, sub(P, centre)), centreShift));
  return {
    lattice: [
      [2 * k, 0],
      [0, 2 * k],
    ],
    joints: [
      joint('A', place([0, 0])),
      joint('B', place([1, 0])),
      joint('C', place([1, 1])),
      joint('D', place([0, 1])),
    ],
    bars: [
      // square P (turned +θ)
      bar('A', 'B', 0, 0),
      bar('B', 'C', 0, 0),
      bar('C', 'D', 0, 0),
      bar('D', 'A', 0, 0),
      bar('A', 'C', 0, 0),
      // square Q (turned −θ): C(0,0), D(1,0), A(1,1), B(0,1)
      bar('C', 'D', 1, 0),
      bar('D', 'A', 0, 1), // D(1,0) → A(1,1)
      bar('A', 'B', -1, 0), // A(1,1) → B(0,1)
      bar('B', 'C', 0, -1), // B(0,1) → C(0,0)
      bar('C', 'A', 1, 1),
    ],
  };
}

/** Unit normals (e_i turned +90°) of the three kagome bond families e1 = a1, e2 = a2, e3 = a2 − a1. */
export const KAGOME_FAMILY_NORMALS: readonly [Vec2, Vec2, Vec2] = [
  perp(unit(KAGOME_A1)),
  perp(unit(KAGOME_A2)),
  perp(unit(sub(KAGOME_A2, KAGOME_A1))),
];

/**
 * Deformed kagome on the fixed regular-kagome lattice: A = dA = 0, B = a1/2 + dB,
 * C = a2/2 + dC, with dB and dC solved from x1 = dB·n1, z = dB·â1, x2 = dC·n2 and
 * x3 = (dC − dB)·n3.
 */
function deformedKagome(p: Record<string, number>): Omit<Framework, 'name' | 'description'> {
  const [n1, n2, n3] = KAGOME_FAMILY_NORMALS;
  const t1 = unit(KAGOME_A1);
  const dB = solve2(n1, p.x1, t1, p.z);
  const dC = solve2(n2, p.x2, n3, p.x3 + dot(dB, n3));
  const { A, B, C } = KAGOME_SITES;
  return {
    lattice: [[...KAGOME_A1], [...KAGOME_A2]],
    joints: [joint('A', A), joint('B', add(B, dB)), joint('C', add(C, dC))],
    bars: kagomeBars(),
  };
}

/** The vector d with d·u = a and d·v = b (u, v independent). */
function solve2(u: Vec2, a: number, v: Vec2, b: number): Vec2 {
  const det = u[0] * v[1] - u[1] * v[0];
  return [(a * v[1] - b * u[1]) / det, (b * u[0] - a * v[0]) / det];
}

// ---------------------------------------------------------------------------------------------
// Catalogue

interface Definition {
  name: string;
  title: string;
  summary: string;
  params: GalleryParam[];
  make(p: Record<string, number>): Omit<Framework, 'name' | 'description'>;
  describe(p: Record<string, number>): string;
}

const DEFINITIONS: Definition[] = [
  {
    name: 'square',
    title: 'Square grid',
    summary: 'Unit square grid with horizontal and vertical bars only; one joint per cell.',
    params: [],
    make: square,
    describe: () => 'Square grid of unit bars, one joint per cell, no diagonals.',
  },
  {
    name: 'square-diagonal',
    title: 'Square grid with diagonals',
    summary: 'Unit square grid with one diagonal bar (length √2) in every square.',
    params: [],
    make: squareDiagonal,
    describe: () => 'Square grid of unit bars with one diagonal of length √2 in every square.',
  },
  {
    name: 'triangular',
    title: 'Triangular lattice',
    summary: 'Triangular lattice of unit bars; one joint per cell, six bars at every joint.',
    params: [],
    make: triangular,
    describe: () => 'Triangular lattice of unit bars with one joint per cell.',
  },
  {
    name: 'kagome',
    title: 'Kagome lattice',
    summary:
      'Regular kagome: corner-sharing equilateral triangles, lattice constant 1, bond length 1/2; three joints per cell.',
    params: [],
    make: kagome,
    describe: () =>
      'Regular kagome lattice of corner-sharing triangles with lattice constant 1 and bond length 1/2.',
  },
  {
    name: 'twisted-kagome',
    title: 'Twisted kagome lattice',
    summary:
      'Kagome with up-triangles turned by +twist and down-triangles by −twist about their centres; bonds stay 1/2 and the lattice constant shrinks to cos(twist).',
    params: [
      {
        key: 'twist',
        label: 'Twist angle',
        default: 15,
        min: -55,
        max: 55,
        step: 1,
        unit: '°',
        help:
          'Angle by which every up-triangle turns (down-triangles turn the opposite way); 0 is the regular kagome. At ±60° the holes close and joints meet, so the range stops at ±55°.',
      },
    ],
    make: twistedKagome,
    describe: (p) =>
      `Twisted kagome lattice with up-triangles turned by ${fmt(p.twist)}° and down-triangles by ${fmt(-p.twist)}°, bond length 1/2 and lattice constant cos(${fmt(p.twist)}°).`,
  },
  {
    name: 'honeycomb',
    title: 'Honeycomb lattice',
    summary: 'Honeycomb of unit bars (lattice constant √3); two joints and three bars per cell.',
    params: [],
    make: honeycomb,
    describe: () => 'Honeycomb lattice of unit bars with lattice constant √3 and two joints per cell.',
  },
  {
    name: 'rotating-squares',
    title: 'Rotating squares (primitive cell)',
    summary:
      'Checkerboard of rigid unit squares (four sides and one diagonal) joined at their corners; one square, two joints and five bars per cell, a1 = (1,1), a2 = (1,−1).',
    params: [],
    make: rotatingSquares,
    describe: () =>
      'Checkerboard of rigid unit squares joined at their corners, one square per cell with lattice vectors (1,1) and (1,-1).',
  },
  {
    name: 'rotating-squares-tilted',
    title: 'Rotating squares (two-square cell, tilted)',
    summary:
      'Rigid unit squares joined at their corners, turned alternately by +tilt and −tilt; two squares, four joints and ten bars per cell, lattice vectors (2,0)·cos(tilt) and (0,2)·cos(tilt).',
    params: [
      {
        key: 'tilt',
        label: 'Tilt angle',
        default: 15,
        min: -40,
        max: 40,
        step: 1,
        unit: '°',
        help:
          'Angle by which alternate squares turn (their neighbours turn the opposite way); 0 is the open checkerboard. At ±45° the squares close up and joints meet, so the range stops at ±40°.',
      },
    ],
    make: rotatingSquaresTilted,
    describe: (p) =>
      `Rigid unit squares joined at their corners and turned alternately by ${fmt(p.tilt)}° and ${fmt(-p.tilt)}°, two squares per cell.`,
  },
  {
    name: 'deformed-kagome',
    title: 'Deformed kagome lattice',
    summary:
      'Regular kagome lattice vectors with the B and C sites moved: x1, x2, x3 buckle the three families of straight bond lines, z shifts B along a1 without buckling. The ranges (|x| ≤ 0.15, |z| ≤ 0.1) keep every bar longer than 0.12 (the regular bond is 0.5).',
    params: [
      {
        key: 'x1',
        label: 'Buckling of A–B lines',
        default: 0.1,
        min: -0.15,
        max: 0.15,
        step: 0.01,
        help: 'Offset of B from A across the A–B bond lines (along a1); 0 keeps those lines straight.',
      },
      {
        key: 'x2',
        label: 'Buckling of A–C lines',
        default: 0.1,
        min: -0.15,
        max: 0.15,
        step: 0.01,
        help: 'Offset of C from A across the A–C bond lines (along a2); 0 keeps those lines straight.',
      },
      {
        key: 'x3',
        label: 'Buckling of B–C lines',
        default: 0.1,
        min: -0.15,
        max: 0.15,
        step: 0.01,
        help: 'Offset of C from B across the B–C bond lines (along a2 − a1); 0 keeps those lines straight.',
      },
      {
        key: 'z',
        label: 'Shift of B along a1',
        default: 0,
        min: -0.1,
        max: 0.1,
        step: 0.01,
        help: 'Offset of B from A along a1; it changes bond lengths but keeps every line as straight as the x values make it.',
      },
    ],
    make: deformedKagome,
    describe: (p) =>
      `Kagome lattice with lattice constant 1 and its sites moved so that x1 = ${fmt(p.x1)}, x2 = ${fmt(p.x2)}, x3 = ${fmt(p.x3)} and z = ${fmt(p.z)}.`,
  },
];

function fmt(v: number): string {
  return String(v + 0);
}

function finish(def: Definition, values: Record<string, number>): Framework {
  const body = def.make(values);
  return {
    name: labelFor(def, values),
    description: def.describe(values),
    lattice: body.lattice,
    joints: body.joints,
    bars: body.bars,
  };
}

/** `twisted-kagome (twist=15°)`, or just the name for an entry without parameters. */
function labelFor(def: Definition, values: Record<string, number>): string {
  if (def.params.length === 0) return def.name;
  const parts = def.params.map((q) => `${q.key}=${fmt(values[q.key])}${q.unit ?? ''}`);
  return `${def.name} (${parts.join(', ')})`;
}

export const GALLERY: readonly GalleryEntry[] = Object.freeze(
  DEFINITIONS.map(
    (def): GalleryEntry => ({
      name: def.name,
      title: def.title,
      summary: def.summary,
      params: def.params.map((q) => ({ ...q })),
      build(p: Record<string, number>): Framework {
        const values = resolveParams(def, p);
        return finish(def, values);
      },
    }),
  ),
);

// ---------------------------------------------------------------------------------------------
// Lookup, parsing and validation

function knownNames(): string {
  return GALLERY.map((e) => e.name).join(', ');
}



function unknownNameProblem(name: string): Problem {
  const guess = closestWord(name, GALLERY.map((e) => e.name), true);
  return {
    where: `gallery name "${name}"`,
    what: `there is no gallery lattice called "${name}" (known: ${knownNames()})`,
    fix: `use one of the known names${guess ? `; the closest is "${guess}"` : ''}`,
  };
}

/** The gallery entry called `name`; throws an InputError listing the known names if there is none. */
export function galleryEntry(name: string): GalleryEntry {
  const entry = GALLERY.find((e) => e.name === name);
  if (!entry) throw new InputError('Unknown gallery lattice.', [unknownNameProblem(name)]);
  return entry;
}

function definition(name: string): Definition {
  const def = DEFINITIONS.find((d) => d.name === name);
  if (!def) throw new InputError('Unknown gallery lattice.', [unknownNameProblem(name)]);
  return def;
}

function rangeText(q: GalleryParam): string {
  const u = q.unit ?? '';
  return `${fmt(q.min)}${u} to ${fmt(q.max)}${u} (default ${fmt(q.default)}${u})`;
}

function paramList(def: Definition): string {
  return def.params.map((q) => `${q.key} from ${rangeText(q)}`).join('; ');
}

function unknownKeyProblem(def: Definition, key: string): Problem {
  if (def.params.length === 0) {
    return {
      where: `${GALLERY_PREFIX}${def.name} parameter "${key}"`,
      what: `${def.name} takes no parameters`,
      fix: `remove "${key}" (write just ${GALLERY_PREFIX}${def.name})`,
    };
  }
  const guess = closestWord(key, def.params.map((q) => q.key), true);
  return {
    where: `${GALLERY_PREFIX}${def.name} parameter "${key}"`,
    what: `${def.name} has no parameter "${key}"`,
    fix: `use ${paramList(def)}${guess ? `; the closest key is "${guess}"` : ''}`,
  };
}

function valueProblem(def: Definition, q: GalleryParam, what: string): Problem {
  return {
    where: `${GALLERY_PREFIX}${def.name} parameter "${q.key}"`,
    what,
    fix: `give a number from ${rangeText(q)}, or leave ${q.key} out to use the default`,
  };
}

/** Checks a value against its parameter; returns a problem or undefined. */
function checkValue(def: Definition, q: GalleryParam, v: number, shown: string): Problem | undefined {
  if (typeof v !== 'number' || !Number.isFinite(v)) {
    return valueProblem(def, q, `${q.key} must be a finite number, got ${shown}`);
  }
  if (v < q.min || v > q.max) {
    return valueProblem(def, q, `${q.key} = ${shown} is outside the allowed range ${rangeText(q)}`);
  }
  return undefined;
}

/** Fills defaults and checks every given value; throws one InputError listing all problems. */
function resolveParams(def: Definition, given: Record<string, number>): Record<string, number> {
  const problems: Problem[] = [];
  const values: Record<string, number> = {};
  for (const key of Object.keys(given ?? {})) {
    if (!def.params.some((q) => q.key === key)) problems.push(unknownKeyProblem(def, key));
  }
  for (const q of def.params) {
    if (given && Object.prototype.hasOwnProperty.call(given, q.key)) {
      const v = given[q.key];
      const problem = checkValue(def, q, v, String(v));
      if (problem) problems.push(problem);
      else values[q.key] = v;
    } else {
      values[q.key] = q.default;
    }
  }
  if (problems.length > 0) {
    throw new InputError(`Gallery lattice "${def.name}" cannot be built with these parameters.`, problems);
  }
  return values;
}

const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/**
 * Parses `gallery:NAME?k=v&k2=v2`. The `gallery:` prefix is required. Missing keys take their
 * defaults; unknown keys, repeated keys, non-numbers and out-of-range values throw an
 * InputError naming the key, its allowed range and its default.
 */
export function parseGallerySpec(spec: string): { name: string; params: Record<string, number> } {
  const context = `Gallery spec "${spec}" cannot be used.`;
  const text = String(spec).trim();
  if (!text.startsWith(GALLERY_PREFIX)) {
    throw new InputError(context, [
      {
        where: `gallery spec "${spec}"`,
        what: `a gallery spec must start with "${GALLERY_PREFIX}"`,
        fix: `write ${GALLERY_PREFIX}NAME or ${GALLERY_PREFIX}NAME?key=value, e.g. ${GALLERY_PREFIX}twisted-kagome?twist=15 (known names: ${knownNames()})`,
      },
    ]);
  }
  const rest = text.slice(GALLERY_PREFIX.length);
  const q = rest.indexOf('?');
  const name = (q < 0 ? rest : rest.slice(0, q)).trim();
  const query = q < 0 ? '' : rest.slice(q + 1);
  if (name === '') {
    throw new InputError(context, [
      {
        where: `gallery spec "${spec}"`,
        what: 'the lattice name is missing',
        fix: `put a name after "${GALLERY_PREFIX}", one of: ${knownNames()}`,
      },
    ]);
  }
  const def = definition(name);

  const problems: Problem[] = [];
  const params: Record<string, number> = {};
  const seen = new Set<string>();
  const pieces = query.trim() === '' ? [] : query.split('&');
  for (const raw of pieces) {
    const piece = raw.trim();
    const eq = piece.indexOf('=');
    if (piece === '' || eq < 0) {
      problems.push({
        where: `${GALLERY_PREFIX}${def.name} parameters "${query}"`,
        what: piece === '' ? 'there is an empty parameter (two "&" in a row or a trailing "&")' : `"${piece}" has no "=value"`,
        fix:
          def.params.length === 0
            ? `${def.name} takes no parameters; write just ${GALLERY_PREFIX}${def.name}`
            : `write key=value pairs joined by "&"; keys: ${paramList(def)}`,
      });
      continue;
    }
    const key = piece.slice(0, eq).trim();
    const valueText = piece.slice(eq + 1).trim();
    const param = def.params.find((p) => p.key === key);
    if (!param) {
      problems.push(unknownKeyProblem(def, key));
      continue;
    }
    if (seen.has(key)) {
      problems.push({
        where: `${GALLERY_PREFIX}${def.name} parameter "${key}"`,
        what: `${key} is given more than once`,
        fix: `give ${key} once, a number from ${rangeText(param)}`,
      });
      continue;
    }
    seen.add(key);
    if (!NUMBER.test(valueText)) {
      problems.push(
        valueProblem(def, param, `${key} must be a plain decimal number without a unit, got "${valueText}"`),
      );
      continue;
    }
    const v = Number(valueText);
    const problem = checkValue(def, param, v, valueText);
    if (problem) problems.push(problem);
    else params[key] = v;
  }
  if (problems.length > 0) throw new InputError(context, problems);
  for (const p of def.params) if (!Object.prototype.hasOwnProperty.call(params, p.key)) params[p.key] = p.default;
  return { name: def.name, params };
}

/** The canonical spec for an entry and parameter values: `gallery:NAME?k=v&…` (all keys, in entry order). */
export function gallerySpec(name: string, params: Record<string, number> = {}): string {
  const def = definition(name);
  const values = resolveParams(def, params);
  if (def.params.length === 0) return `${GALLERY_PREFIX}${def.name}`;
  return `${GALLERY_PREFIX}${def.name}?${def.params.map((q) => `${q.key}=${fmt(values[q.key])}`).join('&')}`;
}

/** Parses a gallery spec and builds its framework; `name` records every parameter value. */
export function buildGallery(spec: string): Framework {
  const { name, params } = parseGallerySpec(spec);
  return galleryEntry(name).build(params);
}
