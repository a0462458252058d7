/** Data exports: the mode data (JSON, the shared format of src/io/modes.ts) and the counts (CSV). */
import { modeData, modesToJson, type ModeData } from '../../io/modes.js';
import type { AnalyseResult } from '../../worker/protocol.js';
import { frameworkOf, frameworkSpec, type AppState } from '../state.js';

/** The mode-data document of an app result (the state it was computed for). */
export function modeDataOfResult(r: AnalyseResult, s: AppState): ModeData {
  const g = r.geometry;
  const bars = Array.from(g.barA, (a, i) => ({
    a,
    b: g.barB[i],
    vector: [g.barVector[2 * i], g.barVector[2 * i + 1]],
    phase: [g.barPhase[2 * i], g.barPhase[2 * i + 1]],
    wraps: [g.barWraps[2 * i], g.barWraps[2 * i + 1]],
  }));
  return modeData({
    spec: s.framework.kind === 'gallery' ? frameworkSpec(s.framework) : s.framework.fileName,
    framework: frameworkOf(s.framework),
    layout: g,
    bars,
    boundary: g.bc,
    counts: r.counts,
    classification: r.classification,
    ...(r.classificationNote !== undefined ? { classificationNote: r.classificationNote } : {}),
    modes: r.modes,
    // A note means the basis was not computed (switched off or too large).
    // classified self-stresses carry their axial forces and the classification with them
    selfStresses: r.stressNote !== undefined ? null : r.stresses.map((st) => (st.forces ? { ...st, axialForce: { re: st.forces, im: null } } : st)),
    ...(r.stressNote !== undefined ? { selfStressNote: r.stressNote } : {}),
    ...(r.stressClassification
      ? {
          stressClassification: {
            counts: r.stressClassification.counts,
            thresholds: r.stressClassification.thresholds,
            shortStripStresses: r.stressClassification.shortStripStresses,
            warnings: r.stressClassification.warnings ?? [],
            macroscopic: r.stressClassification.macroscopic,
          },
        }
      : {}),
  });
}

/** The "Mode data (JSON)" file. */
export function modesJson(r: AnalyseResult, s: AppState): string {
  return modesToJson(modeDataOfResult(r, s));
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
