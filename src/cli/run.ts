/** Process entry point of the CLI (bin/shimmy.cjs loads this through tsx). */
import { startHelperThread, threadsWanted } from '../linalg/parallel/node-thread.js';
import { main } from './main.js';

const argv = process.argv.slice(2);
let threads: 1 | 2 = 1;
try {
  threads = threadsWanted(process.env.SHIMMY_THREADS);
} catch (e) {
  process.stderr.write(`shimmy: ${(e as Error).message}\n`);
  process.exit(2);
}
// The helper thread starts at the first kernel worth splitting; `batch` keeps every core busy with
// jobs of its own.
if (threads === 2 && argv[0] !== 'batch') startHelperThread({ lazy: true });
void main(argv).then((code) => {
  process.exitCode = code;
});
