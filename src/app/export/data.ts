/** Data exports: the mode data (JSON) and the counts (CSV). */
import { CAUTION } from '../../caution.js';
import type { AnalyseResult } from '../../worker/protocol.js';
import { frameworkOf, frameworkSpec, type AppState } from '../state.js';

export const MODES_FORMAT = 'shimmy mode data';

const arr = (a: ArrayLike<number>) => Array.from(a);

function pairs(a: ArrayLike<number>): [number, number][] {
  const out: [number, number][] = [];
  for (let i = 0; i < a.length; i += 2) out.push([a[i], a[i + 1]]);
  return out;
}

export function modesJson(r: AnalyseResult, s: AppState): string {
  const g = r.geometry;
  const out = {
    format: MODES_FORMAT,
    version: 1,
    caution: CAUTION,
    framework: frameworkOf(s.framework),
    spec: s.framework.kind === 'gallery' ? frameworkSpec(s.framework) : null,
    cells: g.cells,
    bc: g.bc,
    tolerance: s.tolerance,
    window: s.window,
    strip: s.strip,
    counts: r.counts,
    classification: r.classification,
    ...(r.classificationNote ? { classificationNote: r.classificationNote } : {}),
    conventions: {
      joints: 'joint k of site s in cell (i, j) is k = (j·N1 + i)·S + s; positions are Cartesian',
      velocity: 'flex velocities: re and im of (u_x, u_y) per joint, 2 entries per joint; the motion is p + ε·Re(e^{iφ} u)',
      bars: 'a bar end of −1 is fixed ground; vector is the unwrapped bar vector; phase multiplies the to-end velocity',
      tension: 'self-stresses: one tension per bar row, positive = tension (the overall sign of a basis vector is arbitrary)',
    },
    joints: pairs(g.positions),
    jointCells: pairs(g.jointCells),
    bars: arr(g.barA).map((a, i) => ({
      from: a,
      to: g.barB[i],
      vector: [g.barVector[2 * i], g.barVector[2 * i + 1]],
      phase: [g.barPhase[2 * i], g.barPhase[2 * i + 1]],
      wraps: [g.barWraps[2 * i], g.barWraps[2 * i + 1]],
    })),
    flexes: r.modes.map((m, index) => ({
      index,
      class: m.class,
      participation: m.participation,
      ...(m.support !== undefined ? { support: m.support } : {}),
      ...(m.extents ? { extents: m.extents } : {}),
      ...(m.direction ? { direction: m.direction } : {}),
      ...(m.anchor ? { anchor: m.anchor } : {}),
      ...(m.decayLength !== undefined ? { decayLength: m.decayLength } : {}),
      ...(m.region ? { region: m.region } : {}),
      velocity: { re: arr(m.re), im: m.im ? arr(m.im) : null },
    })),
    selfStresses: r.stresses.map((st, index) => ({ index, tension: { re: arr(st.re), im: st.im ? arr(st.im) : null } })),
    ...(r.stressNote ? { selfStressNote: r.stressNote } : {}),
  };
  return JSON.stringify(out, null, 1) + '\n';
}

/** RFC 4180 field quoting. */
export function csvField(v: string | number | boolean | null): string {
  if (v === null) return '';
  const s = String(v);
  return /[",\r\n]/.test(s) ? `"${s.replace(/"/g, '""')}"` : s;
}

export const CSV_COLUMNS = [
  'framework', 'cells', 'bc', 'tolerance', 'joints', 'bars', 'grounded_bars', 'dropped_bars', 'flexes', 'trivial_flexes', 'nontrivial_flexes',
  'self_stresses', 'rank', 'dof', 'mc_lhs', 'mc_rhs', 'mc_holds', 'gap_kept', 'gap_dropped', 'gap_ratio', 'gap_ambiguous', 'solver',
  'local', 'line', 'decaying', 'bulk',
] as const;

export function countsCsv(r: AnalyseResult, s: AppState): string {
  const c = r.counts;
  const k = r.classification?.counts;
  const row: (string | number | boolean | null)[] = [
    frameworkSpec(s.framework).startsWith('gallery:') ? frameworkSpec(s.framework) : (frameworkOf(s.framework).name ?? 'framework file'),
    `${r.geometry.cells[0]}x${r.geometry.cells[1]}`,
    r.geometry.bc,
    c.tolerance.relative,
    c.joints,
    c.bars,
    c.groundedBars,
    c.droppedBars,
    c.flexes,
    c.trivialFlexes,
    c.flexes - c.trivialFlexes,
    c.selfStresses,
    c.rank,
    c.dof,
    c.maxwellCalladine.lhs,
    c.maxwellCalladine.rhs,
    c.maxwellCalladine.ok,
    c.gap.kept,
    c.gap.dropped,
    c.gap.ratio,
    c.gap.ambiguous,
    c.solver,
    k ? k.local : null,
    k ? k.line : null,
    k ? k.decaying : null,
    k ? k.bulk : null,
  ];
  return CSV_COLUMNS.join(',') + '\r\n' + row.map(csvField).join(',') + '\r\n';
}
