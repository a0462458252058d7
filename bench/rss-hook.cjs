// Preloaded into a benchmarked shimmy process (node --require): at exit, write the process's peak
// resident set size (kilobytes, from process.resourceUsage().maxRSS) to the file named by
// SHIMMY_BENCH_RSS, so bench/run.ts can report peak memory without any external tool.
//
// CommonJS on purpose: preloading an ES module (node --import) starts Node's ES module loader in
// the measured process, ~15–20 ms of its whole-process time on this machine that shimmy's own
// run never pays; a CommonJS preload costs under 5 ms.
'use strict';
const { writeFileSync } = require('node:fs');
const { isMainThread } = require('node:worker_threads');

const target = process.env.SHIMMY_BENCH_RSS;
// a helper thread inherits the preload: only the main thread reports
if (target && isMainThread) {
  process.on('exit', () => {
    try {
      writeFileSync(target, String(process.resourceUsage().maxRSS));
    } catch {
      // the benchmark reports the memory as unknown
    }
  });
}
