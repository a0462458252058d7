/// <reference types="vitest/config" />
/** Vite serves and builds the browser app (index.html → src/app/main.ts, worker in src/worker). */
import { defineConfig } from 'vite';

export default defineConfig(({ isSsrBuild }) => ({
  // the CLI bundle (`vite build --ssr`, npm run build:cli) takes ml-matrix in: as an outside
  // module Node loads its CommonJS build through the ES-module loader, whose export scan and
  // compile of 150 kB cost ~0.1 s of every command's start-up
  ...(isSsrBuild ? { ssr: { noExternal: ['ml-matrix'] } } : {}),
  server: { host: '127.0.0.1', port: 5173, strictPort: false },
  preview: { host: '127.0.0.1', port: 4173, strictPort: false },
  worker: { format: 'es' },
  build: { target: 'es2022', outDir: 'dist', chunkSizeWarningLimit: 2000 },
  optimizeDeps: { include: ['pixi.js', 'd3-scale', 'gif.js', 'ml-matrix'] },
  // numerical tests of a few seconds can pass 5 s when test files share two cores: a time limit
  // here only catches hangs (speed targets live in the benchmark)
  test: { testTimeout: 60_000 },
}));
