/**
 * The CLI bundle (npm run build:cli → build/cli/run.cjs): one CommonJS file, so bin/shimmy.js can
 * compile it through node:vm with a V8 code cache (build/cli/run.cjs.cache, written by
 * tools/write-code-cache.mjs at build time). ml-matrix goes inside: as an outside module Node loads
 * its CommonJS build through the ES-module loader, whose export scan and compile of 150 kB cost
 * ~0.1 s of every command's start-up. The worker scripts stay ES modules (vite.config.ts).
 */
import { defineConfig } from 'vite';

export default defineConfig({
  ssr: { noExternal: ['ml-matrix'] },
  build: { target: 'es2022', rollupOptions: { output: { format: 'cjs', entryFileNames: '[name].cjs' } } },
});
