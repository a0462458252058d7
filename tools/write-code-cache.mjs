// Build step (npm run build:cli): one small open count through bin/shimmy.cjs with
// SHIMMY_WRITE_CODE_CACHE=1, so the CLI bundle's V8 code cache (build/cli/run.cjs.cache) holds the
// functions a count compiles. Later runs then skip parsing and compiling them (~30 ms of start-up
// here). Without the cache, or when V8 rejects it (another Node version), nothing changes but time.
import { spawnSync } from 'node:child_process';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const r = spawnSync(process.execPath, [join(root, 'bin', 'shimmy.cjs'), 'count', 'gallery:kagome', '--cells', '40x40', '--json'], {
  env: { ...process.env, SHIMMY_WRITE_CODE_CACHE: '1', SHIMMY_THREADS: '1' },
  encoding: 'utf8',
});
if (r.status !== 0) {
  console.error(`write-code-cache: the warm-up count failed (exit ${r.status}); the CLI runs without a code cache.\n${r.stderr}`);
}
