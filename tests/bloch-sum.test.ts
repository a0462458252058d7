/**
 * Bloch sum rule: a twisted N1×N2 supercell's flex (and self-stress) count equals the sum over
 * the N1·N2 phases ((θ1 + m1)/N1, (θ2 + m2)/N2) of dim ker (dim coker) of the unit-cell symbol
 * Φ(z). Standard Bloch theory: N. W. Ashcroft & N. D. Mermin, Solid State Physics (1976),
 * ch. 8 (from memory); stated for frameworks in Lubensky et al., Rep. Prog. Phys. 78, 073901 (2015).
 */
import { describe, expect, it } from 'vitest';
import { buildGallery } from '../src/framework/gallery.js';
import type { Framework } from '../src/framework/types.js';
import { symbolKernel } from '../src/spectrum/symbol.js';
import { counts, randomFramework } from './helpers.js';

function blochSum(fw: Framework, cells: [number, number], theta: [number, number], scale: number) {
  let kernel = 0;
  let cokernel = 0;
  for (let m1 = 0; m1 < cells[0]; m1++)
    for (let m2 = 0; m2 < cells[1]; m2++) {
      const k = symbolKernel(fw, [(theta[0] + m1) / cells[0], (theta[1] + m2) / cells[1]], 1e-9, scale);
      kernel += k.kernel;
      cokernel += k.cokernel;
    }
  return { kernel, cokernel };
}

const CASES: [string, [number, number], [number, number]][] = [
  ['gallery:kagome', [3, 4], [0, 0]],
  ['gallery:kagome', [4, 4], [0.25, 0]],
  ['gallery:square', [4, 3], [0, 0.5]],
  ['gallery:honeycomb', [3, 3], [0, 0]],
  ['gallery:rotating-squares', [4, 4], [0, 0]],
  ['gallery:twisted-kagome?twist=20', [3, 3], [0, 0]],
  ['gallery:triangular', [3, 5], [0.3, 0.7]],
  ['gallery:deformed-kagome', [3, 3], [0, 0]],
];

describe('Bloch sum rule', () => {
  it.each(CASES)('%s %j twist %j', (spec, cells, theta) => {
    const fw = buildGallery(spec);
    const c = counts(fw, cells, `twist:${theta[0]},${theta[1]}`);
    // The supercell's σ_max sets the scale of the tolerance for every block, so both sides
    // use the same absolute cut.
    const s = blochSum(fw, cells, theta, c.sigmaMax);
    expect(s.kernel).toBe(c.flexes);
    expect(s.cokernel).toBe(c.selfStresses);
  });

  it.each([11, 12, 13])('random framework (seed %i), 3×2 periodic and twisted', (seed) => {
    const fw = randomFramework(seed, 3, 5);
    for (const theta of [[0, 0], [0.5, 0.25]] as [number, number][]) {
      const c = counts(fw, [3, 2], `twist:${theta[0]},${theta[1]}`);
      const s = blochSum(fw, [3, 2], theta, c.sigmaMax);
      expect(s.kernel).toBe(c.flexes);
      expect(s.cokernel).toBe(c.selfStresses);
    }
  });
});
