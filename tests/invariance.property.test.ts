/**
 * Results that do not depend on where a framework sits, its units or how it is written down:
 * the counts (flexes, self-stresses, trivial flexes, rank), the relative gap and the ambiguity
 * flag must come out the same after a translation, a rotation, a change of scale, a relabelling
 * of the joints (and reordering or reversing of the bars), or a change of lattice basis.
 * Property-based (fast-check) over gallery frameworks and boundaries at ≤ 4×4 cells, plus fixed
 * cases at 10×10 where 'auto' picks the sparse or Bloch solvers.
 *
 * Geometric facts used (common practice): rigidity is invariant under Euclidean motions and
 * scaling; a unimodular change of basis describes the same lattice.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { count } from '../src/analysis.js';
import { classifyFlexes } from '../src/flex/classify.js';
import type { FlexAnalysis } from '../src/flex/spaces.js';
import type { SolverChoice } from '../src/flex/solver.js';
import { buildGallery } from '../src/framework/gallery.js';
import { resolveBars, type Framework, type Vec2 } from '../src/framework/types.js';
import { phaseMap } from '../src/spectrum/phasemap.js';

const GALLERY = [
  'gallery:square',
  'gallery:square-diagonal',
  'gallery:triangular',
  'gallery:kagome',
  'gallery:deformed-kagome',
  'gallery:twisted-kagome',
  'gallery:honeycomb',
  'gallery:rotating-squares',
  'gallery:rotating-squares-tilted',
];
const BOUNDARIES = ['free', 'pinned', 'periodic', 'twist:0.25,0', 'x=periodic,y=free'];
const RUNS = 40;
/**
 * Largest translation tried, in cell sizes (the requirement). Validation judges a bar
 * against the lattice vectors and the distance between its ends, not against its absolute
 * position, so a far-away placement is accepted; the translated input is itself rounded at the
 * offset's size, so each case is compared with that rounded input moved back exactly.
 */
const MAX_OFFSET = 1e12;

const frameworkArb = fc.constantFrom(...GALLERY);
const boundaryArb = fc.constantFrom(...BOUNDARIES);
const cellsArb = fc.tuple(fc.integer({ min: 1, max: 4 }), fc.integer({ min: 1, max: 4 }));
const solverArb = fc.constantFrom<SolverChoice>('dense', 'auto');

function analyse(fw: Framework, cells: [number, number], bc: string, solver: SolverChoice = 'dense'): FlexAnalysis {
  return count({ framework: fw, cells, boundary: bc, solver }).analysis;
}

function countsOf(a: FlexAnalysis) {
  return { flexes: a.flexes, selfStresses: a.selfStresses, trivialFlexes: a.trivialFlexes, rank: a.rank };
}

/** The smallest kept σ relative to σ_max: the gap as a scale-free number (null at rank 0). */
function relativeKept(a: FlexAnalysis): number | null {
  return a.gap.kept === null ? null : a.gap.kept / a.sigmaMax;
}

/**
 * Same counts, same ambiguity flag, and the same relative gap to rounding (the reference and the
 * transformed framework differ by rounding of their coordinates, ~1e-16 relative).
 */
function expectSameResult(got: FlexAnalysis, ref: FlexAnalysis, where: string): void {
  expect(countsOf(got), where).toEqual(countsOf(ref));
  expect(got.gap.ambiguous, where).toBe(ref.gap.ambiguous);
  const g = relativeKept(got);
  const r = relativeKept(ref);
  if (r === null) expect(g, where).toBeNull();
  else expect(Math.abs(g! - r), where).toBeLessThanOrEqual(1e-9 * r);
}

const mapPoints = (fw: Framework, f: (v: Vec2) => Vec2, lattice = true): Framework => ({
  ...fw,
  lattice: lattice ? [f(fw.lattice[0]), f(fw.lattice[1])] : fw.lattice,
  joints: fw.joints.map((j) => ({ id: j.id, at: f(j.at) })),
});

/** Every joint moved by t (the lattice vectors are differences and stay). */
const translate = (fw: Framework, t: Vec2) => mapPoints(fw, ([x, y]) => [x + t[0], y + t[1]], false);
const rotate = (fw: Framework, angle: number) => {
  const c = Math.cos(angle);
  const s = Math.sin(angle);
  return mapPoints(fw, ([x, y]) => [c * x - s * y, s * x + c * y]);
};
const scale = (fw: Framework, k: number) => mapPoints(fw, ([x, y]) => [k * x, k * y]);
const cellSize = (fw: Framework) => Math.max(Math.hypot(...fw.lattice[0]), Math.hypot(...fw.lattice[1]));

/**
 * A framework translated by t = (u, v) cell sizes, and the reference it is compared with.
 * Adding t rounds every coordinate to the spacing of doubles near |t| (about 2e-6 at 1e10):
 * the translated input is a slightly different framework (kagome's straight lines bend and its
 * line flexes rightly disappear). The reference is that same framework moved back by −t, which
 * is exact once |t| is at least twice the coordinates (Sterbenz's lemma, common practice), so
 * the two describe exactly the same framework placed differently.
 */
function translatedPair(fw: Framework, u: number, v: number): { moved: Framework; reference: Framework } {
  const d = cellSize(fw);
  const t: Vec2 = [u * d, v * d];
  const moved = translate(fw, t);
  return { moved, reference: translate(moved, [-t[0], -t[1]]) };
}

/**
 * The same framework in the lattice basis a'_i = Σ_j M_ij a_j (M an integer matrix with
 * det ±1). A bar's cell offset s (in the old basis) becomes t = M⁻ᵀ s; positions stay.
 */
function changeBasis(fw: Framework, M: [[number, number], [number, number]]): Framework {
  const [[a, b], [c, d]] = M;
  const det = a * d - b * c;
  if (Math.abs(det) !== 1) throw new Error(`not unimodular: det ${det}`);
  const [a1, a2] = fw.lattice;
  const lattice: [Vec2, Vec2] = [
    [a * a1[0] + b * a2[0], a * a1[1] + b * a2[1]],
    [c * a1[0] + d * a2[0], c * a1[1] + d * a2[1]],
  ];
  // M⁻¹ = [[d, −b], [−c, a]] / det, so t = M⁻ᵀ s = ([d·s1 − c·s2], [−b·s1 + a·s2]) / det
  const bars = fw.bars.map((bar) => {
    const [s1, s2] = bar.shift;
    const shift: [number, number] = [(d * s1 - c * s2) / det + 0, (-b * s1 + a * s2) / det + 0];
    return { ...bar, shift };
  });
  return { ...fw, lattice, bars };
}

/** A unimodular matrix as a product of shears [[1, k], [0, 1]] and [[1, 0], [k, 1]], |k| ≤ 2. */
const unimodularArb = fc
  .array(fc.tuple(fc.boolean(), fc.integer({ min: -2, max: 2 })), { minLength: 1, maxLength: 3 })
  .map((steps) => {
    let M: [[number, number], [number, number]] = [
      [1, 0],
      [0, 1],
    ];
    for (const [upper, k] of steps) {
      const E: [[number, number], [number, number]] = upper
        ? [
            [1, k],
            [0, 1],
          ]
        : [
            [1, 0],
            [k, 1],
          ];
      M = [
        [E[0][0] * M[0][0] + E[0][1] * M[1][0], E[0][0] * M[0][1] + E[0][1] * M[1][1]],
        [E[1][0] * M[0][0] + E[1][1] * M[1][0], E[1][0] * M[0][1] + E[1][1] * M[1][1]],
      ];
    }
    return M;
  });

/** Joints permuted and renamed, bars reordered and some written the other way round. */
function relabel(fw: Framework, perm: number[], ids: string[], barOrder: number[], flips: boolean[]): Framework {
  const rename = new Map(perm.map((old, k) => [fw.joints[old].id, ids[k]]));
  return {
    ...fw,
    joints: perm.map((old, k) => ({ id: ids[k], at: [...fw.joints[old].at] as Vec2 })),
    bars: barOrder.map((b, r) => {
      const bar = fw.bars[b];
      const from = rename.get(bar.from)!;
      const to = rename.get(bar.to)!;
      // the bar from `from` in cell c to `to` in cell c + s is the bar from `to` in c + s to `from` in c
      return flips[r] ? { from: to, to: from, shift: [-bar.shift[0] + 0, -bar.shift[1] + 0] as [number, number] } : { from, to, shift: [...bar.shift] as [number, number] };
    }),
  };
}

describe('counts do not depend on placement', () => {
  it(`translation by up to ${MAX_OFFSET.toExponential()} cell sizes (property)`, () => {
    const offset = fc.double({ min: -MAX_OFFSET, max: MAX_OFFSET, noNaN: true });
    fc.assert(
      fc.property(frameworkArb, boundaryArb, cellsArb, solverArb, offset, offset, (spec, bc, cells, solver, u, v) => {
        const { moved, reference } = translatedPair(buildGallery(spec), u, v);
        const where = `${spec} ${cells.join('x')} ${bc} ${solver} moved by (${u}, ${v}) cells`;
        const ref = analyse(reference, cells, bc, solver);
        const got = analyse(moved, cells, bc, solver);
        expectSameResult(got, ref, where);
      }),
      { numRuns: RUNS },
    );
  });

  it('translation by up to 1000 cell sizes keeps the counts of the framework at the origin (property)', () => {
    // Rounding at |t| ≤ 1000 moves joints by ≤ 1e-13 cells, far below the 1e-9 rank cut.
    const offset = fc.double({ min: -1000, max: 1000, noNaN: true });
    fc.assert(
      fc.property(frameworkArb, boundaryArb, cellsArb, offset, offset, (spec, bc, cells, u, v) => {
        const fw = buildGallery(spec);
        const d = cellSize(fw);
        expectSameResult(analyse(translate(fw, [u * d, v * d]), cells, bc), analyse(fw, cells, bc), `${spec} ${cells.join('x')} ${bc} moved by (${u}, ${v}) cells`);
      }),
      { numRuns: RUNS },
    );
  });

  it(`the rotation stays a trivial flex far from the origin: every joint moved by (4e9, −2.5e9) and ${MAX_OFFSET.toExponential()} cells`, () => {
    for (const spec of ['gallery:kagome', 'gallery:triangular', 'gallery:deformed-kagome', 'gallery:honeycomb']) {
      for (const t of [
        [4e9, -2.5e9],
        [MAX_OFFSET, MAX_OFFSET],
      ] as Vec2[]) {
        const fw = buildGallery(spec);
        const moved = translate(fw, t);
        const reference = translate(moved, [-t[0], -t[1]]);
        const got = analyse(moved, [4, 3], 'free');
        expect(got.rigidMotionsTested, spec).toEqual(['translation x', 'translation y', 'rotation']);
        expect(got.trivialFlexes, `${spec} at ${t}`).toBe(3);
        expectSameResult(got, analyse(reference, [4, 3], 'free'), `${spec} at ${t}`);
      }
    }
  });

  it('rotation by any angle (property)', () => {
    fc.assert(
      fc.property(frameworkArb, boundaryArb, cellsArb, solverArb, fc.double({ min: 0, max: 2 * Math.PI, noNaN: true }), (spec, bc, cells, solver, angle) => {
        const fw = buildGallery(spec);
        expectSameResult(analyse(rotate(fw, angle), cells, bc, solver), analyse(fw, cells, bc, solver), `${spec} ${cells.join('x')} ${bc} ${solver} turned by ${angle}`);
      }),
      { numRuns: RUNS },
    );
  });
});

describe('counts do not depend on units', () => {
  /** Also: σ_max and the absolute cut are reported in the input's units (they scale with k). */
  function expectScaled(got: FlexAnalysis, ref: FlexAnalysis, k: number, where: string): void {
    expectSameResult(got, ref, where);
    expect(Math.abs(got.sigmaMax / k - ref.sigmaMax), where).toBeLessThanOrEqual(1e-12 * ref.sigmaMax);
    expect(Math.abs(got.tolerance.absolute / k - ref.tolerance.absolute), where).toBeLessThanOrEqual(1e-12 * ref.tolerance.absolute);
    if (ref.gap.kept !== null) expect(Math.abs(got.gap.kept! / k - ref.gap.kept), where).toBeLessThanOrEqual(1e-9 * ref.gap.kept);
  }

  it('scaling by 10^e, e in [−12, 12] (property)', () => {
    fc.assert(
      fc.property(frameworkArb, boundaryArb, cellsArb, solverArb, fc.double({ min: -12, max: 12, noNaN: true }), (spec, bc, cells, solver, e) => {
        const fw = buildGallery(spec);
        const k = 10 ** e;
        expectScaled(analyse(scale(fw, k), cells, bc, solver), analyse(fw, cells, bc, solver), k, `${spec} ${cells.join('x')} ${bc} ${solver} scaled by 1e${e}`);
      }),
      { numRuns: RUNS },
    );
  });

  it('scaling by 1e100 and 1e-150 on every boundary (4×4, dense and auto)', () => {
    for (const spec of ['gallery:kagome', 'gallery:square', 'gallery:twisted-kagome']) {
      const fw = buildGallery(spec);
      for (const bc of BOUNDARIES)
        for (const solver of ['dense', 'auto'] as const) {
          const ref = analyse(fw, [4, 4], bc, solver);
          for (const k of [1e100, 1e-150]) expectScaled(analyse(scale(fw, k), [4, 4], bc, solver), ref, k, `${spec} 4x4 ${bc} ${solver} scaled by ${k}`);
        }
    }
  });

  it('lengthScale is a power of two within a factor √2 of the RMS bar length', () => {
    for (const spec of GALLERY)
      for (const k of [1, 3e7, 1e100, 1e-150]) {
        const fw = scale(buildGallery(spec), k);
        const bars = resolveBars(fw);
        const rms = Math.sqrt(bars.reduce((s, b) => s + (b.vector[0] / k) ** 2 + (b.vector[1] / k) ** 2, 0) / bars.length) * k;
        const L = analyse(fw, [2, 2], 'free').lengthScale;
        expect(Number.isInteger(Math.log2(L)), `${spec} ×${k}`).toBe(true);
        expect(L / rms, `${spec} ×${k}`).toBeLessThanOrEqual(Math.SQRT2 * (1 + 1e-12));
        expect(rms / L, `${spec} ×${k}`).toBeLessThanOrEqual(Math.SQRT2 * (1 + 1e-12));
      }
  });

  it('the classifier finds the same classes at 1e100 and 1e-150 (its cuts follow the units of R)', () => {
    const fw = buildGallery('gallery:kagome');
    for (const bc of ['free', 'periodic']) {
      const ref = count({ framework: fw, cells: [4, 4], boundary: bc });
      const want = classifyFlexes(ref.supercell, ref.analysis).counts;
      for (const k of [1e100, 1e-150]) {
        const r = count({ framework: scale(fw, k), cells: [4, 4], boundary: bc });
        expect(classifyFlexes(r.supercell, r.analysis).counts, `${bc} ×${k}`).toEqual(want);
      }
    }
  });

  it('the phase map reports σ in the input units at 1e100 and 1e-150', () => {
    const fw = buildGallery('gallery:kagome');
    const ref = phaseMap(fw, { grid: 8 });
    for (const k of [1e100, 1e-150]) {
      const m = phaseMap(scale(fw, k), { grid: 8 });
      expect(Array.from(m.kernel)).toEqual(Array.from(ref.kernel));
      expect(m.genericKernel).toBe(ref.genericKernel);
      expect(Math.abs(m.sigmaMax / k - ref.sigmaMax)).toBeLessThanOrEqual(1e-12 * ref.sigmaMax);
      expect(Math.abs(m.tolerance.absolute / k - ref.tolerance.absolute)).toBeLessThanOrEqual(1e-12 * ref.tolerance.absolute);
      m.largest.forEach((v, i) => expect(Math.abs(v / k - ref.largest[i])).toBeLessThanOrEqual(1e-12 * ref.sigmaMax));
      expect(m.zeroSet.lines.map((L) => [L.p, L.q, L.c])).toEqual(ref.zeroSet.lines.map((L) => [L.p, L.q, L.c]));
    }
  });
});

describe('counts do not depend on the description', () => {
  it('joints permuted and renamed, bars reordered and reversed (property)', () => {
    const caseArb = frameworkArb.chain((spec) => {
      const fw = buildGallery(spec);
      const S = fw.joints.length;
      const B = fw.bars.length;
      const idx = (n: number) => Array.from({ length: n }, (_, i) => i);
      return fc.record({
        spec: fc.constant(spec),
        perm: fc.shuffledSubarray(idx(S), { minLength: S, maxLength: S }),
        ids: fc.uniqueArray(
          fc.string({ minLength: 1, maxLength: 6 }).filter((s) => s.trim() !== ''),
          { minLength: S, maxLength: S },
        ),
        barOrder: fc.shuffledSubarray(idx(B), { minLength: B, maxLength: B }),
        flips: fc.array(fc.boolean(), { minLength: B, maxLength: B }),
      });
    });
    fc.assert(
      fc.property(caseArb, boundaryArb, cellsArb, solverArb, ({ spec, perm, ids, barOrder, flips }, bc, cells, solver) => {
        const fw = buildGallery(spec);
        const where = `${spec} ${cells.join('x')} ${bc} ${solver} joints ${perm} as ${JSON.stringify(ids)}, bars ${barOrder}`;
        expectSameResult(analyse(relabel(fw, perm, ids, barOrder, flips), cells, bc, solver), analyse(fw, cells, bc, solver), where);
      }),
      { numRuns: RUNS },
    );
  });

  // An N1×N2 supercell with periodic sides is the torus R²/T with T the lattice of translations
  // spanned by N1·a1 and N2·a2. After the change of basis a'_i = Σ_j M_ij a_j (det M = ±1),
  // N×N periodic cells give T' spanned by N·a'_1, N·a'_2 = N·M·(a1, a2), and since M is
  // invariant on Z² (unimodular), T' = N·Z²·(a1, a2) = T: the same torus for every N. (For
  // N1 ≠ N2 this can fail: with a'_2 = a2 + 2a1, T' is spanned by N1·a1 and N2·a2 + 2N2·a1,
  // equal to T exactly when N1 divides 2·N2.) On a twisted torus the Bloch condition
  // u(x + N·a'_i) = e(Σ_j M_ij θ_j)·u(x) carries the twists θ' = M·θ (mod 1).
  it('the square grid with a1 = (1,0), a2 = (2,1) on an N×N torus: same counts as a1 = (1,0), a2 = (0,1)', () => {
    const fw = buildGallery('gallery:square');
    const sheared = changeBasis(fw, [
      [1, 0],
      [2, 1],
    ]);
    expect(sheared.lattice).toEqual([
      [1, 0],
      [2, 1],
    ]);
    for (let N = 1; N <= 6; N++)
      for (const solver of ['dense', 'auto'] as const) {
        expectSameResult(analyse(sheared, [N, N], 'periodic', solver), analyse(fw, [N, N], 'periodic', solver), `square ${N}x${N} ${solver}`);
        // θ = (0.25, 0) becomes θ' = (0.25, 2·0.25 + 0) = (0.25, 0.5)
        expectSameResult(analyse(sheared, [N, N], 'twist:0.25,0.5', solver), analyse(fw, [N, N], 'twist:0.25,0', solver), `square ${N}x${N} twisted ${solver}`);
      }
    // N1 = 2 divides 2·N2 = 6: the 2×3 supercells are the same torus too
    expectSameResult(analyse(sheared, [2, 3], 'periodic'), analyse(fw, [2, 3], 'periodic'), 'square 2x3');
  });

  it('any unimodular change of basis on an N×N periodic or twisted torus (property)', () => {
    const thetaArb = fc.constantFrom<[number, number]>([0, 0], [0.25, 0], [0.5, 0.5], [0.125, 0.375]);
    fc.assert(
      fc.property(frameworkArb, unimodularArb, fc.integer({ min: 1, max: 4 }), thetaArb, solverArb, (spec, M, N, theta, solver) => {
        const fw = buildGallery(spec);
        const frac = (x: number) => x - Math.floor(x);
        const t2: [number, number] = [frac(M[0][0] * theta[0] + M[0][1] * theta[1]), frac(M[1][0] * theta[0] + M[1][1] * theta[1])];
        const bc = (t: [number, number]) => (t[0] === 0 && t[1] === 0 ? 'periodic' : `twist:${t[0]},${t[1]}`);
        const where = `${spec} ${N}x${N} ${bc(theta)} ${solver} basis ${JSON.stringify(M)}`;
        expectSameResult(analyse(changeBasis(fw, M), [N, N], bc(t2), solver), analyse(fw, [N, N], bc(theta), solver), where);
      }),
      { numRuns: RUNS },
    );
  });
});

describe('invariance at 10×10, where auto picks the sparse and Bloch solvers', () => {
  const cells: [number, number] = [10, 10];
  for (const spec of ['gallery:kagome', 'gallery:square']) {
    it(`${spec}: scaled by 1e100 and 1e-150, moved by ${MAX_OFFSET.toExponential()} cells, turned, on free, periodic, strip and twisted boundaries`, () => {
      const fw = buildGallery(spec);
      const { moved, reference } = translatedPair(fw, MAX_OFFSET, -0.73 * MAX_OFFSET);
      for (const bc of ['free', 'periodic', 'x=periodic,y=free', 'twist:0.25,0']) {
        const ref = analyse(fw, cells, bc, 'auto');
        expect(ref.solver, bc).toBe(bc === 'free' ? 'sparse' : 'bloch');
        for (const k of [1e100, 1e-150]) {
          const got = analyse(scale(fw, k), cells, bc, 'auto');
          expectSameResult(got, ref, `${bc} ×${k}`);
          expect(Math.abs(got.sigmaMax / k - ref.sigmaMax), `${bc} ×${k}`).toBeLessThanOrEqual(1e-9 * ref.sigmaMax);
        }
        expectSameResult(analyse(rotate(fw, 2.1), cells, bc, 'auto'), ref, `${bc} turned`);
        expectSameResult(analyse(moved, cells, bc, 'auto'), analyse(reference, cells, bc, 'auto'), `${bc} moved`);
      }
    });
  }

  it("gallery:kagome in the basis a'_2 = a2 + 2·a1 on the 10×10 torus (Bloch) matches the standard one", () => {
    const fw = buildGallery('gallery:kagome');
    const sheared = changeBasis(fw, [
      [1, 0],
      [2, 1],
    ]);
    expectSameResult(analyse(sheared, cells, 'periodic', 'auto'), analyse(fw, cells, 'periodic', 'auto'), 'kagome 10x10 periodic');
  });
});
