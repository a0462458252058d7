/**
 * The app's strain and self-stress views: the pure helpers (the strained cell, the drawn amount,
 * bar forces and widths of a self-stress drawing, the stress texts) and what the worker sends
 * for them (classified self-stresses with bar forces, the strain job, the prestress job).
 */
import { describe, expect, it } from 'vitest';
import { buildGallery } from '../src/framework/gallery.js';
import { conjugateTranspose, sparseMatVec } from '../src/linalg/sparse.js';
import { count } from '../src/analysis.js';
import { flexibleLattice } from '../src/strain/flexible-lattice.js';
import { parseBoundary } from '../src/supercell/boundary.js';
import { buildSupercell } from '../src/supercell/supercell.js';
import { geometryOf } from '../src/worker/geometry.js';
import { analyse, runPrestress, runStrain } from '../src/worker/compute.js';
import { cellArea, drawAmount, DRAW_STEP, DRAW_STRAIN, strainedCell, strainText } from '../src/app/strain-view.js';
import { STRESS_WIDTH, stressForceValues, stressWidths } from '../src/app/stage/scene.js';
import { macroText, stressSummary } from '../src/app/panels/results.js';
import { modesJson } from '../src/app/export/data.js';
import { defaultState } from '../src/app/state.js';
import { parseModesJson } from '../src/io/modes-read.js';

/** The periodic cell of flexibleLattice's result, as the worker draws it. */
function cellOf(spec: string, cells: [number, number]) {
  const fw = buildGallery(spec);
  const r = flexibleLattice(fw, { cells });
  const geom = geometryOf(buildSupercell(fw, cells, parseBoundary('periodic')));
  return { r, geom };
}

const barLengths = (bars: Float64Array) => Array.from({ length: bars.length / 4 }, (_, k) => Math.hypot(bars[4 * k + 2] - bars[4 * k], bars[4 * k + 3] - bars[4 * k + 1]));

describe('the strained cell', () => {
  it.each([
    ['gallery:twisted-kagome', [1, 1]],
    ['gallery:twisted-kagome', [2, 2]],
    ['gallery:square', [1, 1]],
  ] as const)('%s %j: at t = 0 the rest cell; bar lengths stationary; area rate = trace of the strain', (spec, cells) => {
    const { r, geom } = cellOf(spec, [cells[0], cells[1]]);
    expect(r.strains.length).toBeGreaterThan(0);
    for (const f of r.strains) {
      const rest = strainedCell(geom, r.lattice, f, 0);
      expect(Array.from(rest.joints)).toEqual(Array.from(geom.positions));
      // the cell at rest is centred on its joints and spanned by the lattice
      const n = geom.jointCount;
      const centroid = [0, 1].map((i) => geom.positions.filter((_, k) => k % 2 === i).reduce((p, q) => p + q, 0) / n);
      const [o, c1, c2, c3] = rest.corners;
      for (const i of [0, 1]) {
        expect((o[i] + c2[i]) / 2).toBeCloseTo(centroid[i], 12);
        expect(c1[i] - o[i]).toBeCloseTo(r.lattice[0][i], 12);
        expect(c3[i] - o[i]).toBeCloseTo(r.lattice[1][i], 12);
      }
      for (let b = 0; b < geom.barA.length; b++) {
        expect(rest.bars[4 * b + 2] - rest.bars[4 * b]).toBeCloseTo(geom.barVector[2 * b], 12);
        expect(rest.bars[4 * b + 3] - rest.bars[4 * b + 1]).toBeCloseTo(geom.barVector[2 * b + 1], 12);
      }
      // a flex keeps every bar length to first order: the central difference of each length vanishes
      const t = 1e-4;
      const lp = barLengths(strainedCell(geom, r.lattice, f, t).bars);
      const lm = barLengths(strainedCell(geom, r.lattice, f, -t).bars);
      const rate = Math.max(...lp.map((l, k) => Math.abs(l - lm[k]) / (2 * t)));
      expect(rate).toBeLessThan(1e-6);
      // d/dt det(L + t·L̇) = det L · tr(L⁻¹L̇) = det L · tr ε (derivation: Jacobi's formula)
      const a0 = cellArea(rest);
      const da = (cellArea(strainedCell(geom, r.lattice, f, t)) - cellArea(strainedCell(geom, r.lattice, f, -t))) / (2 * t);
      expect(da / a0).toBeCloseTo(f.strain[0][0] + f.strain[1][1], 6);
    }
  });

  it('a wrong flex (joints still, lattice stretched) changes bar lengths to first order', () => {
    // the check above can fail: a lattice velocity alone is not a flex of the twisted kagome
    const { r, geom } = cellOf('gallery:twisted-kagome', [1, 1]);
    const fake = { velocities: new Array(2 * geom.jointCount).fill(0), latticeVelocity: r.strains[0].latticeVelocity };
    const t = 1e-4;
    const lp = barLengths(strainedCell(geom, r.lattice, fake, t).bars);
    const lm = barLengths(strainedCell(geom, r.lattice, fake, -t).bars);
    expect(Math.max(...lp.map((l, k) => Math.abs(l - lm[k]) / (2 * t)))).toBeGreaterThan(1e-3);
  });

  it('draws the largest principal strain at DRAW_STRAIN unless a joint would move more than DRAW_STEP bars', () => {
    const { r, geom } = cellOf('gallery:twisted-kagome', [1, 1]);
    const f = r.strains[0];
    const t = drawAmount(geom, f);
    const e = Math.max(...f.principal.values.map(Math.abs));
    let step = 0;
    for (let k = 0; k < f.velocities.length; k += 2) step = Math.max(step, Math.hypot(f.velocities[k], f.velocities[k + 1]));
    const bar = Math.hypot(geom.barVector[0], geom.barVector[1]); // the twisted kagome's bars have one length
    expect(t).toBeCloseTo(Math.min(DRAW_STRAIN / e, (DRAW_STEP * bar) / step), 12);
    expect(drawAmount(geom, { velocities: [0, 0], principal: { values: [0, 0] } })).toBe(0);
  });

  it('describes the twisted kagome strain as an auxetic dilation', () => {
    const { r } = cellOf('gallery:twisted-kagome', [1, 1]);
    expect(r.strains).toHaveLength(1);
    expect(strainText(r.strains[0])).toMatch(/^dilation .* · auxetic/);
  });
});

describe('self-stress drawing', () => {
  it('scales bar forces t_b = w_b·|p_b| to [−1, 1] and maps |value| to a width from min to max', () => {
    const geom = { barVector: Float64Array.from([2, 0, 0, 1, 3, 4]) } as Parameters<typeof stressForceValues>[1];
    // w = (1, −4, 0.5): forces 2, −4, 2.5
    const v = stressForceValues({ re: Float64Array.from([1, -4, 0.5]), im: null }, geom);
    expect(Array.from(v)).toEqual([0.5, -1, 0.625].map((x) => Math.fround(x)));
    // forces sent by the worker win over w
    expect(Array.from(stressForceValues({ re: Float64Array.from([1, 1, 1]), im: null, forces: Float64Array.from([0, 2, -1]) }, geom))).toEqual([0, 1, -0.5]);
    const w = stressWidths(Float32Array.from([0, 1, -1, 0.5]));
    expect(w[0]).toBeCloseTo(STRESS_WIDTH.min, 6);
    expect(w[1]).toBeCloseTo(STRESS_WIDTH.max, 6);
    expect(w[2]).toBeCloseTo(STRESS_WIDTH.max, 6);
    expect(w[3]).toBeCloseTo((STRESS_WIDTH.min + STRESS_WIDTH.max) / 2, 6);
  });

  it('writes the macroscopic stress and a stress summary', () => {
    expect(macroText({ xx: 1.5, xy: 0, yy: -1.5, trace: 0, traceless: true })).toBe('σ = [[1.5, 0], [0, -1.5]] per cell · trace 0 (traceless)');
    expect(stressSummary({ re: new Float64Array(1), im: null, support: 8, extents: [4, 1], direction: [1, 0] }, [4, 4])).toBe('8 bars · extent 4 × 1 cells · direction (1, 0)');
  });
});

describe('the worker for the views', () => {
  const job = (spec: string, cells: [number, number], bc: string, classifyStresses: boolean) => ({ framework: buildGallery(spec), cells, bc, tolerance: 1e-9, solver: 'auto' as const, window: 3, strip: 2, stresses: true, classify: true, classifyStresses });

  it('kagome 4×4 torus: 12 line self-stresses, each the tension of one closed straight line of 8 bars', async () => {
    // N1 + N2 + gcd(N1, N2) = 12 self-stresses, one tension per closed straight bond line
    // (K. Sun, A. Souslov, X. Mao & T. C. Lubensky, PNAS 109, 12369–12374 (2012); see also
    // tests/published-counts.test.ts). A line of a 4-cell torus holds 2 bars per cell.
    const r = await analyse(job('gallery:kagome', [4, 4], 'periodic', true));
    expect(r.stressSource).toBe('classified');
    expect(r.stresses).toHaveLength(12);
    expect(r.stressClassification?.counts).toEqual({ local: 0, line: 12, decaying: 0, bulk: 0 });
    const { analysis } = count({ framework: buildGallery('gallery:kagome'), cells: [4, 4], boundary: 'periodic' });
    const RT = conjugateTranspose(analysis.matrix());
    for (const st of r.stresses) {
      expect(st.class).toBe('line');
      // equilibrium at every joint: Rᴴ w = 0
      const y = sparseMatVec(RT, st.re, st.im);
      expect(Math.hypot(...y.re, ...y.im)).toBeLessThan(1e-9);
      // axial forces w_b·|p_b|: 8 equal tensions (of one sign), every other bar zero
      const f = Array.from(st.forces!);
      f.forEach((x, b) => expect(x).toBeCloseTo(st.re[b] * Math.hypot(r.geometry.barVector[2 * b], r.geometry.barVector[2 * b + 1]), 12));
      const on = f.filter((x) => Math.abs(x) > 1e-9);
      expect(on).toHaveLength(8);
      for (const x of on) expect(x).toBeCloseTo(on[0], 9);
      expect(st.macroscopicStress).toBeDefined();
    }
  });

  it('the mode-data export of classified self-stresses parses back with classes and axial forces', async () => {
    const r = await analyse(job('gallery:square', [4, 3], 'x=pinned,y=free', true));
    const s = defaultState();
    s.framework = { kind: 'gallery', name: 'square', params: {} };
    s.cells = [4, 3];
    s.bc = 'x=pinned,y=free';
    const d = parseModesJson(modesJson(r, s));
    // pinned left and right: one tension per row, a chain between two grounds (common practice), the line class
    expect(d.stressClassification?.counts.line).toBe(3);
    expect(d.selfStresses).toHaveLength(3);
    d.selfStresses!.forEach((st, i) => {
      expect(st.class).toBe('line');
      expect(Array.from(st.axialForce!.re)).toEqual(Array.from(r.stresses[i].forces!));
    });
  });

  it('without classes the basis comes as before (no class, no forces)', async () => {
    const r = await analyse(job('gallery:kagome', [3, 3], 'periodic', false));
    expect(r.stressSource).toBe('basis');
    expect(r.stresses).toHaveLength(r.counts.selfStresses);
    expect(r.stresses.every((s) => s.class === undefined && s.forces === undefined)).toBe(true);
  });

  it('runs the strain job and the prestress job', async () => {
    const s = await runStrain({ framework: buildGallery('gallery:twisted-kagome'), cells: [1, 1], tolerance: 1e-9 });
    expect(s.result.strainFlexes).toBe(1);
    expect(s.result.strains[0].kind).toBe('dilation');
    expect(s.geometry.jointCount).toBe(3);
    // a square grid pinned left and right: the row tensions stabilise the column slides
    // (derivation in tests/prestress.test.ts: eigenvalues 2 − 2cos(kπ/7) on 6 columns)
    const p = await runPrestress({ framework: buildGallery('gallery:square'), cells: [6, 4], bc: 'x=pinned,y=free', tolerance: 1e-9, solver: 'auto' });
    expect(p.verdict).toBe('prestress-stable');
    expect(p.smallestEigenvalue).toBeGreaterThan(p.threshold);
    await expect(runPrestress({ framework: buildGallery('gallery:square'), cells: [4, 4], bc: 'twist:0.25,0', tolerance: 1e-9, solver: 'auto' })).rejects.toThrow(/prestress check cannot be made/);
  });
});
