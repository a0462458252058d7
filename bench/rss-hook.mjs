// Preloaded into a benchmarked shimmy process (node --import): at exit, write the process's peak
// resident set size (kilobytes, from process.resourceUsage().maxRSS) to the file named by
// SHIMMY_BENCH_RSS, so bench/run.ts can report peak memory without any external tool.
import { writeFileSync } from 'node:fs';
import { isMainThread } from 'node:worker_threads';

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
