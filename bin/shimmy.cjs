#!/usr/bin/env node
// The CLI. In the installed package (no src/ folder) it runs lib/cli/run.js, the compiled
// modules. In a checkout, `npm ci` builds build/cli/run.cjs (a single CommonJS file, fast to
// start), compiled here through node:vm with the V8 code cache beside it (run.cjs.cache, written at
// build time: the functions a count compiles need no parsing or compiling again); a missing or
// rejected cache only costs time. When that build is missing or older than any file under src/
// (an edit since), the TypeScript sources run directly through tsx instead, so the command is never
// stale. SHIMMY_FROM_SOURCE=1 forces the sources.
//
// This launcher is CommonJS on purpose: as an ES module, Node runs it through its module loader
// and gives each imported built-in an ES facade (node:fs's loads the stream modules), 10–15 ms of
// every command's start-up on this machine.
'use strict';
const { existsSync, readdirSync, readFileSync, statSync, writeFileSync } = require('node:fs');
const { dirname, join } = require('node:path');
const { pathToFileURL } = require('node:url');
const { Script } = require('node:vm');
const { createRequire } = require('node:module');

const root = dirname(__dirname);
const built = join(root, 'build', 'cli', 'run.cjs');
const lib = join(root, 'lib', 'cli', 'run.js');
const sources = join(root, 'src', 'cli', 'run.ts');

/** Newest modification time of the files below dir (paths joined by hand: path.join costs here). */
function newest(dir) {
  let t = 0;
  for (const e of readdirSync(dir, { withFileTypes: true })) {
    const p = `${dir}/${e.name}`;
    t = Math.max(t, e.isDirectory() ? newest(p) : statSync(p).mtimeMs);
  }
  return t;
}

if (!existsSync(sources)) {
  import(pathToFileURL(lib).href);
} else if (process.env.SHIMMY_FROM_SOURCE !== '1' && existsSync(built) && statSync(built).mtimeMs >= newest(join(root, 'src'))) {
  runBundle(built);
} else {
  import('tsx/esm/api').then(({ tsImport }) => tsImport('../src/cli/run.ts', pathToFileURL(__filename).href));
}

/**
 * Runs a CommonJS bundle as Node's own loader would (the same wrapper and arguments), compiled with
 * its code cache when there is one. SHIMMY_WRITE_CODE_CACHE=1 writes the cache at exit instead.
 */
function runBundle(file) {
  const cacheFile = `${file}.cache`;
  const write = process.env.SHIMMY_WRITE_CODE_CACHE === '1';
  const cachedData = !write && existsSync(cacheFile) ? readFileSync(cacheFile) : undefined;
  const source = `(function (exports, require, module, __filename, __dirname) {${readFileSync(file, 'utf8')}\n})`;
  const script = new Script(source, { filename: file, cachedData });
  const module = { exports: {} };
  script.runInThisContext().call(module.exports, module.exports, createRequire(file), module, file, dirname(file));
  if (write) process.on('exit', () => writeFileSync(cacheFile, script.createCachedData()));
}
