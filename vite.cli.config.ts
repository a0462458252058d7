/**
 * The CLI bundle (npm run build:cli → build/cli/run.cjs): one CommonJS file, so bin/shimmy.cjs can
 * compile it through node:vm with a V8 code cache (build/cli/run.cjs.cache, written by
 * tools/write-code-cache.mjs at build time). ml-matrix goes inside: as an outside module Node loads
 * its CommonJS build through the ES-module loader, whose export scan and compile of 150 kB cost
 * ~0.1 s of every command's start-up. The worker scripts stay ES modules (vite.config.ts).
 *
 * Written in ASCII (other characters escaped) and without comments: Node reads a file of ASCII
 * alone into a one-byte string, and the source read and compiled at every start is 18 % shorter;
 * together ~6 ms of start-up on this machine. No code reads the text of a comment or a raw string.
 */
import { defineConfig } from 'vite';

export default defineConfig({
  ssr: { noExternal: ['ml-matrix'] },
  build: { target: 'es2022', rollupOptions: { output: { format: 'cjs', entryFileNames: '[name].cjs', charset: 'ascii', comments: false } } },
});
