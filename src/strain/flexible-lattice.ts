/**
 * Periodic flexes with a flexible lattice: the cell may change shape while it moves.
 *
 * The cell is the unit cell (cells 1×1) or an N1×N2 periodic supercell, with lattice
 * L = [A1 A2] (A1 = N1·a1, A2 = N2·a2 as columns). Unknowns: the velocity u_k of every joint of
 * the cell and the lattice velocity L̇ (d² = 4 numbers, the columns Ȧ1, Ȧ2). A bar a→b whose far
 * end lies w = (w1, w2) cells away has p = x_b + L·w − x_a and the row
 *     p · (u_b − u_a + L̇·w) = 0.
 * The columns are the 2 per joint, then Ȧ1x, Ȧ1y, Ȧ2x, Ȧ2y. Its kernel holds the fixed-lattice
 * periodic flexes (L̇ = 0) and flexes that strain the cell. Trivial: the two translations and
 * the rotation of the whole (u_k = Ω x_k with L̇ = Ω L, Ω antisymmetric).
 *
 * The macroscopic strain of a flex is ε = sym(L̇ L⁻¹); it vanishes on the trivial flexes. The
 * strain space (the image of the kernel under ε) does not depend on the basis of the kernel, the
 * lattice basis or the origin. Its orthonormal basis is given in the Frobenius inner product
 * ⟨A, B⟩ = Σ A_ij B_ij, in coordinates (ε11, ε22, √2·ε12). Its dimension is a rank decision on
 * the map ε restricted to the kernel, cut relative to the map's bound ‖L⁻¹‖₂ (‖ε‖_F ≤ ‖L⁻¹‖₂ for
 * a unit flex vector).
 *
 * Equivalently (a check, not used here): a strain is admissible exactly when it is orthogonal to
 * the macroscopic stress Σ_b ω_b p_b ⊗ p_b of every fixed-lattice periodic self-stress ω.
 */
import { Matrix, SingularValueDecomposition } from 'ml-matrix';
import { InputError } from '../errors.js';
import type { Framework, Vec2 } from '../framework/types.js';
import { checkFramework } from '../framework/validate.js';
import { MIN_RELATIVE_TOLERANCE, toleranceProblem } from '../flex/estimate.js';
import { checkDenseFits, DENSE_MEMORY_LIMIT, nullSpace, singularValues } from '../linalg/dense.js';
import { AMBIGUOUS_RATIO, certifyFromSingularValues, combineRankParts, decideRank, DEFAULT_RELATIVE_TOLERANCE, flagDecision, rankPartOf, svdBackwardError, type Gap, type RankDecision } from '../linalg/rank.js';
import { SparseBuilder, type SparseMatrix } from '../linalg/sparse.js';
import { parseBoundary } from '../supercell/boundary.js';
import { scaledBarVectors } from '../supercell/rigidity.js';
import { buildSupercell, checkCells, type Supercell } from '../supercell/supercell.js';
import { combine, dot, norm, orthonormalComplement, orthonormalise } from './subspace.js';

/** A symmetric 2×2 matrix as rows [[xx, xy], [xy, yy]]. */
export type Sym2 = [[number, number], [number, number]];

/** The inner product the strain basis is orthonormal in. */
export const STRAIN_INNER_PRODUCT = 'Frobenius: <A, B> = sum of A_ij·B_ij (coordinates eps11, eps22, sqrt(2)·eps12 are orthonormal)';

/**
 * A principal strain under this fraction of ‖ε‖_F counts as zero, and so does the deviatoric or
 * the volumetric part of ε (for `kind`). Far above the rounding of kernel vectors (~1e-12 for a
 * gap ratio of 1e4), far below any strain a design would have.
 */
export const STRAIN_ZERO = 1e-8;

export interface FlexibleLatticeOptions {
  /** The cell: 1×1 (the unit cell, default) or an N1×N2 periodic supercell. */
  cells?: [number, number];
  /** Relative rank tolerance (× σ_max), default 1e-9; also cuts the strain map (× ‖L⁻¹‖₂). */
  tolerance?: number;
}

export interface PrincipalStrains {
  /** The two principal strains, larger first. */
  values: [number, number];
  /** Unit principal directions, in the order of `values`. */
  directions: [Vec2, Vec2];
  /** Angle of the first direction from the x axis, in degrees, in (−90, 90]. */
  angleDegrees: number;
}

export interface StrainFlex {
  /** Macroscopic strain ε = sym(L̇ L⁻¹); unit Frobenius norm. */
  strain: Sym2;
  principal: PrincipalStrains;
  /** Both principal strains nonzero and of the same sign (the cell grows or shrinks in every direction). */
  auxetic: boolean;
  /** dilation: ε ∝ I; shear: trace 0; mixed: neither. */
  kind: 'dilation' | 'shear' | 'mixed';
  /**
   * A flex with exactly this strain: joint velocities (2 per joint of the cell, framework units
   * per unit strain), the one of least norm (orthogonal to every zero-strain flex, trivial ones included).
   */
  velocities: number[];
  /** Its lattice velocity [Ȧ1, Ȧ2] (framework units per unit strain). */
  latticeVelocity: [Vec2, Vec2];
}

export interface ZeroStrainFlex {
  /** Joint velocities (2 per joint of the cell); with latticeVelocity a unit vector orthogonal to the trivial flexes. */
  velocities: number[];
  /** Lattice velocity [Ȧ1, Ȧ2]: zero strain, so L̇ L⁻¹ is antisymmetric. */
  latticeVelocity: [Vec2, Vec2];
}

export interface StrainSpace {
  /** 0 to 3. */
  dimension: number;
  innerProduct: string;
  /**
   * Orthonormal basis: the projections of I/√2, (e11 − e22)/√2 and (e12 + e21)/√2 on the space,
   * orthonormalised in that order (dropping any that fall within 1e-6 of the earlier ones), so it
   * depends only on the space.
   */
  basis: Sym2[];
  /** all: every nonzero strain of the space is auxetic; some: some are; none: none is. */
  auxetic: 'all' | 'some' | 'none';
  /**
   * The rank decision on the strain map (ε of an orthonormal kernel basis): its singular values
   * are cut at tolerance × reference, reference = ‖L⁻¹‖₂ in units of lengthScale (the bound of
   * ‖ε‖_F for a unit flex vector). kept and dropped are fractions of the reference.
   */
  decision: { reference: number; relative: number; gap: Gap };
}

export interface FlexibleLatticeResult {
  cells: [number, number];
  /** The cell's lattice vectors [A1, A2] = [N1·a1, N2·a2]. */
  lattice: [Vec2, Vec2];
  joints: number;
  bars: number;
  /** 2·joints + 4. */
  columns: number;
  /** dim ker of the flexible-lattice rigidity matrix. */
  flexes: number;
  /** Translations and the rotation of the whole among the flexes (3 unless the rank is doubtful). */
  trivialFlexes: number;
  nonTrivialFlexes: number;
  /** Flexes that strain the cell, modulo the rest: the strain space's dimension. */
  strainFlexes: number;
  /** Non-trivial flexes with zero strain (nonTrivialFlexes − strainFlexes). */
  zeroStrainFlexes: number;
  /** Periodic self-stresses that remain with a flexible lattice (zero macroscopic stress). */
  selfStresses: number;
  /** The same cell with its lattice held fixed (L̇ = 0), by the same rank rule. */
  fixedLattice: { flexes: number; selfStresses: number };
  /** The rank decision on the flexible-lattice matrix; absolute figures in framework units. */
  rank: RankDecision;
  certified: boolean;
  /** Every doubt about the counts; empty when none. */
  reasons: string[];
  /** The unit R was assembled in (see lengthScaleOf). */
  lengthScale: number;
  strainSpace: StrainSpace;
  /** One flex per strain basis element, in the basis' order. */
  strains: StrainFlex[];
  zeroStrain: ZeroStrainFlex[];
}

/** (ε11, ε22, √2 ε12) of sym(L̇ L⁻¹) for the lattice-velocity entries q = (Ȧ1x, Ȧ1y, Ȧ2x, Ȧ2y). */
function strainCoordinates(q: ArrayLike<number>, Linv: number[][]): [number, number, number] {
  // L̇ = [[Ȧ1x, Ȧ2x], [Ȧ1y, Ȧ2y]]; E = L̇ L⁻¹
  const e11 = q[0] * Linv[0][0] + q[2] * Linv[1][0];
  const e12 = q[0] * Linv[0][1] + q[2] * Linv[1][1];
  const e21 = q[1] * Linv[0][0] + q[3] * Linv[1][0];
  const e22 = q[1] * Linv[0][1] + q[3] * Linv[1][1];
  return [e11, e22, Math.SQRT1_2 * (e12 + e21)];
}

function symOf(c: ArrayLike<number>): Sym2 {
  const xy = c[2] * Math.SQRT1_2;
  return [
    [c[0] + 0, xy + 0],
    [xy + 0, c[1] + 0],
  ];
}

/** Principal strains and directions of a symmetric 2×2 matrix. */
export function principalStrains(e: Sym2): PrincipalStrains {
  const a = e[0][0];
  const b = e[0][1];
  const d = e[1][1];
  const mean = (a + d) / 2;
  const radius = Math.hypot((a - d) / 2, b);
  // ε ∝ I (within STRAIN_ZERO): every direction is principal; report the axes
  let angle = radius <= STRAIN_ZERO * Math.abs(mean) ? 0 : 0.5 * Math.atan2(2 * b, a - d);
  if (angle <= -Math.PI / 2) angle += Math.PI;
  const c = Math.cos(angle);
  const s = Math.sin(angle);
  return {
    values: [mean + radius, mean - radius],
    directions: [
      [c, s],
      [-s, c],
    ],
    angleDegrees: (angle * 180) / Math.PI,
  };
}

function describeStrain(e: Sym2): Pick<StrainFlex, 'principal' | 'auxetic' | 'kind'> {
  const principal = principalStrains(e);
  const size = Math.hypot(principal.values[0], principal.values[1]);
  const [l1, l2] = principal.values;
  const auxetic = size > 0 && Math.min(Math.abs(l1), Math.abs(l2)) > STRAIN_ZERO * size && l1 * l2 > 0;
  const trace = Math.abs(l1 + l2) / Math.SQRT2;
  const deviator = Math.abs(l1 - l2) / Math.SQRT2;
  const kind = deviator <= STRAIN_ZERO * size ? 'dilation' : trace <= STRAIN_ZERO * size ? 'shear' : 'mixed';
  return { principal, auxetic, kind };
}

/** The flexible-lattice rigidity matrix of a periodic supercell (units of sc.lengthScale). */
export function flexibleLatticeMatrix(sc: Supercell): SparseMatrix {
  const J = sc.jointCount;
  const B = new SparseBuilder(2 * J + 4);
  const p = scaledBarVectors(sc.framework, sc.lengthScale);
  for (const bar of sc.bars) {
    const r = B.newRow();
    const px = p[2 * bar.source];
    const py = p[2 * bar.source + 1];
    B.add(r, 2 * bar.a, -px);
    B.add(r, 2 * bar.a + 1, -py);
    B.add(r, 2 * bar.b, px);
    B.add(r, 2 * bar.b + 1, py);
    const [w1, w2] = bar.wraps;
    if (w1 !== 0) {
      B.add(r, 2 * J, w1 * px);
      B.add(r, 2 * J + 1, w1 * py);
    }
    if (w2 !== 0) {
      B.add(r, 2 * J + 2, w2 * px);
      B.add(r, 2 * J + 3, w2 * py);
    }
  }
  return B.build(false);
}

/** The cell lattice [A1, A2] in units of lengthScale. */
function cellLattice(sc: Supercell): [Vec2, Vec2] {
  const [a1, a2] = sc.framework.lattice;
  const [N1, N2] = sc.cells;
  const L = sc.lengthScale;
  return [
    [(N1 * a1[0]) / L, (N1 * a1[1]) / L],
    [(N2 * a2[0]) / L, (N2 * a2[1]) / L],
  ];
}

/** The translations x, y and the rotation (about the centroid), as vectors of the 2J + 4 columns. */
function trivialFields(sc: Supercell): Float64Array[] {
  const J = sc.jointCount;
  const n = 2 * J + 4;
  const fw = sc.framework;
  const L = sc.lengthScale;
  const [a1, a2] = fw.lattice;
  const ref = fw.joints[0].at;
  // positions relative to the first joint (no digits lost to a far-away origin), then centred
  const rel = new Float64Array(2 * J);
  let cx = 0;
  let cy = 0;
  for (let k = 0; k < J; k++) {
    const at = fw.joints[sc.jointSites[k]].at;
    const i = sc.jointCells[2 * k];
    const j = sc.jointCells[2 * k + 1];
    rel[2 * k] = (at[0] - ref[0] + i * a1[0] + j * a2[0]) / L;
    rel[2 * k + 1] = (at[1] - ref[1] + i * a1[1] + j * a2[1]) / L;
    cx += rel[2 * k] / J;
    cy += rel[2 * k + 1] / J;
  }
  const tx = new Float64Array(n);
  const ty = new Float64Array(n);
  const rot = new Float64Array(n);
  for (let k = 0; k < J; k++) {
    tx[2 * k] = 1;
    ty[2 * k + 1] = 1;
    rot[2 * k] = -(rel[2 * k + 1] - cy);
    rot[2 * k + 1] = rel[2 * k] - cx;
  }
  const [A1, A2] = cellLattice(sc);
  rot[2 * J] = -A1[1];
  rot[2 * J + 1] = A1[0];
  rot[2 * J + 2] = -A2[1];
  rot[2 * J + 3] = A2[0];
  return [tx, ty, rot].map((t) => {
    const s = norm(t);
    return t.map((x) => x / s);
  });
}

/** Number of independent columns of A·T at the absolute cut. */
function rankOfProduct(A: SparseMatrix, T: Float64Array[], absolute: number): number {
  if (A.rows === 0 || T.length === 0) return 0;
  const M = new Matrix(Math.max(A.rows, T.length), T.length);
  T.forEach((t, c) => {
    for (let i = 0; i < A.rows; i++) {
      let s = 0;
      for (let k = A.rowPtr[i]; k < A.rowPtr[i + 1]; k++) s += A.re[k] * t[A.colIdx[k]];
      M.set(i, c, s);
    }
  });
  const sv = new SingularValueDecomposition(M, { computeLeftSingularVectors: false, computeRightSingularVectors: false }).diagonal;
  return sv.filter((v) => v > absolute).length;
}

/** The fixed-lattice matrix: the flexible one without its 4 lattice columns. */
function withoutLatticeColumns(A: SparseMatrix): SparseMatrix {
  const B = new SparseBuilder(A.cols - 4);
  for (let i = 0; i < A.rows; i++) {
    const r = B.newRow();
    for (let k = A.rowPtr[i]; k < A.rowPtr[i + 1]; k++) if (A.colIdx[k] < A.cols - 4) B.add(r, A.colIdx[k], A.re[k]);
  }
  return B.build(false);
}

function splitFlex(v: Float64Array, J: number, scale: number): { velocities: number[]; latticeVelocity: [Vec2, Vec2] } {
  const velocities = Array.from(v.subarray(0, 2 * J), (x) => x * scale + 0);
  const q = v.subarray(2 * J);
  return {
    velocities,
    latticeVelocity: [
      [q[0] * scale + 0, q[1] * scale + 0],
      [q[2] * scale + 0, q[3] * scale + 0],
    ],
  };
}

/**
 * The flexes of a periodic framework whose lattice may deform, modulo the trivial ones, with the
 * strain each imposes on the cell. Bad input (framework, cells, tolerance) throws InputError.
 */
export function flexibleLattice(framework: Framework, options: FlexibleLatticeOptions = {}): FlexibleLatticeResult {
  const relative = options.tolerance ?? DEFAULT_RELATIVE_TOLERANCE;
  const tolProblem = toleranceProblem(relative);
  if (tolProblem) {
    throw new InputError('The rank tolerance cannot be used:', [{ where: 'tolerance', what: `the relative tolerance ${tolProblem}`, fix: `give a number from ${MIN_RELATIVE_TOLERANCE} up to (not including) 1, e.g. 1e-9 (the default)` }]);
  }
  const cells = options.cells ?? [1, 1];
  checkCells(cells);
  const fw = checkFramework(framework);
  const J = cells[0] * cells[1] * fw.joints.length;
  const m = cells[0] * cells[1] * fw.bars.length;
  const n = 2 * J + 4;
  checkDenseFits(m, n, false, true, DENSE_MEMORY_LIMIT, 'use a smaller cell (the flexible-lattice analysis is one dense SVD of the whole cell)');
  const sc = buildSupercell(fw, cells, parseBoundary('periodic'));
  const ell = sc.lengthScale;
  const A = flexibleLatticeMatrix(sc);

  // the kernel: the project's rank rule on a dense SVD
  const sigma = singularValues(A);
  const raw = decideRank(sigma, A.rows, n, relative);
  const cert = certifyFromSingularValues(raw, svdBackwardError(A.rows, n, raw.sigmaMax));
  const flagged = flagDecision(raw, cert.certified, cert.reasons);
  const d = flagged.decision;
  const reasons = flagged.reasons;
  const flexes = n - d.rank;
  const K = nullSpace(A, flexes).vectors.map((v) => v.re);

  // fixed lattice, same rule
  const A0 = withoutLatticeColumns(A);
  const fixedRank = decideRank(singularValues(A0), A0.rows, A0.cols, relative).rank;

  const T = trivialFields(sc);
  const trivialFlexes = T.length - rankOfProduct(A, T, d.tolerance.absolute);
  const nonTrivialFlexes = flexes - trivialFlexes;

  // the strain map on the kernel basis: k×3 (rows padded to 3 so that the SVD gives a full V)
  const [A1, A2] = cellLattice(sc);
  const det = A1[0] * A2[1] - A2[0] * A1[1];
  const Linv = [
    [A2[1] / det, -A2[0] / det],
    [-A1[1] / det, A1[0] / det],
  ];
  const reference = inverseNorm(A1, A2);
  const k = K.length;
  const S = new Matrix(Math.max(k, 3), 3);
  K.forEach((v, j) => S.setRow(j, strainCoordinates(v.subarray(2 * J), Linv)));
  const svd = new SingularValueDecomposition(S);
  const sv = svd.diagonal.slice(0, Math.min(k, 3));
  const strainPart = rankPartOf(sv, k, 3, relative * reference);
  const strainDecision = combineRankParts([strainPart], k, 3, relative, reference);
  const r = strainDecision.rank;
  if (strainDecision.gap.ambiguous) reasons.push(`the strain map's gap ratio ${strainDecision.gap.ratio?.toPrecision(3)} is under ${AMBIGUOUS_RATIO}: the number of straining flexes is doubtful`);
  const U = svd.leftSingularVectors;
  const W = svd.rightSingularVectors;
  const colOf = (M: Matrix, j: number, len: number) => Float64Array.from(M.getColumn(j).slice(0, len));

  // an orthonormal basis of the strain space that depends only on the space
  const spaceBasis = Array.from({ length: r }, (_, j) => colOf(W, j, 3));
  const refs = [
    [Math.SQRT1_2, Math.SQRT1_2, 0],
    [Math.SQRT1_2, -Math.SQRT1_2, 0],
    [0, 0, 1],
  ].map((e) => combine(spaceBasis, spaceBasis.map((b) => dot(b, e)), 3));
  const basis: Float64Array[] = [];
  for (const x of refs) {
    // the references have unit norm: a residual under 1e-6 is a direction already taken
    for (let pass = 0; pass < 2; pass++) for (const b of basis) x.set(combine([x, b], [1, -dot(b, x)], 3));
    const size = norm(x);
    if (size > 1e-6 && basis.length < r) basis.push(x.map((v) => v / size));
  }
  if (basis.length < r) reasons.push(`the strain basis lost a direction to rounding (${basis.length} of ${r})`);
  for (const b of basis) {
    // sign: positive trace, or else a positive first nonzero coordinate of (ε11 − ε22, ε12)
    const key = [b[0] + b[1], b[0] - b[1], b[2]].find((x) => Math.abs(x) > 1e-6) ?? 1;
    if (key < 0) for (let i = 0; i < 3; i++) b[i] = -b[i];
  }

  // one flex per basis strain: the least-norm preimage Σ_j U_j (W_jᵀ e) / σ_j
  const strains: StrainFlex[] = basis.map((e) => {
    const c = new Float64Array(k);
    for (let j = 0; j < r; j++) {
      const f = dot(colOf(W, j, 3), e) / sv[j];
      for (let i = 0; i < k; i++) c[i] += f * U.get(i, j);
    }
    const v = combine(K, c, n);
    const strain = symOf(e);
    return { strain, ...describeStrain(strain), ...splitFlex(v, J, ell) };
  });

  // zero-strain flexes orthogonal to the trivial ones and to the strain flexes (coefficients in K)
  const taken = Array.from({ length: r }, (_, j) => colOf(U, j, k));
  const trivialCoefficients = orthonormalise(
    T.map((t) => Float64Array.from(K, (v) => dot(v, t))),
    1e-6,
  ).slice(0, trivialFlexes);
  const zeroStrainFlexes = Math.max(0, nonTrivialFlexes - r);
  if (nonTrivialFlexes - r < 0) reasons.push(`the strain space (${r}) is larger than the non-trivial flexes (${nonTrivialFlexes}): the rank decisions disagree`);
  const zeroCoefficients = orthonormalComplement([...orthonormalise([...trivialCoefficients, ...taken], 1e-6)], k, zeroStrainFlexes);
  const zeroStrain = zeroCoefficients.map((c) => splitFlex(combine(K, c, n), J, 1));

  const [N1, N2] = cells;
  const [a1, a2] = fw.lattice;
  return {
    cells: [N1, N2],
    lattice: [
      [N1 * a1[0], N1 * a1[1]],
      [N2 * a2[0], N2 * a2[1]],
    ],
    joints: J,
    bars: A.rows,
    columns: n,
    flexes,
    trivialFlexes,
    nonTrivialFlexes,
    strainFlexes: r,
    zeroStrainFlexes,
    selfStresses: A.rows - d.rank,
    fixedLattice: { flexes: 2 * J - fixedRank, selfStresses: A.rows - fixedRank },
    rank: inLengthUnits(d, ell),
    certified: cert.certified,
    reasons,
    lengthScale: ell,
    strainSpace: {
      dimension: r,
      innerProduct: STRAIN_INNER_PRODUCT,
      basis: basis.map(symOf),
      auxetic: auxeticOfSpace(basis),
      decision: {
        reference: reference,
        relative,
        gap: {
          ...strainDecision.gap,
          kept: strainDecision.gap.kept === null ? null : strainDecision.gap.kept / reference,
          dropped: strainDecision.gap.dropped === null ? null : strainDecision.gap.dropped / reference,
        },
      },
    },
    strains,
    zeroStrain,
  };
}

/** ‖L⁻¹‖₂ = 1 / σ_min(L) for L = [A1 A2]. */
function inverseNorm(A1: Vec2, A2: Vec2): number {
  const f = A1[0] ** 2 + A1[1] ** 2 + A2[0] ** 2 + A2[1] ** 2;
  const det = Math.abs(A1[0] * A2[1] - A2[0] * A1[1]);
  // σ_min² = (f − √(f² − 4 det²)) / 2, written without cancellation: 2 det² / (f + √(f² − 4 det²))
  const smin2 = (2 * det * det) / (f + Math.sqrt(Math.max(0, f * f - 4 * det * det)));
  return 1 / Math.sqrt(smin2);
}

/**
 * Whether the space's strains are auxetic (definite): dimension 1 as its element; dimension 2
 * iff its unit normal n is indefinite (then diag(b, a) ⊥ diag(a, −b) in n's frame; a definite or
 * semidefinite normal excludes definite strains); dimension 3 always some.
 */
function auxeticOfSpace(basis: Float64Array[]): 'all' | 'some' | 'none' {
  if (basis.length === 0) return 'none';
  if (basis.length === 1) return describeStrain(symOf(basis[0])).auxetic ? 'all' : 'none';
  if (basis.length >= 3) return 'some';
  const [nrm] = orthonormalComplement(basis, 3, 1);
  const e = symOf(nrm);
  const det = e[0][0] * e[1][1] - e[0][1] * e[1][0];
  return det < -STRAIN_ZERO ? 'some' : 'none';
}

function inLengthUnits(d: RankDecision, L: number): RankDecision {
  const times = (v: number | null) => (v === null ? null : v * L);
  return {
    ...d,
    tolerance: { relative: d.tolerance.relative, absolute: d.tolerance.absolute * L },
    sigmaMax: d.sigmaMax * L,
    gap: { ...d.gap, kept: times(d.gap.kept), dropped: times(d.gap.dropped) },
  };
}
