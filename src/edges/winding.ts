/**
 * Winding numbers of det Φ along the two cycles of the phase torus, and the polarisation.
 *
 * n1 = (1/2π) × the increase of arg det Φ(θ1, τ) as θ1 runs 0 → 1 at a fixed transverse phase
 * θ2 = τ; n2 likewise with the roles swapped. The gauge is that of src/spectrum/symbol.ts (the
 * row of bar a→b with shift s holds −p at a and +z^s·p at b), so the windings depend on which
 * cell each joint and bar belongs to; R_T = n1 a1 + n2 a2 does too. The per-edge counts
 * n2 − lo and hi − n2 (lo..hi the Laurent span of det Φ in z2; likewise for a2) do not.
 *
 * The winding is taken at several transverse phases off the zero set: when a cycle passes within
 * 1e-8 × max|det| of zero it is skipped; when the others disagree the winding depends on the
 * transverse phase (zeros of det Φ lie between them, e.g. charged Weyl points) and is reported
 * as undefined.
 */
import type { Framework } from '../framework/types.js';
import { determinantOnCircle } from './determinant.js';
import { LaurentSymbol, type EdgeAxis } from './laurent.js';

/** Transverse phases tried (turns); irrational-looking so that symmetric zero lines are missed. */
export const TRANSVERSE_PHASES = [0.1234, 0.3871, 0.6459, 0.8917];

export interface AxisWinding {
  /** 1 for n1 (the θ1 cycle), 2 for n2. */
  axis: 1 | 2;
  /** The winding, or null when undefined (see note). */
  value: number | null;
  /** The winding at each transverse phase tried (null: the cycle passed through the zero set). */
  samples: { transverse: number; winding: number | null }[];
  note: string | null;
}

/** Winding of det along z = exp(2πit), t: 0 → 1, for the Laurent symbol L; null if it nears zero. */
export function windingOnCircle(L: LaurentSymbol, start = 128): number | null {
  const values: [number, number][] = [];
  const ts: number[] = [];
  let maxAbs = 0;
  for (let j = 0; j <= start; j++) {
    const t = j / start;
    const d = j === start ? values[0] : determinantOnCircle(L, t).det;
    values.push(d);
    ts.push(t);
    maxAbs = Math.max(maxAbs, Math.hypot(d[0], d[1]));
  }
  if (!(maxAbs > 0)) return null;
  const floor = 1e-8 * maxAbs;
  let total = 0;
  const segment = (t0: number, d0: [number, number], t1: number, d1: [number, number], depth: number): number | null => {
    if (Math.hypot(d0[0], d0[1]) <= floor || Math.hypot(d1[0], d1[1]) <= floor) return null;
    const step = Math.atan2(d0[0] * d1[1] - d0[1] * d1[0], d0[0] * d1[0] + d0[1] * d1[1]);
    if (Math.abs(step) <= 0.3 || depth >= 20) return Math.abs(step) < 3 ? step : null;
    const tm = 0.5 * (t0 + t1);
    const dm = determinantOnCircle(L, tm).det;
    const a = segment(t0, d0, tm, dm, depth + 1);
    const b = a === null ? null : segment(tm, dm, t1, d1, depth + 1);
    return a === null || b === null ? null : a + b;
  };
  for (let j = 0; j < start; j++) {
    const s = segment(ts[j], values[j], ts[j + 1], values[j + 1], 0);
    if (s === null) return null;
    total += s;
  }
  const w = total / (2 * Math.PI);
  const n = Math.round(w);
  return Math.abs(w - n) < 0.05 ? n : null;
}

/**
 * n_axis: the winding along the θ_axis cycle. Along θ1 the fixed phase is θ2, which is the
 * Laurent symbol of an edge along a2 with z = z1, and conversely.
 */
export function axisWinding(fw: Framework, axis: 1 | 2): AxisWinding {
  const probe = new LaurentSymbol(fw, 'a1', 0);
  if (probe.rows !== probe.cols) {
    return { axis, value: null, samples: [], note: `Φ is ${probe.rows}×${probe.cols}, not square (not Maxwell-counted per cell): det Φ and its winding are undefined` };
  }
  const edge: EdgeAxis = axis === 1 ? 'a2' : 'a1';
  const samples = TRANSVERSE_PHASES.map((tau) => ({ transverse: tau, winding: windingOnCircle(new LaurentSymbol(fw, edge, tau)) }));
  const found = [...new Set(samples.map((s) => s.winding).filter((w): w is number => w !== null))];
  const other = axis === 1 ? 'θ2' : 'θ1';
  if (found.length === 0) {
    return { axis, value: null, samples, note: `det Φ comes within 1e-8 of zero on every θ${axis} cycle tried (${other} = ${TRANSVERSE_PHASES.join(', ')}): a zero line or flat band, so n${axis} is undefined` };
  }
  if (found.length > 1) {
    return { axis, value: null, samples, note: `n${axis} depends on the transverse phase ${other} (${samples.map((s) => `${s.winding ?? '—'} at ${s.transverse}`).join(', ')}): det Φ has zeros between these cycles (e.g. charged Weyl points)` };
  }
  const skipped = samples.filter((s) => s.winding === null).length;
  return { axis, value: found[0], samples, note: skipped ? `${skipped} of ${samples.length} cycles passed through the zero set and were skipped` : null };
}

export interface Polarisation {
  winding: [number, number] | null;
  byAxis: [AxisWinding, AxisWinding];
  /** R_T = n1 a1 + n2 a2 (framework units), when both windings are defined. */
  polarisation: [number, number] | null;
  note: string | null;
}

export function polarisation(fw: Framework): Polarisation {
  const n1 = axisWinding(fw, 1);
  const n2 = axisWinding(fw, 2);
  const notes = [...new Set([n1.note, n2.note].filter((s): s is string => s !== null))];
  if (n1.value === null || n2.value === null) return { winding: null, byAxis: [n1, n2], polarisation: null, note: notes.join('; ') };
  const [a1, a2] = fw.lattice;
  const R: [number, number] = [n1.value * a1[0] + n2.value * a2[0] + 0, n1.value * a1[1] + n2.value * a2[1] + 0];
  return { winding: [n1.value, n2.value], byAxis: [n1, n2], polarisation: R, note: notes.length ? notes.join('; ') : null };
}
