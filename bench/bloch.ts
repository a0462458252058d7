/**
 * The Bloch path against numpy's batched SVD of the same one-cell symbol blocks, in one run
 * (`npm run bench:bloch`; sizes and a spec may follow: `128,256 gallery:kagome`, default 256,512).
 *
 * shimmy: `node bin/shimmy.cjs count SPEC --cells NxN --bc periodic --json` from spawn to exit
 * (whole process) and the count's own time (`seconds` of count --json). numpy: the symbol
 * Φ(φ) of src/spectrum/symbol.ts at every phase φ = (m1/N1, m2/N2), stacked into one
 * M×bars×2·joints complex array and passed to numpy.linalg.svd(compute_uv=False), single-threaded;
 * the stacking and the SVD are timed inside python (no start-up, no imports). numpy does every
 * block, shimmy one of each conjugate pair. Repeats alternate shimmy and numpy; medians and the
 * min–max spread are printed. A measurement, never a test.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { buildGallery } from '../src/framework/gallery.js';
import { SymbolAssembler } from '../src/spectrum/symbol.js';
import { firstLine, fmtSpread, pythonWorks, runPython, spread } from './reference.js';

const ROOT = join(dirname(fileURLToPath(import.meta.url)), '..');
const BIN = join(ROOT, 'bin', 'shimmy.cjs');
const REPEATS = 3;

const sizes = (process.argv[2] ?? '256,512').split(',').map(Number);
const spec = process.argv[3] ?? 'gallery:kagome';
if (sizes.some((n) => !Number.isInteger(n) || n < 1)) {
  console.error('bench/bloch: sizes must be positive integers, e.g. 256,512');
  process.exit(2);
}

/** Stacks Φ at every phase of an N1×N2 periodic supercell and takes its singular values. */
const NUMPY = String.raw`
import json, sys, time
import numpy as np
d = json.load(open(sys.argv[1]))
N1, N2 = d["N1"], d["N2"]
m, n = d["rows"], d["cols"]
fr, to = np.array(d["from"]), np.array(d["to"])
px, py = np.array(d["px"]), np.array(d["py"])
s1, s2 = np.array(d["s1"]), np.array(d["s2"])
t0 = time.perf_counter()
p1 = np.repeat(np.arange(N1) / N1, N2)
p2 = np.tile(np.arange(N2) / N2, N1)
z = np.exp(2j * np.pi * (np.outer(p1, s1) + np.outer(p2, s2)))
B = np.zeros((N1 * N2, m, n), dtype=complex)
r = np.arange(m)
B[:, r, 2 * fr] -= px
B[:, r, 2 * fr + 1] -= py
B[:, r, 2 * to] += z * px
B[:, r, 2 * to + 1] += z * py
t1 = time.perf_counter()
S = np.linalg.svd(B, compute_uv=False)
t2 = time.perf_counter()
cut = 1e-9 * S.max()
rank = int((S > cut).sum())
print(json.dumps({"seconds": t2 - t0, "svdSeconds": t2 - t1, "count": N1 * N2 * n - rank}))
`;

function shimmyCount(N: number): { seconds?: number; solveSeconds?: number; flexes?: number; note?: string } {
  const t0 = process.hrtime.bigint();
  const p = spawnSync(process.execPath, [BIN, 'count', spec, '--cells', `${N}x${N}`, '--bc', 'periodic', '--json', '--allow-large'], { cwd: ROOT, encoding: 'utf8', maxBuffer: 64 * 1024 * 1024 });
  const seconds = Number(process.hrtime.bigint() - t0) / 1e9;
  if (p.status !== 0) return { note: firstLine(p.stderr) || `exit ${p.status}` };
  const json = JSON.parse(p.stdout) as { seconds: number; flexes: number; solver: string };
  return { seconds, solveSeconds: json.seconds, flexes: json.flexes };
}

if (!pythonWorks()) {
  console.error('bench/bloch: python3 with numpy is needed for the reference (python3 -c "import numpy, scipy" failed)');
  process.exit(1);
}
const phi = new SymbolAssembler(buildGallery(spec));
const dir = mkdtempSync(join(tmpdir(), 'shimmy-bloch-'));
const fmt = (s: number) => s.toFixed(2);
console.log(`${spec}, periodic N×N: shimmy's Bloch count against numpy.linalg.svd of the ${phi.rows}×${phi.cols} symbol blocks (single-threaded); ${REPEATS} interleaved repeats, median (min–max) seconds`);
shimmyCount(2); // warm-up (tsx transpile cache)
for (const N of sizes) {
  const file = join(dir, `symbol-${N}.json`);
  writeFileSync(file, JSON.stringify({ N1: N, N2: N, rows: phi.rows, cols: phi.cols, from: [...phi.from], to: [...phi.to], px: [...phi.px], py: [...phi.py], s1: [...phi.s1], s2: [...phi.s2] }));
  const whole: number[] = [];
  const inner: number[] = [];
  const np: number[] = [];
  const npSvd: number[] = [];
  let flexes: number | undefined;
  let npCount: number | undefined;
  const notes: string[] = [];
  for (let rep = 0; rep < REPEATS; rep++) {
    const s = shimmyCount(N);
    if (s.seconds !== undefined) {
      whole.push(s.seconds);
      inner.push(s.solveSeconds!);
      flexes = s.flexes;
    } else notes.push(`shimmy: ${s.note}`);
    const r = runPython(NUMPY, [file], 600) as { seconds?: number; svdSeconds?: number; count?: number; note?: string };
    if (r.seconds !== undefined) {
      np.push(r.seconds);
      npSvd.push(r.svdSeconds!);
      npCount = r.count;
    } else notes.push(`numpy: ${r.note}`);
  }
  const w = spread(whole);
  const i = spread(inner);
  const n = spread(np);
  console.log(`N = ${N} (${N * N} blocks)`);
  console.log(`  shimmy count, whole process  ${fmtSpread(w, fmt)}; in-process ${fmtSpread(i, fmt)}; flexes ${flexes ?? '—'}`);
  console.log(`  numpy stack + batched SVD    ${fmtSpread(n, fmt)}; SVD alone ${fmtSpread(spread(npSvd), fmt)}; flexes ${npCount ?? '—'} (σ ≤ 1e-9·σ_max)`);
  if (i && n) console.log(`  shimmy in-process ÷ numpy: ${(i.median / n.median).toFixed(2)}×; whole process ÷ numpy: ${(w!.median / n.median).toFixed(2)}×`);
  for (const note of notes) console.log(`  ${note}`);
}
rmSync(dir, { recursive: true, force: true });
