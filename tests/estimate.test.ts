/**
 * The size estimate made before a run (src/flex/estimate.ts) against what the sparse solver's
 * own symbolic analysis finds: the nested-dissection model's nnz(L) and flops on open supercells
 * of several lattices, and the memory target (open kagome 256×256 counted under 2 GB)
 * passing the default size check.
 */
import { describe, expect, it } from 'vitest';
import { checkRunSize, estimateRun } from '../src/flex/estimate.js';
import { sparseSolver } from '../src/flex/solve-sparse.js';
import { buildGallery } from '../src/framework/gallery.js';
import { parseBoundary } from '../src/supercell/boundary.js';
import { rigidityMatrix } from '../src/supercell/rigidity.js';
import { buildSupercell } from '../src/supercell/supercell.js';

describe('estimate of the nested-dissection factor', () => {
  const cases: [string, [number, number]][] = [
    ['gallery:kagome', [64, 64]],
    ['gallery:square', [64, 64]],
    ['gallery:triangular', [64, 64]],
    ['gallery:honeycomb', [64, 64]],
    ['gallery:kagome', [160, 16]],
  ];
  it.each(cases)('%s %j: the estimate picks the factorisation the solver picks, and its nnz(L) and flops lie within 1.5× of the analysis', (spec, cells) => {
    const fw = buildGallery(spec);
    const b = parseBoundary('free');
    const est = estimateRun(fw, cells, b);
    const sc = buildSupercell(fw, cells, b);
    const R = rigidityMatrix(sc);
    const s = sparseSolver(sc, R, { relative: 1e-9, memoryLimit: 1.5 * 1024 ** 3 });
    const f = s.status.factorisation!;
    const model = est.factor!;
    expect(model.method).toBe(f.method);
    expect(est.path.includes('nested-dissection')).toBe(f.method === 'sparse-ldl');
    expect(model.nnzL / f.nnzL).toBeGreaterThan(1 / 1.5);
    expect(model.nnzL / f.nnzL).toBeLessThan(1.5);
    expect(model.flops / f.flops).toBeGreaterThan(1 / 1.5);
    expect(model.flops / f.flops).toBeLessThan(1.5);
  });

  it('open kagome 256×256 passes the default size check (under 2 GB; measured peak 0.6 GB)', () => {
    const e = checkRunSize(buildGallery('gallery:kagome'), [256, 256], parseBoundary('free'));
    expect(e.solver).toBe('sparse');
    expect(e.bytes).toBeLessThan(2 * 1024 ** 3);
  });
});

describe('estimate of a Bloch count', () => {
  it('periodic kagome 2048×2048 passes the default check: a Bloch count lists no rows (1024×1024 peaked at 97 MB)', () => {
    const e = checkRunSize(buildGallery('gallery:kagome'), [2048, 2048], parseBoundary('periodic'));
    expect(e.solver).toBe('bloch');
    expect(e.bytes).toBeLessThan(1024 ** 3);
    // bases map block vectors back through the rows: those are charged
    const withBases = estimateRun(buildGallery('gallery:kagome'), [2048, 2048], parseBoundary('periodic'), { bases: true });
    expect(withBases.bytes).toBeGreaterThan(e.bytes + 2048 * 2048 * 6 * 300);
  });
});
