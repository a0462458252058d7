/**
 * The stage in the browser: data-animating follows play and pause, prefers-reduced-motion opens
 * paused, and the batched meshes (vertex shaders) draw the same picture as the Graphics
 * fallback, which places every shape on the CPU with scene.ts's computeFrame.
 * A production build served by `vite preview`, driven in Debian's headless chromium.
 */
import type { Page } from 'playwright-core';
import { describe, expect, it } from 'vitest';
import { appSession, artifact, browserAvailable } from './harness.js';

const available = browserAvailable();
const KAGOME = '#framework=gallery%3Akagome&cells=3x3&bc=free&flex=4';

describe.skipIf(!available)('stage', () => {
  const session = appSession();
  const pageErrors: string[] = [];

  async function open(hash: string, opts: { reducedMotion?: boolean; query?: string } = {}): Promise<Page> {
    const page = await session.browser.context.newPage();
    await page.setViewportSize({ width: 1280, height: 800 });
    page.on('pageerror', (e) => pageErrors.push(e.message));
    await page.emulateMedia({ reducedMotion: opts.reducedMotion ? 'reduce' : 'no-preference' });
    await page.goto(`${session.server.url}${opts.query ?? ''}${hash}`);
    await page.waitForFunction(() => Number(document.querySelector('[data-testid=results]')?.getAttribute('data-version')) > 0, null, { timeout: 30_000 });
    return page;
  }

  const animating = (page: Page) => page.getByTestId('stage').getAttribute('data-animating');
  const shot = (page: Page) => page.getByTestId('stage-canvas').screenshot();

  /** Pixels darker than the background (bars, joint outlines), as a mask decoded in the page. */
  async function inkMask(page: Page, png: Buffer): Promise<Uint8Array> {
    const mask = await page.evaluate(async (b64) => {
      const blob = await (await fetch(`data:image/png;base64,${b64}`)).blob();
      const bmp = await createImageBitmap(blob);
      const c = new OffscreenCanvas(bmp.width, bmp.height);
      const g = c.getContext('2d')!;
      g.drawImage(bmp, 0, 0);
      const d = g.getImageData(0, 0, bmp.width, bmp.height).data;
      const out: number[] = [];
      for (let i = 0; i < d.length; i += 4) out.push(0.299 * d[i] + 0.587 * d[i + 1] + 0.114 * d[i + 2] < 150 ? 1 : 0);
      return out;
    }, png.toString('base64'));
    return Uint8Array.from(mask);
  }

  it('carries data-animating="true" while the flex moves and "false" when paused', async () => {
    const page = await open(KAGOME);
    await page.waitForSelector('[data-testid=stage][data-animating=true]', { timeout: 10_000 });
    const a = await shot(page);
    await page.waitForTimeout(300);
    expect(a.equals(await shot(page))).toBe(false);
    await page.getByTestId('play').click();
    expect(await page.getByTestId('play').textContent()).toBe('Play');
    await page.waitForSelector('[data-testid=stage][data-animating=false]', { timeout: 5_000 });
    const b = await shot(page);
    await page.waitForTimeout(300);
    expect(b.equals(await shot(page))).toBe(true);
    await page.getByTestId('play').click();
    await page.waitForSelector('[data-testid=stage][data-animating=true]', { timeout: 5_000 });
    await page.close();
  }, 40_000);

  it('starts paused under prefers-reduced-motion, and Play still animates', async () => {
    const page = await open(KAGOME, { reducedMotion: true });
    expect(await page.getByTestId('play').textContent()).toBe('Play');
    expect(await page.getByTestId('play').getAttribute('aria-pressed')).toBe('false');
    await page.waitForTimeout(300);
    expect(await animating(page)).toBe('false');
    const a = await shot(page);
    await page.waitForTimeout(300);
    expect(a.equals(await shot(page))).toBe(true);
    await page.getByTestId('play').click();
    await page.waitForSelector('[data-testid=stage][data-animating=true]', { timeout: 5_000 });
    await page.close();
  }, 40_000);

  it('draws with the meshes what the Graphics fallback draws (same flex, same phase)', async () => {
    // paused at phase 0 (reduced motion) with the flex displaced, so both show the same shape
    const masks: Uint8Array[] = [];
    for (const query of ['', '?draw=graphics']) {
      const page = await open(KAGOME + '&amp=0.5', { reducedMotion: true, query });
      await page.waitForTimeout(300);
      const png = await shot(page);
      await page.screenshot({ path: artifact(`stage-${query ? 'graphics' : 'mesh'}.png`) });
      masks.push(await inkMask(page, png));
      await page.close();
    }
    const [m, g] = masks;
    expect(m.length).toBe(g.length);
    let both = 0;
    let either = 0;
    let inkM = 0;
    for (let i = 0; i < m.length; i++) {
      both += m[i] & g[i];
      either += m[i] | g[i];
      inkM += m[i];
    }
    // something is drawn, and the two pictures cover mostly the same pixels (edges differ by
    // their smoothing, so not all of them)
    expect(inkM).toBeGreaterThan(500);
    expect(both / either).toBeGreaterThan(0.6);
    expect(pageErrors).toEqual([]);
  }, 60_000);
});
