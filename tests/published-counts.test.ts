/**
 * Flex and self-stress counts of supercells against published results.
 * Every expected value below comes from the cited statement (a formula), never from our output.
 */
import { describe, expect, it } from 'vitest';
import { counts, gcd } from './helpers.js';

describe('square grid (only horizontal and vertical bars)', () => {
  // Grid bracing: an unbraced rectangular grid has (rows + columns − 1) internal degrees of
  // freedom, i.e. a + b flexes for a×b joints including the 3 rigid motions, and no
  // self-stress. E. D. Bolker & H. Crapo, "Bracing rectangular frameworks I",
  // SIAM J. Appl. Math. 36(3), 473–490 (1979) (citation from memory).
  it.each([
    [3, 3],
    [4, 5],
    [10, 7],
  ])('free %i×%i joints: a+b flexes, 3 trivial, no self-stress (Bolker & Crapo 1979)', (a, b) => {
    const c = counts('gallery:square', [a, b], 'free');
    expect(c.joints).toBe(a * b);
    expect(c.bars).toBe(a * (b - 1) + b * (a - 1));
    expect(c.flexes).toBe(a + b);
    expect(c.trivialFlexes).toBe(3);
    expect(c.selfStresses).toBe(0);
  });

  // Periodic N×N torus: N row-sliding and N column-sliding flexes; uniform tension on each
  // closed row and column. Lubensky, Kane, Mao, Souslov & Sun, "Phonons and elasticity in
  // critically coordinated lattices", Rep. Prog. Phys. 78, 073901 (2015), §5.1 (the count 2N
  // follows from its Bloch symbol diag(z1 − 1, z2 − 1)).
  it.each([3, 4, 6])('periodic %i×%i: 2N flexes and 2N self-stresses (Lubensky et al. 2015)', (N) => {
    const c = counts('gallery:square', [N, N], 'periodic');
    expect(c.flexes).toBe(2 * N);
    expect(c.selfStresses).toBe(2 * N);
    expect(c.trivialFlexes).toBe(2);
  });

  it('twisted 5×5: a twist along y alone keeps only the N row-sliding flexes; a generic twist none', () => {
    // Same Bloch symbol as above: det = (1 − z1)(1 − z2) vanishes on z1 = 1 or z2 = 1.
    const oneAxis = counts('gallery:square', [5, 5], 'twist:0,0.2069');
    expect([oneAxis.flexes, oneAxis.selfStresses, oneAxis.trivialFlexes]).toEqual([5, 5, 0]);
    const generic = counts('gallery:square', [5, 5], 'twist:0.1114,0.2069');
    expect([generic.flexes, generic.selfStresses]).toEqual([0, 0]);
  });
});

describe('regular kagome', () => {
  // Periodic supercell: zero modes on the three lines q·e = 0 of the Brillouin zone, one per
  // family of straight bond-lines, giving N1 + N2 + gcd(N1, N2) flexes and as many
  // self-stresses (tension on each closed straight line). Souslov, Liu & Lubensky,
  // "Elasticity and response in nearly isostatic periodic lattices", Phys. Rev. Lett. 103,
  // 205503 (2009) (from memory); K. Sun, A. Souslov, X. Mao & T. C. Lubensky, "Surface phonons,
  // elastic response, and conformal invariance in twisted kagome lattices", PNAS 109(31),
  // 12369–12374 (2012).
  it.each([
    [3, 3],
    [4, 4],
    [4, 6],
    [3, 5],
    [2, 6],
  ])('periodic %i×%i: N1+N2+gcd flexes and self-stresses', (N1, N2) => {
    const c = counts('gallery:kagome', [N1, N2], 'periodic');
    const expected = N1 + N2 + gcd(N1, N2);
    expect(c.flexes).toBe(expected);
    expect(c.selfStresses).toBe(expected);
    expect(c.trivialFlexes).toBe(2);
  });

  // Free L1×L2 sample: one flex per straight bond-line, L2 + L1 + (L1 + L2 − 1) lines, no
  // self-stress (same sources; the count follows from one mode per line).
  it.each([
    [4, 4],
    [6, 6],
    [3, 7],
  ])('free %i×%i: 2(L1+L2)−1 flexes, none a self-stress', (L1, L2) => {
    const c = counts('gallery:kagome', [L1, L2], 'free');
    expect(c.flexes).toBe(2 * (L1 + L2) - 1);
    expect(c.selfStresses).toBe(0);
    expect(c.trivialFlexes).toBe(3);
  });

  it('twisted 5×5 boundaries keep exactly the lines whose phase is 1 (Bloch zero lines)', () => {
    // Zero lines q·a1 = 0, q·a2 = 0, q·(a2 − a1) = 0 (sources above): with θ = (0, θ2) only the
    // q·a1 = 0 line survives, with θ1 = θ2 only the q·(a2 − a1) = 0 line.
    expect(counts('gallery:kagome', [5, 5], 'twist:0.1114,0.2069').flexes).toBe(0);
    expect(counts('gallery:kagome', [5, 5], 'twist:0,0.2069').flexes).toBe(5);
    expect(counts('gallery:kagome', [5, 5], 'twist:0.159,0.159').flexes).toBe(5);
  });
});

describe('twisted kagome', () => {
  // Only the trivial translations survive periodic boundaries, for every N, and nothing
  // survives a generic twist. Sun, Souslov, Mao & Lubensky, PNAS 109, 12369 (2012); also
  // Lubensky et al., Rep. Prog. Phys. 78, 073901 (2015): modifications of the kagome
  // "can eliminate all but trivial translational zero modes".
  it.each([3, 4, 5])('periodic %i×%i: exactly 2 flexes, both translations', (N) => {
    const c = counts('gallery:twisted-kagome?twist=15', [N, N], 'periodic');
    expect(c.flexes).toBe(2);
    expect(c.trivialFlexes).toBe(2);
    expect(c.selfStresses).toBe(2);
  });

  it('generic twist: no flex at all', () => {
    const c = counts('gallery:twisted-kagome?twist=15', [4, 4], 'twist:0.13,0.29');
    expect(c.flexes).toBe(0);
    expect(c.selfStresses).toBe(0);
  });

  it('free 6×6: same count as the regular kagome, 2(L1+L2)−1', () => {
    // Equal counts follow from the Maxwell–Calladine index with identical connectivity
    // (C. R. Calladine, Int. J. Solids Struct. 14, 161–172, 1978) and no self-stress.
    const c = counts('gallery:twisted-kagome?twist=15', [6, 6], 'free');
    expect(c.flexes).toBe(23);
    expect(c.selfStresses).toBe(0);
  });
});

describe('triangular, honeycomb, rotating squares', () => {
  // Triangular lattice is rigid: periodic N×N has the 2 translations and N² + 2
  // self-stresses (from the index N0 − NS = 2N² − 3N²); a free rhombus of N×N joints has the 3
  // rigid motions and (N − 2)² self-stresses. Index from Calladine 1978 (above); rigidity of the
  // triangulated lattice is common practice.
  it.each([3, 4, 5])('triangular periodic %i×%i: 2 flexes, N²+2 self-stresses', (N) => {
    const c = counts('gallery:triangular', [N, N], 'periodic');
    expect([c.flexes, c.selfStresses]).toEqual([2, N * N + 2]);
  });
  it.each([3, 5])('triangular free rhombus %i×%i: 3 flexes, (N−2)² self-stresses', (N) => {
    const c = counts('gallery:triangular', [N, N], 'free');
    expect([c.flexes, c.trivialFlexes, c.selfStresses]).toEqual([3, 3, (N - 2) ** 2]);
  });

  // Honeycomb (z = 3): one single-hexagon rotation per cell, N² of rank N² − 1, plus the two
  // translations, and one self-stress (uniform isotropic tension). Lubensky et al. 2015 (above)
  // discuss the flat zero band of the honeycomb (from memory).
  it.each([3, 4, 5])('honeycomb periodic %i×%i: N²+1 flexes, 1 self-stress', (N) => {
    const c = counts('gallery:honeycomb', [N, N], 'periodic');
    expect([c.flexes, c.selfStresses]).toEqual([N * N + 1, 1]);
  });

  // Rotating squares: the counter-rotation mechanism lives at Bloch phase (½, ½), so it fits a
  // periodic supercell only for even N. J. N. Grima & K. E. Evans, "Auxetic behavior from
  // rotating squares", J. Mater. Sci. Lett. 19, 1563–1565 (2000) (journal details from memory).
  it.each([
    [3, 2],
    [4, 3],
    [5, 2],
    [6, 3],
  ])('rotating squares periodic %i×%i: %i flexes', (N, flexes) => {
    const c = counts('gallery:rotating-squares', [N, N], 'periodic');
    expect(c.flexes).toBe(flexes);
    expect(c.flexes - c.selfStresses).toBe(-N * N);
  });
});

describe('Guest & Hutchinson: periodic isostatic lattices carry at least d self-stresses', () => {
  // S. D. Guest & J. W. Hutchinson, "On the determinacy of repetitive structures",
  // J. Mech. Phys. Solids 51, 383–391 (2003): with b = d·j per cell under periodic boundaries,
  // m − s = d·j − b = 0 and m ≥ d (translations), so s ≥ d = 2.
  it.each(['gallery:square', 'gallery:kagome', 'gallery:twisted-kagome?twist=10', 'gallery:deformed-kagome'])('%s', (spec) => {
    for (const N of [3, 4]) {
      const c = counts(spec, [N, N], 'periodic');
      expect(c.flexes - c.selfStresses).toBe(0);
      expect(c.selfStresses).toBeGreaterThanOrEqual(2);
    }
  });
});

describe('Maxwell–Calladine index (Calladine 1978; Pellegrino & Calladine 1986)', () => {
  // C. R. Calladine, Int. J. Solids Struct. 14, 161–172 (1978); S. Pellegrino & C. R. Calladine,
  // "Matrix analysis of statically and kinematically indeterminate frameworks", Int. J. Solids
  // Struct. 22(4), 409–428 (1986): m − s = d·j − b for every framework and support.
  it.each([
    ['gallery:kagome', 'x=periodic,y=free'],
    ['gallery:honeycomb', 'left=pinned,top=pinned'],
    ['gallery:square-diagonal', 'x=twist:0.3,y=pinned'],
    ['gallery:deformed-kagome', 'twist:0.25,0.5'],
  ])('%s under %s', (spec, bc) => {
    const c = counts(spec, [4, 3], bc);
    expect(c.maxwellCalladine.ok).toBe(true);
    expect(c.flexes - c.selfStresses).toBe(2 * c.joints - c.bars);
  });
});
