/** Process entry point of the CLI (bin/shimmy.js loads this through tsx). */
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
// The helper thread starts now so that it has loaded by the first large kernel; `batch` keeps
// every core busy with jobs of its own, and help needs no kernels.
const quiet = argv.length === 0 || ['batch', 'help', '--help', '-h', '--version'].includes(argv[0]) || argv.includes('--help');
if (threads === 2 && !quiet) startHelperThread();
process.exitCode = await main(argv);
