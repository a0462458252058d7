/**
 * Benchmark of the flex classifier: solve and classification times for free kagome and
 * twisted kagome supercells.
 *
 *   npx tsx bench/classify.ts [SIZES] [SPEC...]      e.g. npx tsx bench/classify.ts 8,16
 *
 * The solve (global flex basis) and the classification are timed separately; with the dense
 * reference solver the solve dominates from about 16×16 on. The classification's stages, in
 * seconds: windows (local flexes), strips and lines, rest (the filtration; the global flex basis
 * when it is first needed there), affine (the affine flexes and the rest's coefficients
 * without them), nearFar (the side-distance operator compressed to the rest), scdm (lazy SCDM
 * and the localised vectors), decay (the anchor fits). Process CPU time is printed beside the
 * wall-clock times, since the machine may be shared.
 */
import { buildGallery } from '../src/framework/gallery.js';
import { classifyFlexes } from '../src/flex/classify.js';
import { analyseSupercell } from '../src/flex/spaces.js';
import { parseBoundary } from '../src/supercell/boundary.js';
import { buildSupercell } from '../src/supercell/supercell.js';

const sizes = (process.argv[2] ?? '8,16').split(',').map(Number);
const specs = process.argv.length > 3 ? process.argv.slice(3) : ['gallery:kagome', 'gallery:twisted-kagome?twist=15'];

for (const spec of specs) {
  for (const N of sizes) {
    const sc = buildSupercell(buildGallery(spec), [N, N], parseBoundary('free'));
    const cpu0 = process.cpuUsage();
    const t0 = performance.now();
    const analysis = analyseSupercell(sc);
    analysis.flexBasis();
    const t1 = performance.now();
    const cpu1 = process.cpuUsage();
    const c = classifyFlexes(sc, analysis);
    const t2 = performance.now();
    const cpu2 = process.cpuUsage();
    const cpu = (a: NodeJS.CpuUsage, b: NodeJS.CpuUsage) => ((b.user + b.system - a.user - a.system) / 1e6).toFixed(2);
    const stages = Object.entries(c.timings ?? {})
      .map(([k, v]) => `${k} ${v.toFixed(2)}`)
      .join(', ');
    console.log(
      `${spec} ${N}×${N} free: ${c.flexes} flexes ${JSON.stringify(c.counts)}; solve ${((t1 - t0) / 1000).toFixed(1)} s (CPU ${cpu(cpu0, cpu1)} s), classify ${((t2 - t1) / 1000).toFixed(2)} s (CPU ${cpu(cpu1, cpu2)} s; ${stages})`,
    );
  }
}
