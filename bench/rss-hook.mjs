// Preloaded into a benchmarked shimmy process (node --import): at exit, write the process's peak
// resident set size (kilobytes, from process.resourceUsage().maxRSS) to the file named by
// SHIMMY_BENCH_RSS, so bench/run.ts can report peak memory without any external tool.
import { writeFileSync } from 'node:fs';

const target = process.env.SHIMMY_BENCH_RSS;
if (target) {
  process.on('exit', () => {
    try {
      writeFileSync(target, String(process.resourceUsage().maxRSS));
    } catch {
      // the benchmark reports the memory as unknown
    }
  });
}
