/**
 * Differential tests of the count on every solver path. The contract: for every case and every
 * fast path (sparse, bloch, auto), EITHER the counts equal the dense reference's, OR the result
 * is not certified, is flagged ambiguous and says why. A certified wrong count is the bug.
 * On easy cases (dense certified with a wide gap) the fast paths must certify too, so a path
 * that flags everything fails.
 *
 * The dense reference is the dense path's SVD taken per connected component (exact, see
 * tests/differential-helpers.ts); it is checked against counts by hand and, when python3 with
 * numpy is present, against numpy's SVD of the whole matrix.
 */
import { describe, expect, it } from 'vitest';
import { count } from '../src/analysis.js';
import { sparseSpaces } from '../src/flex/solve-sparse.js';
import type { SolverChoice } from '../src/flex/solver.js';
import type { FlexCounts } from '../src/flex/spaces.js';
import { countsOf } from '../src/flex/spaces.js';
import { buildGallery } from '../src/framework/gallery.js';
import type { Framework } from '../src/framework/types.js';
import { AMBIGUOUS_RATIO, flagDecision, NEAR_CUT_FACTOR } from '../src/linalg/rank.js';
import { parseBoundary, isTwisted } from '../src/supercell/boundary.js';
import { rigidityMatrix } from '../src/supercell/rigidity.js';
import { buildSupercell } from '../src/supercell/supercell.js';
import {
  beadFramework,
  beadHandCounts,
  denseReference,
  givensBanded,
  numpyMissing,
  numpyRank,
  type Bead,
  type DenseReference,
} from './differential-helpers.js';
import { rng } from './helpers.js';

const RELATIVE = 1e-9;
const MEMORY = 1.5e9;
/** Per-test time limit: a dense reference or a complex sparse run takes seconds on a busy machine. */
const SLOW = { timeout: 120_000 };

type FastPath = Exclude<SolverChoice, 'dense'>;

interface Case {
  key: string;
  framework: Framework;
  cells: [number, number];
  bc: string;
  /** Counts by hand, when known. */
  hand: { flexes: number; selfStresses: number } | null;
  /** Compute the dense reference (else the hand count is the reference: it keeps the file's run time down). */
  dense: boolean;
  /** The fast paths to run (bloch only where an axis is twisted). */
  paths: FastPath[];
  /** Easy: the fast paths must certify the dense path's counts. */
  easy?: boolean;
}

function twisted(bc: string): boolean {
  const b = parseBoundary(bc);
  return isTwisted(b.x) || isTwisted(b.y);
}

/** Every fast path that applies: bloch needs a twisted axis. */
function allPaths(bc: string): FastPath[] {
  return twisted(bc) ? ['sparse', 'bloch', 'auto'] : ['sparse', 'auto'];
}

const denseCache = new Map<string, DenseReference>();
function reference(c: Case): DenseReference {
  let ref = denseCache.get(c.key);
  if (!ref) {
    const R = rigidityMatrix(buildSupercell(c.framework, c.cells, parseBoundary(c.bc)));
    ref = denseReference(R, RELATIVE);
    denseCache.set(c.key, ref);
  }
  return ref;
}

/** The counts every fast path is held to: the dense reference, or the hand count when no dense run is affordable. */
function expected(c: Case): { flexes: number; selfStresses: number; source: string } {
  if (c.dense) {
    const r = reference(c);
    return { flexes: r.flexes, selfStresses: r.selfStresses, source: 'dense' };
  }
  if (!c.hand) throw new Error(`${c.key}: no reference`);
  return { ...c.hand, source: 'hand count' };
}

function run(c: Case, solver: FastPath): FlexCounts {
  return countsOf(count({ framework: c.framework, cells: c.cells, boundary: c.bc, solver, tolerance: RELATIVE, memoryLimit: MEMORY }).analysis);
}

function describeResult(a: FlexCounts): string {
  const g = a.gap;
  const f = (v: number | null) => (v === null ? 'none' : v.toExponential(2));
  return `${a.solver}: ${a.flexes} flexes / ${a.selfStresses} self-stresses, certified ${a.status.certified} (${a.status.criterion}), ambiguous ${g.ambiguous}, kept ${f(g.kept)}, dropped ${f(g.dropped)}, cut ${f(a.tolerance.absolute)}, reasons [${a.status.reasons.join('; ')}]`;
}

/** The contract: the same counts, or not certified + flagged ambiguous + reasons. */
function expectSameOrFlagged(where: string, want: { flexes: number; selfStresses: number; source: string }, a: FlexCounts): void {
  if (a.flexes === want.flexes && a.selfStresses === want.selfStresses) return;
  const msg = `${where}: ${describeResult(a)}; the ${want.source} reference says ${want.flexes} / ${want.selfStresses}`;
  expect(a.status.certified, `${msg} — a wrong count must not be certified`).toBe(false);
  expect(a.gap.ambiguous, `${msg} — an uncertified count must be flagged ambiguous`).toBe(true);
  expect(a.status.reasons.length, `${msg} — a flagged count must say why`).toBeGreaterThan(0);
}

/** Dense certified with a gap wide on both sides of the cut (the precondition of an easy case). */
function expectWideGap(where: string, ref: DenseReference): void {
  const { kept, dropped, ratio } = ref.decision.gap;
  const tol = ref.decision.tolerance.absolute;
  expect(ref.certified, `${where}: dense not certified: ${ref.reasons.join('; ')}`).toBe(true);
  expect(ratio === null || ratio >= AMBIGUOUS_RATIO, `${where}: dense gap ratio ${ratio}`).toBe(true);
  expect(kept === null || kept >= NEAR_CUT_FACTOR * tol, `${where}: dense kept σ ${kept} near the cut ${tol}`).toBe(true);
  expect(dropped === null || dropped <= tol / NEAR_CUT_FACTOR, `${where}: dense dropped σ ${dropped} near the cut ${tol}`).toBe(true);
}

function defineCase(c: Case): void {
  describe(`${c.framework.name}, ${c.cells.join('×')}, --bc ${c.bc}`, () => {
    if (c.dense) {
      it(`dense reference is certified${c.hand ? ' and equals the count by hand' : ''}`, () => {
        const ref = reference(c);
        expect(ref.certified, ref.reasons.join('; ')).toBe(true);
        if (c.hand) expect({ flexes: ref.flexes, selfStresses: ref.selfStresses }).toEqual(c.hand);
      });
    }
    for (const path of c.paths) {
      it(`${path}: the dense counts, or flagged and not certified${c.easy ? ' (easy: certified)' : ''}`, () => {
        const want = expected(c);
        const a = run(c, path);
        expectSameOrFlagged(`${c.key} ${path}`, want, a);
        if (c.easy) {
          expectWideGap(c.key, reference(c));
          expect(a.status.certified, `${c.key}: wide dense gap but ${describeResult(a)}`).toBe(true);
          expect({ flexes: a.flexes, selfStresses: a.selfStresses }).toEqual({ flexes: want.flexes, selfStresses: want.selfStresses });
        }
      });
    }
  });
}

// ---------------------------------------------------------------------------------------------
// 1. The bead frameworks (invented for testing)

const MIX: Bead[] = [
  { d: 2.8e-3, along: 'x' },
  { d: 1e-5, along: 'y' },
];
const REAL_BCS = ['free', 'pinned', 'left=pinned,right=pinned', 'x=periodic,y=free', 'periodic'];

function beadCase(beads: Bead[], cells: [number, number], bc: string, dense: boolean, paths: FastPath[] = allPaths(bc)): Case {
  const framework = beadFramework(beads);
  for (const p of paths) if (p === 'bloch' && !twisted(bc)) throw new Error(`bloch needs a twisted axis, not --bc ${bc}`);
  return { key: `${framework.name} ${cells.join('x')} ${bc}`, framework, cells, bc, hand: beadHandCounts(beads, cells, bc), dense, paths };
}

const bead = (d: number): Bead[] => [{ d, along: 'x' }];

/**
 * Cases chosen to keep the file near a minute: the largest bead on every boundary and path;
 * the smaller beads and the mix on a spread of boundaries; the dense reference wherever it is
 * cheap (real matrices) plus one complex case, the count by hand elsewhere (each dense
 * reference below is also checked against it).
 */
const BEAD_CASES: Case[] = [
  ...REAL_BCS.map((bc) => beadCase(bead(2.8e-3), [10, 10], bc, true)),
  beadCase(bead(2.8e-3), [10, 10], 'x=free,y=twist:0.25', true),
  beadCase(bead(2.8e-3), [10, 10], 'twist:0.3,0.1', false),
  beadCase(bead(1e-3), [10, 10], 'free', true, ['sparse']),
  beadCase(bead(1e-3), [10, 10], 'pinned', false, ['sparse']),
  beadCase(bead(1e-3), [10, 10], 'x=free,y=twist:0.25', false, ['bloch']),
  beadCase(bead(1e-4), [10, 10], 'free', true, ['sparse']),
  beadCase(bead(1e-4), [10, 10], 'left=pinned,right=pinned', false, ['sparse']),
  beadCase(bead(1e-4), [10, 10], 'twist:0.3,0.1', false, ['bloch']),
  beadCase(bead(1e-5), [10, 10], 'free', true, ['sparse']),
  beadCase(bead(1e-5), [10, 10], 'x=periodic,y=free', false, ['sparse', 'bloch']),
  beadCase(bead(1e-5), [10, 10], 'periodic', false, ['sparse']),
  beadCase(bead(1e-5), [10, 10], 'twist:0.3,0.1', false, ['sparse', 'bloch']),
  beadCase(MIX, [10, 10], 'free', true, ['sparse', 'auto']),
  beadCase(MIX, [10, 10], 'pinned', true, ['sparse']),
  beadCase(MIX, [10, 10], 'x=periodic,y=free', false, ['sparse', 'bloch']),
  beadCase(MIX, [10, 10], 'x=free,y=twist:0.25', false, ['sparse', 'bloch']),
  beadCase(bead(2.8e-3), [12, 12], 'free', true, ['sparse']),
  beadCase(bead(2.8e-3), [12, 12], 'periodic', false, ['sparse', 'bloch']),
  beadCase(bead(1e-5), [12, 12], 'x=free,y=twist:0.25', false, ['bloch', 'auto']),
  // strip blocks of 2·3·20 = 120 ≥ 96 columns: the Bloch path hands them to the sparse solver
  beadCase(bead(2.8e-3), [6, 20], 'x=periodic,y=free', true),
];

describe('bead frameworks (invented for testing), every solver path against the dense reference', SLOW, () => {
  BEAD_CASES.forEach(defineCase);

  it('the per-component dense reference equals the dense solver on the whole matrix (10×10 free, d = 2.8e-3)', () => {
    const c = BEAD_CASES[0];
    expect(c.bc).toBe('free');
    const whole = count({ framework: c.framework, cells: c.cells, boundary: c.bc, solver: 'dense', tolerance: RELATIVE }).analysis;
    const ref = reference(c);
    expect(ref.components.length).toBeGreaterThan(1);
    expect({ flexes: ref.flexes, selfStresses: ref.selfStresses, certified: ref.certified }).toEqual({
      flexes: whole.flexes,
      selfStresses: whole.selfStresses,
      certified: whole.status.certified,
    });
    expect(ref.decision.sigmaMax / whole.sigmaMax).toBeCloseTo(1, 12);
    expect(ref.decision.gap.kept! / whole.gap.kept!).toBeCloseTo(1, 9);
  });

  it('every case has a count by hand (the bead counts are plain to count)', () => {
    for (const c of BEAD_CASES) expect(c.hand, c.key).not.toBeNull();
  });
});

// ---------------------------------------------------------------------------------------------
// 2. Deformed kagome near the regular point, and easy cases

function galleryCase(spec: string, cells: [number, number], bc: string, easy = false): Case {
  return { key: `${spec} ${cells.join('x')} ${bc}`, framework: buildGallery(spec), cells, bc, hand: null, dense: true, paths: allPaths(bc), easy };
}

describe('deformed kagome near the regular point', SLOW, () => {
  [
    galleryCase('gallery:deformed-kagome?x1=0.0015&x2=0.0015&x3=0&z=0', [12, 12], 'periodic'),
    galleryCase('gallery:deformed-kagome?x1=0.001&x2=0.001&x3=0.001&z=0', [10, 10], 'periodic'),
    galleryCase('gallery:deformed-kagome?x1=0&x2=0&x3=0.003&z=0', [10, 10], 'free'),
  ].forEach(defineCase);
});

describe('easy gallery lattices: a wide dense gap, so the fast paths certify', SLOW, () => {
  [
    galleryCase('gallery:kagome', [10, 10], 'free', true),
    galleryCase('gallery:kagome', [10, 10], 'periodic', true),
    galleryCase('gallery:square', [10, 10], 'free', true),
    galleryCase('gallery:square', [10, 10], 'pinned', true),
    galleryCase('gallery:square', [10, 10], 'x=free,y=twist:0.25', true),
    galleryCase('gallery:triangular', [10, 10], 'free', true),
    galleryCase('gallery:triangular', [10, 10], 'twist:0.3,0.1', true),
  ].forEach(defineCase);
});

// ---------------------------------------------------------------------------------------------
// 3. sparseSpaces on banded matrices with prescribed singular values

interface Spectrum {
  label: string;
  m: number;
  n: number;
  /** Exact zeros among the min(m, n) singular values. */
  zeros: number;
  /** Extra values (relative to σ_max = 1) placed near the cut 1e-9. */
  near: number[];
  complex: boolean;
}

/**
 * min(m, n) singular values with σ_max = 1: `zeros` exact zeros, 20 values just above
 * √τ = 1e-3 (τ = (1e-3·σ_max)², the inertia shift), 8 between the cut and √τ (2e-7 and 3e-6
 * clusters), the `near` values, the rest log-uniform in [1e-2, 0.9]; shuffled.
 */
function spectrumOf(s: Spectrum, seed: number): number[] {
  const rand = rng(seed);
  const special = [1, ...Array.from({ length: 20 }, (_, j) => 1e-3 * (1 + 0.01 * (j + 1)))];
  for (let j = 0; j < 4; j++) special.push(2e-7 * (1 + 0.1 * j), 3e-6 * (1 + 0.1 * j));
  special.push(...s.near, ...new Array<number>(s.zeros).fill(0));
  const k = Math.min(s.m, s.n);
  const sigma = [...special];
  while (sigma.length < k) sigma.push(Math.exp(Math.log(1e-2) + rand() * (Math.log(0.9) - Math.log(1e-2))));
  for (let i = sigma.length - 1; i > 0; i--) {
    const j = Math.floor(rand() * (i + 1));
    [sigma[i], sigma[j]] = [sigma[j], sigma[i]];
  }
  return sigma;
}

const SPECTRA: Spectrum[] = [
  { label: '420×400, no zeros', m: 420, n: 400, zeros: 0, near: [], complex: false },
  { label: '420×400, 7 zeros', m: 420, n: 400, zeros: 7, near: [], complex: false },
  { label: '420×400, 40 zeros', m: 420, n: 400, zeros: 40, near: [], complex: false },
  { label: '420×400, 7 zeros, σ at 1.5× and 0.6× the cut', m: 420, n: 400, zeros: 7, near: [1.5e-9, 0.6e-9], complex: false },
  { label: '420×400, no zeros, σ at 1.9× the cut', m: 420, n: 400, zeros: 0, near: [1.9e-9], complex: false },
  { label: '420×400, 40 zeros, σ at 0.55× the cut', m: 420, n: 400, zeros: 40, near: [0.55e-9], complex: false },
  { label: '420×400, 7 zeros, σ at 50× and 1/50× the cut', m: 420, n: 400, zeros: 7, near: [5e-8, 2e-11], complex: false },
  { label: '380×400 (wide), 7 zeros', m: 380, n: 400, zeros: 7, near: [], complex: false },
  // complex cases are smaller: each costs about four times a real one
  { label: '210×200 complex, 7 zeros', m: 210, n: 200, zeros: 7, near: [], complex: true },
  { label: '210×200 complex, 40 zeros, σ at 1.5× and 0.6× the cut', m: 210, n: 200, zeros: 40, near: [1.5e-9, 0.6e-9], complex: true },
  { label: '190×200 (wide) complex, no zeros, σ at 1.2× the cut', m: 190, n: 200, zeros: 0, near: [1.2e-9], complex: true },
];

describe('sparseSpaces on Givens-banded matrices with prescribed singular values', SLOW, () => {
  SPECTRA.forEach((s, index) => {
    const seed = 100 + index;
    const sigma = spectrumOf(s, seed);
    const R = givensBanded(sigma, s.m, s.n, { sweeps: 3, complex: s.complex, seed });
    const tol = RELATIVE * 1; // σ_max = 1
    const trueRank = sigma.filter((v) => v > tol).length;
    const trueKept = Math.min(...sigma.filter((v) => v > tol));
    const nearCut = sigma.some((v) => v > 0 && v < NEAR_CUT_FACTOR * tol && v > tol / NEAR_CUT_FACTOR);
    let cached: ReturnType<typeof sparseSpaces> | undefined;
    const solve = () => (cached ??= sparseSpaces(R, { relative: RELATIVE, memoryLimit: MEMORY }));

    describe(s.label, () => {
      it(`rank ${trueRank}, or not certified and flagged${nearCut ? '; flagged (a σ within 100× of the cut)' : ''}`, () => {
        const out = solve();
        // flag as analyseSupercell does (src/flex/spaces.ts)
        const flagged = flagDecision(out.decision, out.status.certified, out.status.reasons);
        const where = `${s.label}: rank ${out.decision.rank} (true ${trueRank}), certified ${out.status.certified}, kept ${out.decision.gap.kept}, dropped ${out.decision.gap.dropped}, reasons [${flagged.reasons.join('; ')}]`;
        if (out.decision.rank !== trueRank) {
          expect(out.status.certified, `${where} — a wrong rank must not be certified`).toBe(false);
          expect(flagged.decision.gap.ambiguous, where).toBe(true);
          expect(flagged.reasons.length, where).toBeGreaterThan(0);
        }
        if (nearCut) {
          expect(flagged.decision.gap.ambiguous, `${where} — a σ within ${NEAR_CUT_FACTOR}× of the cut must be flagged`).toBe(true);
          expect(flagged.reasons.length, where).toBeGreaterThan(0);
        }
        expect(out.decision.sigmaMax).toBeCloseTo(1, 10);
      });

      it('a certified count reports the true smallest kept σ (within 1 %) and drops only σ ≤ the cut', () => {
        const out = solve();
        if (!out.status.certified) return; // the contract above covers an uncertified count
        expect(out.decision.gap.kept, s.label).not.toBeNull();
        expect(Math.abs(out.decision.gap.kept! - trueKept) / trueKept, `${s.label}: kept ${out.decision.gap.kept}, true ${trueKept}`).toBeLessThan(0.01);
        if (out.decision.gap.dropped !== null) expect(out.decision.gap.dropped, s.label).toBeLessThanOrEqual(out.decision.tolerance.absolute);
      });
    });
  });

  it.each(SPECTRA.filter((x) => x.near.includes(1.5e-9) && x.near.includes(0.6e-9)))('the construction keeps the prescribed singular values: $label (dense reference)', (s) => {
    const seed = 100 + SPECTRA.indexOf(s);
    const sigma = spectrumOf(s, seed);
    const R = givensBanded(sigma, s.m, s.n, { sweeps: 3, complex: s.complex, seed });
    // a band of a few entries per row, not a dense matrix
    expect(R.rowPtr[R.rows] / R.rows).toBeLessThan(20);
    const ref = denseReference(R, RELATIVE);
    expect(ref.rank).toBe(sigma.filter((v) => v > RELATIVE).length);
    expect(ref.decision.sigmaMax).toBeCloseTo(1, 12);
    // the values nearest the cut come back to rounding
    expect(ref.decision.gap.kept! / 1.5e-9).toBeCloseTo(1, 4);
    expect(ref.decision.gap.dropped! / 0.6e-9).toBeCloseTo(1, 4);
  });
});

// ---------------------------------------------------------------------------------------------
// 4. Cross-check of the dense reference against numpy
// (NumPy: C. R. Harris et al., "Array programming with NumPy", Nature 585, 357–362 (2020))

describe('dense reference against numpy.linalg.svd of the whole matrix (optional)', SLOW, () => {
  const missing = numpyMissing();
  const cases: Case[] = [
    beadCase(bead(2.8e-3), [10, 10], 'free', true),
    beadCase(bead(2.8e-3), [6, 20], 'x=periodic,y=free', true),
    galleryCase('gallery:deformed-kagome?x1=0.0015&x2=0.0015&x3=0&z=0', [12, 12], 'periodic'),
  ];
  for (const c of cases) {
    it(`${c.key}: the same rank at σ > 1e-9·σ_max`, (ctx) => {
      if (missing) ctx.skip(`numpy cross-check skipped: ${missing}`);
      const R = rigidityMatrix(buildSupercell(c.framework, c.cells, parseBoundary(c.bc)));
      const np = numpyRank(R, RELATIVE);
      const ref = reference(c);
      expect(np.sigmaMax).toBeCloseTo(ref.decision.sigmaMax, 10);
      expect(np.rank).toBe(ref.rank);
    });
  }
});
