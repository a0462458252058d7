/**
 * Stage drawing benchmark (run by hand, not by `npm test`):
 *   npx tsx tests/browser/stage-bench.ts [cells]
 * Draws a kagome supercell of cells×cells (29 → about 5,000 bars) in headless chromium with
 * both drawing modes and prints frames per second and CPU milliseconds per frame. Headless
 * chromium renders WebGL in software (SwiftShader), so fps there is a lower bound; the CPU
 * time per frame is the part the app controls.
 */
import { launchBrowser, startServer } from './harness.js';

const cells = Number(process.argv[2] ?? 29);
const server = await startServer();
const browser = await launchBrowser();
try {
  for (const mode of ['mesh', 'graphics']) {
    for (const arrows of ['0', '1']) {
      const page = await browser.context.newPage();
      await page.setViewportSize({ width: 1280, height: 800 });
      await page.goto(`${server.url}src/app/bench/stage.html?mode=${mode}&cells=${cells}&arrows=${arrows}&seconds=4`);
      await page.waitForFunction(() => (window as unknown as { benchResult?: unknown }).benchResult, null, { timeout: 60_000 });
      const r = await page.evaluate(() => (window as unknown as { benchResult: Record<string, number | string> }).benchResult);
      console.log(`${mode.padEnd(8)} arrows=${arrows}  bars ${r.bars}  joints ${r.joints}  fps ${Number(r.meanFps).toFixed(1)}  CPU ${Number(r.frameMs).toFixed(2)} ms/frame  (${r.renderer})`);
      await page.close();
    }
  }
} finally {
  await browser.close();
  await server.close();
}
