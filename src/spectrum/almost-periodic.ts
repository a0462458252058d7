/**
 * The almost-periodic rigidity verdict: a crystal framework is almost periodically
 * infinitesimally rigid exactly when it is periodically infinitesimally rigid (at θ = 0 the
 * symbol's kernel holds the two translations only) and the zero set of Φ on the phase torus is
 * Γ = (0, 0) alone (S. A. Badri, D. Kitson & S. C. Power, "The almost periodic rigidity of
 * crystallographic bar-joint frameworks", Symmetry 6(2), 308–328, 2014).
 *
 * A sampled map can miss an isolated zero between grid points, so the verdict is proved, not
 * sampled. With n = 2·joints columns, σ_n(θ) (the n-th singular value, 0 when Φ has a kernel)
 * is what must stay positive away from Γ:
 *  - Away from Γ, by a Lipschitz bound. ‖Φ(θ) − Φ(θ')‖ ≤ L·|θ − θ'| with
 *    L = 2π·(Σ_bars |s|²·|p|²)^½ (|e^{ix} − e^{iy}| ≤ |x − y|, spectral ≤ Frobenius norm), and
 *    σ_n moves by at most as much (Weyl). A square cell of half-width h is free of zeros when
 *    σ_n at its centre exceeds L·h·√2 (plus the rounding margin); other cells are split in four.
 *  - Near Γ, by the first-order expansion Φ(ρθ̂) = Φ0 + ρΦ1(θ̂) + E, ‖E‖ ≤ C2ρ²,
 *    C2 = 2π²·(Σ |s|⁴·|p|²)^½. Write a unit x = αt + βy, t a translation, y ⊥ ker Φ0. Then
 *    ‖Φ(θ)x‖ ≥ max(ρ(|α|q − |β|L), |β|s0 − ρL) − C2ρ², with s0 the smallest nonzero singular
 *    value of Φ0 and q = min over directions θ̂ of σ_min(P·Φ1(θ̂) on the translations), P the
 *    projector onto ker Φ0ᴴ (the periodic self-stresses). Splitting at |β| = ρ(q/2 + L)/s0 gives
 *    σ_n ≥ ρ(q/2 − C2ρ) > 0 on a disk 0 < ρ ≤ r0 computed below. q = 0 means Γ is a degenerate
 *    zero (Φ gains rank more slowly than linearly along some direction): undecided.
 * A zero away from Γ is found by descending σ_n from cells that cannot be certified; it is a
 * zero to the rank tolerance (σ_n ≤ relative·σ_max), which the verdict says.
 * Phases θ are in turns; distances |θ| are Euclidean in turns on [−½, ½)², which is the torus
 * distance to Γ.
 */
import type { Framework } from '../framework/types.js';
import { checkFramework } from '../framework/validate.js';
import { DEFAULT_RELATIVE_TOLERANCE, EPS, svdBackwardError } from '../linalg/rank.js';
import { jacobiSvd } from './jacobi.js';
import { newtonZero, SymbolEvaluator } from './phasemap.js';
import { SymbolAssembler } from './symbol.js';

export interface AlmostPeriodicOptions {
  /** Relative rank tolerance (× the largest σ_max over the starting grid). */
  tolerance?: number;
  /** Cells per axis of the starting grid (even). */
  grid?: number;
  /** Most evaluations of Φ before the search gives up (the verdict is then undecided). */
  budget?: number;
}

export interface AlmostPeriodicVerdict {
  /** 'rigid' is proved; 'not rigid' is proved or rests on a zero to the tolerance (see `certified`). */
  verdict: 'rigid' | 'not rigid' | 'undecided';
  /** True when the verdict does not depend on the rank tolerance. */
  certified: boolean;
  /** One sentence: why. */
  reason: string;
  /** dim ker Φ(0) (2 = the translations only: periodically rigid), with its gap. */
  periodic: { kernel: number; keptOverSigmaMax: number | null; droppedOverSigmaMax: number | null };
  /** A phase other than Γ where σ_n ≤ tolerance, with σ_n/σ_max there. */
  witness: { theta: [number, number]; sigmaRelative: number } | null;
  /** The certified disk around Γ: its radius in turns, q/σ_max and s0/σ_max (null when not reached). */
  gamma: { radius: number; firstOrder: number; gap: number | null } | null;
  /** The search: Φ evaluations, the Lipschitz constant relative to σ_max, and cells left undecided. */
  search: { evaluations: number; lipschitz: number; undecidedCells: number; smallestSeen: number | null };
  tolerance: { relative: number; absolute: number };
  sigmaMax: number;
}

const DEFAULT_GRID = 32;
/** Default budget: about 4e7·(n³ flops of one small SVD) of work, at most 200,000 evaluations. */
function defaultBudget(n: number): number {
  return Math.min(200_000, Math.max(2_000, Math.floor(4e7 / Math.max(1, n) ** 3)));
}
/** Cells are not split below this half-width (turns): far below any physical phase scale. */
const MIN_HALF_WIDTH = 1e-7;
/** Directions sampled for q (the minimum over θ̂ is taken with its Lipschitz margin). */
const DIRECTIONS = 2048;

export function almostPeriodicVerdict(framework: Framework, opts: AlmostPeriodicOptions = {}): AlmostPeriodicVerdict {
  const fw = checkFramework(framework);
  const relative = opts.tolerance ?? DEFAULT_RELATIVE_TOLERANCE;
  const g = Math.max(2, 2 * Math.round((opts.grid ?? DEFAULT_GRID) / 2));
  const ev = new SymbolEvaluator(fw);
  const budget = opts.budget ?? defaultBudget(ev.cols);
  const asm = new SymbolAssembler(fw);
  const m = ev.rows;
  const n = ev.cols;
  const J = n / 2;
  let evaluations = 0;
  const sigmaN = (t1: number, t2: number): number => {
    evaluations++;
    return n ? ev.sigma(frac(t1), frac(t2))[0] : 0;
  };

  // the scale: σ_max over the starting grid's nodes (θ = i/g − ½)
  let sigmaMax = 0;
  const nodes: { t: [number, number]; s: number }[] = [];
  for (let i2 = 0; i2 < g; i2++)
    for (let i1 = 0; i1 < g; i1++) {
      const t: [number, number] = [i1 / g - 0.5, i2 / g - 0.5];
      const s = ev.sigma(frac(t[0]), frac(t[1]));
      evaluations++;
      sigmaMax = Math.max(sigmaMax, n ? s[n - 1] : 0);
      nodes.push({ t, s: n ? s[0] : 0 });
    }
  const absolute = relative * sigmaMax;
  const margin = svdBackwardError(m, n, sigmaMax);
  const rel = (v: number) => (sigmaMax > 0 ? v / sigmaMax : 0);
  const base = { tolerance: { relative, absolute: absolute * ev.lengthScale }, sigmaMax: sigmaMax * ev.lengthScale };
  const search = (undecidedCells: number, smallestSeen: number | null) => ({ evaluations, lipschitz: rel(lip), undecidedCells, smallestSeen });

  // Lipschitz constants of θ ↦ Φ(θ) (first and second order), in Φ's units
  let l2 = 0;
  let c2 = 0;
  for (let r = 0; r < m; r++) {
    const s2 = asm.s1[r] * asm.s1[r] + asm.s2[r] * asm.s2[r];
    const p2 = asm.px[r] * asm.px[r] + asm.py[r] * asm.py[r];
    l2 += s2 * p2;
    c2 += s2 * s2 * p2;
  }
  const lip = 2 * Math.PI * Math.sqrt(l2);
  const C2 = 2 * Math.PI * Math.PI * Math.sqrt(c2);

  // 1. periodic rigidity at Γ
  if (m < n || sigmaMax === 0) {
    return {
      verdict: 'not rigid',
      certified: true,
      reason: m < n ? `Φ has ${m} rows for ${n} columns: a flex at every phase` : 'Φ is zero: every motion is a flex',
      periodic: { kernel: n - Math.min(m, n), keptOverSigmaMax: null, droppedOverSigmaMax: null },
      witness: null,
      gamma: null,
      search: search(0, null),
      ...base,
    };
  }
  const phi0 = asm.assemble(0, 0);
  const svd0 = jacobiSvd(phi0.re, phi0.im, m, n); // descending, n values (m ≥ n)
  evaluations++;
  let rank0 = 0;
  while (rank0 < n && svd0.sigma[rank0] > absolute) rank0++;
  const kernel0 = n - rank0;
  const kept = rank0 > 0 ? svd0.sigma[rank0 - 1] : null;
  const dropped = rank0 < n ? svd0.sigma[rank0] : null;
  const periodic = { kernel: kernel0, keptOverSigmaMax: kept === null ? null : rel(kept), droppedOverSigmaMax: dropped === null ? null : rel(dropped) };
  if (kernel0 > 2) {
    // the count at Γ is proved when no singular value lies within the rounding margin of the cut
    const clear = Array.from(svd0.sigma).every((s) => Math.abs(s - absolute) > margin);
    return {
      verdict: 'not rigid',
      certified: clear,
      reason: `not periodically rigid: dim ker Φ(0) = ${kernel0} > 2 (flexes beyond the two translations)`,
      periodic,
      witness: { theta: [0, 0], sigmaRelative: rel(dropped ?? 0) },
      gamma: null,
      search: search(0, null),
      ...base,
    };
  }

  // 2. the disk around Γ
  // smallest nonzero σ of Φ0 (kernel0 = 2); a one-joint cell has no motion but the translations
  const s0 = n > 2 ? svd0.sigma[n - 3] - margin : Infinity;
  const gamma = gammaDisk(asm, svd0, rank0, J, lip, C2, s0, margin);

  // 3. the rest of the torus: certify cells, look for a zero where they fail
  const r0 = gamma?.radius ?? 0;
  const tooClose = Math.max(r0, 1e-6);
  let smallest = Infinity;
  for (const node of nodes) {
    const d = Math.hypot(node.t[0], node.t[1]);
    if (d > tooClose && node.s <= absolute) return witnessResult(node.t, node.s);
    if (d > r0) smallest = Math.min(smallest, node.s);
  }
  const h0 = 0.5 / g;
  const stack: [number, number, number, number][] = []; // centre x, y, half-width, depth
  for (let i2 = 0; i2 < g; i2++) for (let i1 = 0; i1 < g; i1++) stack.push([(i1 + 0.5) / g - 0.5, (i2 + 0.5) / g - 0.5, h0, 0]);
  let undecided = 0;
  while (stack.length) {
    const [x, y, h, depth] = stack.pop()!;
    // a cell wholly inside the certified disk needs nothing more
    if (Math.hypot(Math.abs(x) + h, Math.abs(y) + h) <= r0) continue;
    if (evaluations >= budget) {
      undecided += 1 + stack.length;
      break;
    }
    const s = sigmaN(x, y);
    if (Math.hypot(x, y) > r0) smallest = Math.min(smallest, s);
    if (s > lip * h * Math.SQRT2 + margin) continue;
    if (s <= absolute && Math.hypot(x, y) > tooClose) return witnessResult([x, y], s);
    if (depth === 3) {
      // a failing cell three splits down: descend σ_n from it once
      const z = newtonZero(ev, 0, [x, y], 4 * h, margin);
      evaluations += 20;
      const t: [number, number] = [wrapHalf(z.x[0]), wrapHalf(z.x[1])];
      if (z.sigma <= absolute && Math.hypot(t[0], t[1]) > tooClose) return witnessResult(t, z.sigma);
    }
    if (h / 2 < MIN_HALF_WIDTH) {
      undecided++;
      continue;
    }
    const q = h / 2;
    stack.push([x - q, y - q, q, depth + 1], [x + q, y - q, q, depth + 1], [x - q, y + q, q, depth + 1], [x + q, y + q, q, depth + 1]);
  }
  const smallestSeen = Number.isFinite(smallest) ? rel(smallest) : null;
  if (!gamma) {
    return {
      verdict: 'undecided',
      certified: false,
      reason: 'Γ is a degenerate zero: Φ gains rank more slowly than linearly along some direction, which the first-order bound cannot decide',
      periodic,
      witness: null,
      gamma: null,
      search: search(undecided, smallestSeen),
      ...base,
    };
  }
  if (undecided > 0) {
    return {
      verdict: 'undecided',
      certified: false,
      reason: `${undecided} cell${undecided === 1 ? '' : 's'} of the torus could be neither proved free of zeros nor shown to hold one within the search budget (smallest σ_n/σ_max seen ${smallestSeen?.toExponential(2)})`,
      periodic,
      witness: null,
      gamma: gammaOut(gamma),
      search: search(undecided, smallestSeen),
      ...base,
    };
  }
  return {
    verdict: 'rigid',
    certified: true,
    reason: `periodically rigid (dim ker Φ(0) = 2, the translations) and Φ has no zero but Γ: proved on a disk of radius ${gamma.radius.toExponential(2)} turns around Γ by the first-order bound and on the rest of the torus by the Lipschitz bound`,
    periodic,
    witness: null,
    gamma: gammaOut(gamma),
    search: search(0, smallestSeen),
    ...base,
  };

  function gammaOut(gm: { radius: number; q: number; s0: number }) {
    return { radius: gm.radius, firstOrder: rel(gm.q), gap: gm.s0 > 0 ? rel(gm.s0) : null };
  }
  function witnessResult(t: [number, number], s: number): AlmostPeriodicVerdict {
    return {
      verdict: 'not rigid',
      certified: s <= margin,
      reason: `Φ has a zero away from Γ: σ_n/σ_max = ${rel(s).toExponential(2)} at θ = (${t[0].toFixed(6)}, ${t[1].toFixed(6)}) (below the tolerance ${relative})`,
      periodic,
      witness: { theta: [frac(t[0]), frac(t[1])], sigmaRelative: rel(s) },
      gamma: gamma ? gammaOut(gamma) : null,
      search: search(0, rel(s)),
      ...base,
    };
  }
}

/**
 * The radius r0 of the disk around Γ proved free of other zeros (see the header), with q and s0;
 * null when q (the first-order growth on the translations) is not positive.
 */
function gammaDisk(
  asm: SymbolAssembler,
  svd0: ReturnType<typeof jacobiSvd>,
  rank0: number,
  J: number,
  lip: number,
  C2: number,
  s0: number,
  margin: number,
): { radius: number; q: number; s0: number } | null {
  const m = asm.rows;
  if (!(s0 > 0)) return null;
  // with s0 = ∞ (no y) the bound is ρ(q − C2ρ): the b-split below gives b = 0 and q/2 → q
  // B_k[:, c] = P·(2π s_k (p · e_c)/√J) over the rows, c = x, y translation, P = I − U_r U_rᵀ
  const cols: Float64Array[] = [];
  for (let k = 0; k < 2; k++)
    for (let c = 0; c < 2; c++) {
      const w = new Float64Array(m);
      for (let r = 0; r < m; r++) w[r] = (2 * Math.PI * (k === 0 ? asm.s1[r] : asm.s2[r]) * (c === 0 ? asm.px[r] : asm.py[r])) / Math.sqrt(J);
      for (let j = 0; j < rank0; j++) {
        let d = 0;
        for (let r = 0; r < m; r++) d += svd0.uRe[j * m + r] * w[r];
        for (let r = 0; r < m; r++) w[r] -= d * svd0.uRe[j * m + r];
      }
      cols.push(w);
    }
  const dot = (a: Float64Array, b: Float64Array) => {
    let s = 0;
    for (let i = 0; i < a.length; i++) s += a[i] * b[i];
    return s;
  };
  // B(φ) = cos φ·B1 + sin φ·B2 (B1 = cols 0, 1; B2 = cols 2, 3); Gram entries for σ_min
  const G = (i: number, j: number) => dot(cols[i], cols[j]);
  const fro = (a: number, b: number) => Math.sqrt(G(a, a) + G(b, b));
  const slope = fro(0, 1) + fro(2, 3);
  let qmin = Infinity;
  for (let t = 0; t < DIRECTIONS; t++) {
    const phi = (Math.PI * t) / DIRECTIONS;
    const c = Math.cos(phi);
    const s = Math.sin(phi);
    const g11 = c * c * G(0, 0) + 2 * c * s * G(0, 2) + s * s * G(2, 2);
    const g22 = c * c * G(1, 1) + 2 * c * s * G(1, 3) + s * s * G(3, 3);
    const g12 = c * c * G(0, 1) + c * s * (G(0, 3) + G(2, 1)) + s * s * G(2, 3);
    const half = (g11 + g22) / 2;
    const lam = half - Math.sqrt(Math.max(0, half * half - (g11 * g22 - g12 * g12)));
    qmin = Math.min(qmin, Math.sqrt(Math.max(0, lam)));
  }
  const q = qmin - slope * (Math.PI / DIRECTIONS / 2) - margin - 64 * EPS * slope;
  if (!(q > 0)) return null;
  // largest b with √(1 − b²)·q − b·L ≥ q/2 (decreasing in b), by bisection
  let lo = 0;
  let hi = 1;
  for (let it = 0; it < 60; it++) {
    const b = (lo + hi) / 2;
    if (Math.sqrt(1 - b * b) * q - b * lip >= q / 2) lo = b;
    else hi = b;
  }
  const radius = s0 === Infinity
    ? 0.99 * Math.min(C2 > 0 ? q / C2 : Infinity, 0.5)
    : 0.99 * Math.min((lo * s0) / (q / 2 + lip), C2 > 0 ? q / (2 * C2) : Infinity, 0.5);
  return radius > 0 ? { radius, q, s0: Number.isFinite(s0) ? s0 : 0 } : null;
}

function frac(t: number): number {
  return t - Math.floor(t);
}

function wrapHalf(t: number): number {
  return t - Math.round(t);
}
