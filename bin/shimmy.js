#!/usr/bin/env node
// The CLI. In the installed package (no src/ folder) it runs lib/cli/run.js, the compiled
// modules. In a checkout, `npm ci` builds build/cli/run.js (a single ES module, fast to start);
// when that build is missing or older than any file under src/ (an edit since), the TypeScript
// sources run directly through tsx instead, so the command is never stale. SHIMMY_FROM_SOURCE=1
// forces the sources.
import { existsSync, readdirSync, statSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const built = join(root, 'build', 'cli', 'run.js');
const lib = join(root, 'lib', 'cli', 'run.js');
const sources = join(root, 'src', 'cli', 'run.ts');

/** Newest modification time of the files below dir (0 when it does not exist). */
function newest(dir) {
  let t = 0;
  if (!existsSync(dir)) return t;
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const p = join(dir, e.name);
    t = Math.max(t, e.isDirectory() ? newest(p) : statSync(p).mtimeMs);
  }
  return t;
}

const fresh = process.env.SHIMMY_FROM_SOURCE !== '1' && existsSync(built) && statSync(built).mtimeMs >= newest(join(root, 'src'));
if (!existsSync(sources)) {
  await import(pathToFileURL(lib).href);
} else if (fresh) {
  await import(pathToFileURL(built).href);
} else {
  const { tsImport } = await import('tsx/esm/api');
  await tsImport('../src/cli/run.ts', import.meta.url);
}
