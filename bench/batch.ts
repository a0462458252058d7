/**
 * Benchmark of `shimmy batch`: a 64-job scan (shimmy count with the dense solver on the open
 * twisted kagome at 64 twist angles: about 0.25 s of computing each, little else) run by the CLI
 * on 1 worker thread and then on 2, whole process from spawn to exit; prints both times and their
 * ratio against the target (2 workers ≥ 1.6× faster than 1). A measurement, not a test: it never
 * fails a build.
 *
 *   npm run bench:batch                    # 8×8 cells per job
 *   npm run bench:batch -- --cells 10x10   # longer jobs (about 0.75 s each)
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { availableParallelism, loadavg, tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const ROOT = join(dirname(fileURLToPath(import.meta.url)), '..');
const BIN = join(ROOT, 'bin', 'shimmy.cjs');
const TARGET = 1.6;

const argv = process.argv.slice(2);
const cells = argv[0] === '--cells' && argv[1] ? argv[1] : '8x8';
if (argv.length && !(argv[0] === '--cells' && /^\d+x\d+$/.test(argv[1] ?? '') && argv.length === 2)) {
  console.error('bench/batch: the only option is --cells N1xN2, e.g. --cells 10x10');
  process.exit(2);
}

const dir = mkdtempSync(join(tmpdir(), 'shimmy-bench-batch-'));
const plan = join(dir, 'plan.json');
// twist −31°, −30°, …, 32°: 64 jobs of about the same cost
writeFileSync(plan, JSON.stringify({ grid: { command: 'count', framework: 'gallery:twisted-kagome?twist=-31..32:1', cells, bc: 'free', options: { solver: 'dense' } } }));

function run(workers: number): { seconds: number; ok: number; lines: number } {
  const out = join(dir, `out-${workers}.jsonl`);
  const t0 = performance.now();
  const r = spawnSync(process.execPath, [BIN, 'batch', plan, '--workers', String(workers), '--out', out], { encoding: 'utf8' });
  const seconds = (performance.now() - t0) / 1000;
  if (r.status !== 0) console.error(`bench/batch: --workers ${workers} exited with ${r.status}: ${r.stderr.split('\n').slice(-3).join(' ')}`);
  const lines = readFileSync(out, 'utf8').trim().split('\n').map((l) => JSON.parse(l) as { ok: boolean });
  return { seconds, ok: lines.filter((l) => l.ok).length, lines: lines.length };
}

console.log(`shimmy batch: 64 × count "gallery:twisted-kagome?twist=…" --cells ${cells} --bc free --solver dense; ${availableParallelism()} cores, load average ${loadavg()[0].toFixed(2)} at start`);
const one = run(1);
const two = run(2);
console.log('| workers | seconds | jobs ok | jobs/s |');
console.log('|---|---|---|---|');
for (const [w, r] of [[1, one], [2, two]] as const) console.log(`| ${w} | ${r.seconds.toFixed(2)} | ${r.ok}/${r.lines} | ${(r.lines / r.seconds).toFixed(1)} |`);
const ratio = one.seconds / two.seconds;
console.log(`2 workers against 1: ${ratio.toFixed(2)}× (target ≥ ${TARGET}×: ${ratio >= TARGET ? 'met' : 'NOT met'}); load average ${loadavg()[0].toFixed(2)} at the end`);
rmSync(dir, { recursive: true, force: true });
