/** The independent self-check of returned bases (src/flex/verify.ts): it passes on honest bases and fails on wrong ones. */
import { describe, expect, it } from 'vitest';
import { count } from '../src/analysis.js';
import { buildGallery } from '../src/framework/gallery.js';
import { selfCheck } from '../src/flex/verify.js';
import type { FlexAnalysis } from '../src/flex/spaces.js';

describe('selfCheck', () => {
  const run = (solver: 'dense' | 'sparse' | 'bloch', bc: string) =>
    count({ framework: buildGallery('gallery:kagome'), cells: solver === 'dense' ? [6, 6] : [10, 10], boundary: bc, solver }).analysis;

  it.each([
    ['dense', 'free'],
    ['sparse', 'free'],
    ['bloch', 'periodic'],
    ['bloch', 'x=twist:0.3,y=free'],
  ] as const)('passes on the %s path, %s boundary, with as many vectors as the count claims', (solver, bc) => {
    const a = run(solver, bc);
    const c = selfCheck(a);
    expect(c.failures).toEqual([]);
    expect(c.passed).toBe(true);
    expect(c.flexes.dimension.returned).toBe(a.flexes);
    expect(c.selfStresses.dimension.returned).toBe(a.selfStresses);
    expect(c.flexes.worstResidual).toBeLessThanOrEqual(c.residualBound);
  });

  it('fails when a basis misses a vector, holds a non-null vector, or is not orthonormal', () => {
    const a = run('sparse', 'free');
    const flexes = a.flexBasis().vectors;
    const lacking: FlexAnalysis = { ...a, flexBasis: () => ({ real: true, vectors: flexes.slice(1) }) };
    expect(selfCheck(lacking).failures.join(' ')).toMatch(/the count claims/);
    const wrong = flexes.map((v, i) => (i === 0 ? { re: v.re.map((_, k) => (k === 0 ? 1 : 0)), im: new Float64Array(v.re.length) } : v));
    expect(selfCheck({ ...a, flexBasis: () => ({ real: true, vectors: wrong }) }).failures.join(' ')).toMatch(/residual/);
    const doubled = [flexes[0], ...flexes.slice(0, -1)];
    const c = selfCheck({ ...a, flexBasis: () => ({ real: true, vectors: doubled }) });
    expect(c.passed).toBe(false);
    expect(c.failures.join(' ')).toMatch(/not orthonormal/);
  });
});
