/** Side weights: the non-trivial flex space's projector weight, attributed to the nearest side. */
import { describe, expect, it } from 'vitest';
import { count } from '../src/analysis.js';
import { sideWeights, type SideWeights } from '../src/flex/side-weights.js';
import { buildGallery } from '../src/framework/gallery.js';
import type { CVec } from '../src/linalg/complex.js';
import { nullSpace, singularValues } from '../src/linalg/dense.js';
import { rigidityMatrix } from '../src/supercell/rigidity.js';
import { rng } from './helpers.js';

function run(spec: string, cells: [number, number], bc: string) {
  return count({ framework: buildGallery(spec), cells, boundary: bc });
}

const total = (w: SideWeights) => (w.bottom ?? 0) + (w.top ?? 0) + (w.left ?? 0) + (w.right ?? 0);

/** W = V·U for a random k×k unitary U (Gram–Schmidt of a random complex matrix). */
function rotateBasis(vs: CVec[], seed: number): CVec[] {
  const r = rng(seed);
  const k = vs.length;
  const cols: { re: number[]; im: number[] }[] = [];
  for (let m = 0; m < k; m++) {
    const c = { re: Array.from({ length: k }, () => r() - 0.5), im: Array.from({ length: k }, () => r() - 0.5) };
    for (const q of cols) {
      let dr = 0;
      let di = 0; // ⟨q, c⟩
      for (let l = 0; l < k; l++) {
        dr += q.re[l] * c.re[l] + q.im[l] * c.im[l];
        di += q.re[l] * c.im[l] - q.im[l] * c.re[l];
      }
      for (let l = 0; l < k; l++) {
        c.re[l] -= dr * q.re[l] - di * q.im[l];
        c.im[l] -= dr * q.im[l] + di * q.re[l];
      }
    }
    const nrm = Math.sqrt(c.re.reduce((s, x, l) => s + x * x + c.im[l] ** 2, 0));
    cols.push({ re: c.re.map((x) => x / nrm), im: c.im.map((x) => x / nrm) });
  }
  const n = vs[0].re.length;
  return cols.map((u) => {
    const w = { re: new Float64Array(n), im: new Float64Array(n) };
    vs.forEach((v, l) => {
      for (let i = 0; i < n; i++) {
        w.re[i] += v.re[i] * u.re[l] - v.im[i] * u.im[l];
        w.im[i] += v.re[i] * u.im[l] + v.im[i] * u.re[l];
      }
    });
    return w;
  });
}

describe('side weights', () => {
  it('sum to flexes − trivial flexes (free, strip, pinned, twisted)', () => {
    const cases: [string, [number, number], string][] = [
      ['gallery:kagome', [5, 5], 'free'],
      ['gallery:square', [4, 6], 'free'],
      ['gallery:twisted-kagome?twist=15', [6, 6], 'free'],
      ['gallery:kagome', [4, 5], 'bottom=pinned'],
      ['gallery:deformed-kagome?x1=0.1&x2=-0.1&x3=0.1&z=0', [5, 6], 'x=periodic,y=free'],
      ['gallery:kagome', [5, 6], 'x=twist:0.25,y=free'],
    ];
    for (const [spec, cells, bc] of cases) {
      const { supercell, analysis } = run(spec, cells, bc);
      const w = sideWeights(supercell, analysis);
      expect(analysis.flexes - analysis.trivialFlexes).toBeGreaterThan(0);
      expect(total(w)).toBeCloseTo(analysis.flexes - analysis.trivialFlexes, 9);
      for (const v of Object.values(w)) if (v !== null) expect(v).toBeGreaterThanOrEqual(-1e-12);
    }
  });

  it('a twisted or periodic axis has no sides (null); with both axes twisted every side is null', () => {
    const a = run('gallery:kagome', [5, 6], 'x=twist:0.25,y=free');
    const w = sideWeights(a.supercell, a.analysis);
    expect(w.left).toBeNull();
    expect(w.right).toBeNull();
    expect(w.bottom).not.toBeNull();
    const b = run('gallery:kagome', [4, 4], 'periodic');
    expect(sideWeights(b.supercell, b.analysis)).toEqual({ bottom: null, top: null, left: null, right: null });
  });

  it('do not depend on the basis: a random unitary rotation of it gives the same weights to 1e-10', () => {
    const cases: [string, [number, number], string][] = [
      ['gallery:twisted-kagome?twist=15', [6, 6], 'free'], // 3 rigid motions removed
      ['gallery:deformed-kagome?x1=0.1&x2=-0.1&x3=0.1&z=0', [6, 6], 'x=periodic,y=free'], // 2 translations
      ['gallery:kagome', [5, 5], 'x=twist:0.25,y=free'], // complex basis
    ];
    cases.forEach(([spec, cells, bc], c) => {
      const { supercell, analysis } = run(spec, cells, bc);
      const w = sideWeights(supercell, analysis);
      const rotated = rotateBasis(analysis.flexBasis().vectors, 100 + c);
      const w2 = sideWeights(supercell, { trivialFlexes: analysis.trivialFlexes, flexBasis: () => ({ real: false, vectors: rotated }) });
      for (const side of ['bottom', 'top', 'left', 'right'] as const) {
        if (w[side] === null) expect(w2[side]).toBeNull();
        else expect(Math.abs((w2[side] as number) - (w[side] as number))).toBeLessThan(1e-10);
      }
    });
  });

  it('symmetric samples give symmetric weights', () => {
    // Square grid N×N, free: its mirror and diagonal symmetries map the sides onto each other.
    const sq = run('gallery:square', [5, 5], 'free');
    const s = sideWeights(sq.supercell, sq.analysis);
    for (const v of [s.top, s.left, s.right]) expect(v).toBeCloseTo(s.bottom as number, 10);
    // Regular kagome, free N1×N2 (derived here): the joint map cell (i, j) → (N1−1−i, N2−1−j),
    // same site, velocity negated, sends the flex on each straight bond line to the flex on the
    // image line (a uniform slide along the line plus a site-wise constant shear, reference note
    // §3), so it keeps ker R and its projector's joint weights; the translations' and the
    // rotation's cell weights are symmetric under it too. Hence bottom = top, left = right.
    for (const cells of [[4, 6], [5, 5]] as [number, number][]) {
      const k = run('gallery:kagome', cells, 'free');
      const w = sideWeights(k.supercell, k.analysis);
      expect(w.bottom).toBeCloseTo(w.top as number, 10);
      expect(w.left).toBeCloseTo(w.right as number, 10);
    }
    // N×N: the mirror swapping a1 and a2 maps cell (i, j) to (j, i), so also left = bottom.
    const k5 = run('gallery:kagome', [5, 5], 'free');
    const w5 = sideWeights(k5.supercell, k5.analysis);
    expect(w5.left).toBeCloseTo(w5.bottom as number, 10);
  });

  it('polarised deformed kagome, x periodic and y free: the flexes pile up on one side, as an independent projector confirms', () => {
    // C. L. Kane & T. C. Lubensky, "Topological boundary modes in isostatic lattices", Nature
    // Physics 10, 39–45 (2014); parameters and edge counts from ../shared/reference/published-checks.md
    // §5: for (x1, x2, x3, z) = (0.1, −0.1, 0.1, 0) the x-periodic strip has (bottom, top) = (2, 0)
    // zero modes per wavenumber, and (0, 2) for (0.1, 0.1, −0.1, 0).
    const cells: [number, number] = [6, 8];
    for (const [spec, heavy] of [
      ['gallery:deformed-kagome?x1=0.1&x2=-0.1&x3=0.1&z=0', 'bottom'],
      ['gallery:deformed-kagome?x1=0.1&x2=0.1&x3=-0.1&z=0', 'top'],
    ] as const) {
      const { supercell: sc, analysis } = run(spec, cells, 'x=periodic,y=free');
      const w = sideWeights(sc, analysis);
      const nonTrivial = analysis.flexes - analysis.trivialFlexes;
      const light = heavy === 'bottom' ? 'top' : 'bottom';
      expect(w[heavy] as number).toBeGreaterThan(0.9 * nonTrivial);
      expect(w[light] as number).toBeLessThan(0.1 * nonTrivial);

      // independent: dense SVD of R, its own rank cut, an explicit projector minus the two translations
      const R = rigidityMatrix(sc);
      const sv = singularValues(R);
      const rank = Array.from(sv).filter((v) => v > 1e-9 * sv[0]).length;
      const n = R.cols;
      const V = nullSpace(R, n - rank).vectors.map((v) => v.re);
      const P = (x: Float64Array) => {
        const y = new Float64Array(n);
        for (const v of V) {
          let d = 0;
          for (let i = 0; i < n; i++) d += v[i] * x[i];
          for (let i = 0; i < n; i++) y[i] += d * v[i];
        }
        return y;
      };
      const Q: Float64Array[] = [];
      for (const axis of [0, 1]) {
        const t = new Float64Array(n);
        for (let i = axis; i < n; i += 2) t[i] = 1;
        const q = P(t);
        for (const p of Q) {
          let d = 0;
          for (let i = 0; i < n; i++) d += p[i] * q[i];
          for (let i = 0; i < n; i++) q[i] -= d * p[i];
        }
        const nrm = Math.hypot(...q);
        Q.push(q.map((x) => x / nrm));
      }
      let bottom = 0;
      let top = 0;
      for (let k = 0; k < sc.jointCount; k++) {
        let wk = 0;
        for (const i of [2 * k, 2 * k + 1]) {
          for (const v of V) wk += v[i] * v[i];
          for (const q of Q) wk -= q[i] * q[i];
        }
        const j = sc.jointCells[2 * k + 1];
        const [db, dt] = [j, cells[1] - 1 - j];
        if (db < dt) bottom += wk;
        else if (dt < db) top += wk;
        else [bottom, top] = [bottom + wk / 2, top + wk / 2];
      }
      expect(V.length).toBe(analysis.flexes);
      expect(w.bottom).toBeCloseTo(bottom, 8);
      expect(w.top).toBeCloseTo(top, 8);
    }
  });
});
