/** Process entry point of the CLI (bin/shimmy.js loads this through tsx). */
import { main } from './main.js';

process.exitCode = await main(process.argv.slice(2));
