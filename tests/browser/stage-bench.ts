/**
 * Stage drawing benchmark (run by hand, not by `npm test`):
 *   npx tsx tests/browser/stage-bench.ts [cells ...] [--graphics] [--no-app]
 * For each size (default 12 24 48) it animates a real flex of the periodic kagome supercell
 * cells×cells in headless chromium and prints frames per second and CPU milliseconds per frame:
 *  - "page": the Stage alone filling a 1280×800 window (src/app/bench/stage.html), mesh mode,
 *    without and with velocity arrows (and the Graphics fallback with --graphics);
 *  - "app": the app itself at 1280×800 opened on a link to that supercell (classification and
 *    self-stresses off so the result comes fast), measured from its stage's frame counter.
 * Headless chromium renders WebGL in software (SwiftShader), so fps there is a lower bound and
 * moves with the machine's load (printed with each line); the CPU time per frame is the part
 * the stage controls.
 */
import os from 'node:os';
import type { Page } from 'playwright-core';
import { stateToHash } from '../../src/app/state-link.js';
import { defaultState } from '../../src/app/state.js';
import { launchBrowser, startServer } from './harness.js';

const args = process.argv.slice(2);
const sizes = args.filter((a) => /^\d+$/.test(a)).map(Number);
const cellsList = sizes.length ? sizes : [12, 24, 48];
const modes = args.includes('--graphics') ? ['mesh', 'graphics'] : ['mesh'];
const SECONDS = 4;

type Stats = { fps: number; frameMs: number; frames: number; bars: number; joints: number; renderer: string };

const load = () => `load ${os.loadavg()[0].toFixed(1)}`;
const fmt = (fps: number, ms: number) => `fps ${fps.toFixed(1).padStart(5)}  CPU ${ms.toFixed(2)} ms/frame`;

const server = await startServer();
const browser = await launchBrowser();

async function newPage(): Promise<Page> {
  const page = await browser.context.newPage();
  await page.setViewportSize({ width: 1280, height: 800 });
  return page;
}

try {
  for (const cells of cellsList) {
    for (const mode of modes) {
      for (const arrows of ['0', '1']) {
        const page = await newPage();
        await page.goto(`${server.url}src/app/bench/stage.html?mode=${mode}&cells=${cells}&arrows=${arrows}&seconds=${SECONDS}`);
        await page.waitForFunction(() => (window as unknown as { benchResult?: unknown }).benchResult, null, { timeout: 120_000 });
        const r = await page.evaluate(() => (window as unknown as { benchResult: Stats & { meanFps: number; width: number; height: number } }).benchResult);
        console.log(`page ${String(cells).padStart(2)}×${cells}  ${mode.padEnd(8)} arrows=${arrows}  bars ${r.bars}  joints ${r.joints}  ${r.width}×${r.height} px  ${fmt(r.meanFps, r.frameMs)}  (${r.renderer}, ${load()})`);
        await page.close();
      }
    }
  }
  if (!args.includes('--no-app')) {
    for (const cells of cellsList) {
      const s = defaultState();
      s.framework = { kind: 'gallery', name: 'kagome', params: {} };
      s.cells = [cells, cells];
      s.bc = 'periodic';
      s.classify = false;
      s.stresses = false;
      const page = await newPage();
      await page.goto(server.url + stateToHash(s));
      // a large link may wait at the size guard: confirm it
      const started = Date.now();
      let moving = false;
      while (!moving && Date.now() - started < 120_000) {
        const confirm = page.getByTestId('size-guard-confirm');
        if (await confirm.isVisible().catch(() => false)) await confirm.click();
        moving = (await page.getByTestId('stage').getAttribute('data-animating')) === 'true';
        if (!moving) await page.waitForTimeout(250);
      }
      if (!moving) {
        console.log(`app  ${cells}×${cells}: no moving flex within 120 s (an error?)`);
        await page.close();
        continue;
      }
      await page.waitForTimeout(1000);
      const read = () => page.evaluate(() => (window as unknown as { shimmy: { stage: { stats(): Stats; size: [number, number] } } }).shimmy.stage.stats());
      const a = await read();
      const t0 = Date.now();
      await page.waitForTimeout(SECONDS * 1000);
      const b = await read();
      const size = await page.evaluate(() => (window as unknown as { shimmy: { stage: { size: [number, number] } } }).shimmy.stage.size);
      const fps = ((b.frames - a.frames) * 1000) / (Date.now() - t0);
      console.log(`app  ${String(cells).padStart(2)}×${cells}  bars ${b.bars}  joints ${b.joints}  stage ${size[0]}×${size[1]} px  ${fmt(fps, b.frameMs)}  (${b.renderer}, ${load()})`);
      await page.close();
    }
  }
} finally {
  await browser.close();
  await server.close();
}
