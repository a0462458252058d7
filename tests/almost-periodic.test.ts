/**
 * The almost-periodic rigidity verdict. Criterion: S. A. Badri, D. Kitson & S. C. Power, "The
 * almost periodic rigidity of crystallographic bar-joint frameworks", Symmetry 6(2), 308–328
 * (2014): almost periodically infinitesimally rigid ⇔ periodically infinitesimally rigid and the
 * zero set (rigid-unit-mode spectrum) of Φ is the single phase θ = 0.
 */
import { describe, expect, it } from 'vitest';
import { buildGallery } from '../src/framework/gallery.js';
import type { Framework } from '../src/framework/types.js';
import { almostPeriodicVerdict } from '../src/spectrum/almost-periodic.js';
import { SymbolAssembler } from '../src/spectrum/symbol.js';
import { INVENTED_INVERSION, INVENTED_WEYL, symbolDeterminant } from './fixtures/invented-lattices.js';

const gallery = (spec: string) => buildGallery(`gallery:${spec}`);

const inversion = INVENTED_INVERSION;

/** The framework turned by `deg` degrees and scaled by `k` (the same framework in other units and axes). */
function turned(fw: Framework, deg: number, k: number): Framework {
  const c = Math.cos((deg * Math.PI) / 180);
  const s = Math.sin((deg * Math.PI) / 180);
  const r = (v: readonly number[]): [number, number] => [k * (c * v[0] - s * v[1]), k * (s * v[0] + c * v[1])];
  return { ...fw, lattice: [r(fw.lattice[0]), r(fw.lattice[1])], joints: fw.joints.map((j) => ({ ...j, at: r(j.at) })) };
}

describe('rigid: proved, not sampled', () => {
  it('the triangular lattice is rigid, with a certified disk around θ = 0', () => {
    // Derivation (common practice): one joint, bars p_b with shifts s_b, so ΦᴴΦ = Σ_b 4 sin²(π θ·s_b) p_b p_bᵀ.
    // With three pairwise non-parallel bars this is singular only when θ·s_b ∈ ℤ for two of them,
    // i.e. θ ≡ 0: the zero set is θ = 0 alone, and Φ(0) = 0 keeps exactly the two translations.
    const v = almostPeriodicVerdict(gallery('triangular'));
    expect(v.verdict).toBe('rigid');
    expect(v.certified).toBe(true);
    expect(v.periodic.kernel).toBe(2);
    expect(v.gamma!.radius).toBeGreaterThan(0);
    expect(v.gamma!.firstOrder).toBeGreaterThan(0);
    expect(v.search.undecidedCells).toBe(0);
    // the closed form agrees away from θ = 0: its smallest eigenvalue over a sample stays positive
    const asm = new SymbolAssembler(gallery('triangular'));
    for (let t = 1; t < 40; t++) {
      const th = [0.37 * t - Math.floor(0.37 * t), 0.61 * t - Math.floor(0.61 * t)];
      let a = 0, b = 0, d = 0;
      for (let r = 0; r < asm.rows; r++) {
        const w = 4 * Math.sin(Math.PI * (th[0] * asm.s1[r] + th[1] * asm.s2[r])) ** 2;
        a += w * asm.px[r] ** 2;
        b += w * asm.px[r] * asm.py[r];
        d += w * asm.py[r] ** 2;
      }
      expect(a * d - b * b).toBeGreaterThan(0);
    }
  });

  it('the twisted kagome is rigid at every twist tried (Sun, Souslov, Mao & Lubensky, PNAS 109, 12369 (2012): under periodic boundaries only the translations at q = 0)', () => {
    for (const twist of [3, 15, 40]) {
      const v = almostPeriodicVerdict(gallery(`twisted-kagome?twist=${twist}`));
      expect(v.verdict, `twist ${twist}`).toBe('rigid');
      expect(v.certified).toBe(true);
      expect(v.periodic.kernel).toBe(2);
    }
  });

  it('the verdict does not depend on units or orientation', () => {
    for (const fw of [gallery('twisted-kagome?twist=20'), inversion]) {
      const a = almostPeriodicVerdict(fw);
      for (const [deg, k] of [
        [37, 1e-6],
        [-120, 3e5],
      ]) {
        const b = almostPeriodicVerdict(turned(fw, deg, k));
        expect(b.verdict).toBe(a.verdict);
        expect(b.periodic.kernel).toBe(a.periodic.kernel);
      }
    }
  });
});

describe('not rigid: with the reason and a witness', () => {
  it('the square grid is periodically rigid but Φ vanishes on the lines θ1 ≡ 0 and θ2 ≡ 0', () => {
    // Derivation (common practice): Φ(θ) = diag(e^{2πiθ1} − 1, e^{2πiθ2} − 1) for bars (1, 0) and (0, 1).
    const v = almostPeriodicVerdict(gallery('square'));
    expect(v.verdict).toBe('not rigid');
    expect(v.periodic.kernel).toBe(2);
    const [t1, t2] = v.witness!.theta;
    expect(Math.min(Math.abs(Math.sin(Math.PI * t1)), Math.abs(Math.sin(Math.PI * t2)))).toBeLessThan(1e-9);
    expect(Math.hypot(t1 - Math.round(t1), t2 - Math.round(t2))).toBeGreaterThan(0.01);
  });

  it('the regular kagome is not even periodically rigid: dim ker Φ(0) = 3 (reference note §3: the translations and the counter-rotation of the triangles)', () => {
    const v = almostPeriodicVerdict(gallery('kagome'));
    expect(v.verdict).toBe('not rigid');
    expect(v.certified).toBe(true);
    expect(v.periodic.kernel).toBe(3);
  });

  it('the honeycomb has fewer bars than freedoms per cell: a flex at every phase', () => {
    const v = almostPeriodicVerdict(gallery('honeycomb'));
    expect(v.verdict).toBe('not rigid');
    expect(v.certified).toBe(true);
    expect(v.reason).toMatch(/3 rows for 4 columns/);
  });

  it('zeros between the grid points are found (an invented lattice whose zeros are curves), and det Φ vanishes there', () => {
    const asm = new SymbolAssembler(inversion);
    for (const grid of [2, 4, 32]) {
      const v = almostPeriodicVerdict(inversion, { grid });
      expect(v.verdict, `grid ${grid}`).toBe('not rigid');
      const [t1, t2] = v.witness!.theta;
      // not a grid node: the curve passes between them
      expect(Math.abs(t1 * grid - Math.round(t1 * grid)) + Math.abs(t2 * grid - Math.round(t2 * grid))).toBeGreaterThan(1e-3);
      // independent: det Φ by a dense elimination, relative to its size at a generic phase
      const [re, im] = symbolDeterminant(asm, t1, t2);
      const scale = symbolDeterminant(asm, 0.25, 0.1);
      expect(Math.hypot(re, im) / Math.hypot(scale[0], scale[1])).toBeLessThan(1e-6);
    }
  });

  it('the invented Weyl lattice has zeros away from θ = 0 (its charged points, and one at a half-turn)', () => {
    const v = almostPeriodicVerdict(INVENTED_WEYL);
    expect(v.verdict).toBe('not rigid');
    const [re, im] = symbolDeterminant(new SymbolAssembler(INVENTED_WEYL), ...v.witness!.theta);
    expect(Math.hypot(re, im)).toBeLessThan(1e-12);
  });
});

describe('undecided when the proof cannot be finished', () => {
  it('a small search budget on a nearly regular twisted kagome gives undecided, never rigid', () => {
    const v = almostPeriodicVerdict(gallery('twisted-kagome?twist=0.5'), { budget: 2000 });
    expect(v.verdict).toBe('undecided');
    expect(v.certified).toBe(false);
    expect(v.search.undecidedCells).toBeGreaterThan(0);
    expect(v.reason).toMatch(/budget/);
  });
});
