/**
 * The app on every screen, the size guard, honest progress and the small fixes of issue 12
 * (items 2, 3 and part of 6), driven in Debian's headless chromium (playwright-core) against a
 * production build. Expected counts and size limits come from the core called here in Node
 * (count(), checkRunSize(): the CLI's code), never from the page. Screenshots go to
 * tests/.artifacts/ (git-ignored).
 */
import type { Page } from 'playwright-core';
import { describe, expect, it } from 'vitest';
import { count } from '../../src/analysis.js';
import { checkRunSize } from '../../src/flex/estimate.js';
import { TooLargeError } from '../../src/errors.js';
import { buildGallery } from '../../src/framework/gallery.js';
import { parseBoundary } from '../../src/supercell/boundary.js';
import { appSession, artifact, browserAvailable } from './harness.js';

const available = browserAvailable();

const SCREENS = [
  { name: 'phone', width: 390, height: 844 },
  { name: 'tablet', width: 1024, height: 768 },
  { name: 'laptop', width: 1280, height: 800 },
  { name: 'wide', width: 1920, height: 1080 },
];

describe.skipIf(!available)('layouts, size guard and progress', () => {
  const session = appSession();
  const pageErrors: string[] = [];

  async function open(hash = '', viewport = { width: 1280, height: 800 }, wait = true): Promise<Page> {
    const page = await session.browser.context.newPage();
    await page.setViewportSize(viewport);
    page.on('pageerror', (e) => pageErrors.push(e.message));
    await page.goto(session.server.url + hash);
    if (wait) await waitForResult(page, 0);
    else await page.getByTestId('results').waitFor();
    return page;
  }
  const version = async (page: Page) => Number(await page.getByTestId('results').getAttribute('data-version'));
  async function waitForResult(page: Page, after: number): Promise<void> {
    await page.waitForFunction((v) => Number(document.querySelector('[data-testid=results]')?.getAttribute('data-version')) > v, after, { timeout: 30_000 });
  }

  it.each(SCREENS)('lays out the $name screen ($width×$height): stage visible and wide, no sideways scroll, text ≥ 13 px', async ({ name, width, height }) => {
    const page = await open('', { width, height });
    await page.screenshot({ path: artifact(`layout-${name}-${width}x${height}.png`) });
    if (width < 1200) await page.screenshot({ path: artifact(`layout-${name}-full.png`), fullPage: true });
    const stage = (await page.getByTestId('stage').boundingBox())!;
    // the stage starts inside the first screen and takes most of the width
    expect(stage.y).toBeLessThan(height / 2);
    expect(stage.width).toBeGreaterThan(width <= 400 ? 300 : 0.4 * width);
    expect(stage.height).toBeGreaterThan(250);
    expect(await page.evaluate(() => document.documentElement.scrollWidth - window.innerWidth)).toBeLessThanOrEqual(0);
    // every visible text is at least 13 px
    const small = await page.evaluate(() => {
      const out: string[] = [];
      const walker = document.createTreeWalker(document.body, NodeFilter.SHOW_TEXT);
      for (let n = walker.nextNode(); n; n = walker.nextNode()) {
        const el = n.parentElement;
        if (!el || !n.textContent?.trim() || !el.getClientRects().length) continue;
        if (el.closest('[hidden], dialog:not([open]), details:not([open]) > :not(summary), .visually-hidden')) continue;
        const px = parseFloat(getComputedStyle(el).fontSize);
        if (px < 13) out.push(`${px}px: ${n.textContent.trim().slice(0, 40)}`);
      }
      return out;
    });
    expect(small).toEqual([]);
    if (name === 'laptop') {
      // the flex list is in sight without scrolling anything
      const row = (await page.getByTestId('flex-0').boundingBox())!;
      expect(row.y).toBeGreaterThan(0);
      expect(row.y + row.height).toBeLessThanOrEqual(height);
      expect(await page.evaluate(() => document.querySelector('.column.right')!.scrollTop + window.scrollY)).toBe(0);
    }
    if (name === 'phone') {
      // stage first: the results and the settings come below it
      const results = (await page.getByTestId('results').boundingBox())!;
      const cells = (await page.getByTestId('cells-n1').boundingBox())!;
      expect(results.y).toBeGreaterThan(stage.y + stage.height);
      expect(cells.y).toBeGreaterThan(results.y);
    }
    await page.close();
  }, 40_000);

  it('holds a 200×200 link at the size guard with the estimate, and runs nothing until confirmed', async () => {
    const page = await open('#framework=gallery%3Akagome&cells=200x200&bc=periodic&flex=0', { width: 1280, height: 800 }, false);
    const guard = page.getByTestId('size-guard');
    await guard.waitFor({ state: 'visible' });
    const text = (await guard.textContent()) ?? '';
    expect(text).toContain('200×200');
    expect(text).toMatch(/bloch solver/);
    expect(text).toMatch(/\d+(\.\d+)? (MB|GB)/);
    expect(text).toMatch(/ s|min|second/);
    await page.screenshot({ path: artifact('size-guard.png') });
    await page.waitForTimeout(800);
    expect(await version(page)).toBe(0);
    expect(await page.getByTestId('progress').count()).toBe(0);
    expect(await page.getByTestId('status').textContent()).toBe('');
    await page.getByTestId('size-guard-cancel').click();
    expect(await guard.isHidden()).toBe(true);
    expect(await page.getByTestId('error').textContent()).toContain('Not run');
    await page.waitForTimeout(300);
    expect(await version(page)).toBe(0);
    await page.close();
  }, 30_000);

  it('refuses a size that cannot fit and names the largest that would', async () => {
    const spec = 'gallery:twisted-kagome?twist=15';
    let fit: [number, number] | null | undefined;
    try {
      checkRunSize(buildGallery(spec), [200, 200], parseBoundary('free'), { bases: true });
    } catch (e) {
      if (e instanceof TooLargeError) fit = e.largestCells;
    }
    expect(fit).toBeTruthy();
    const page = await open(`#framework=${encodeURIComponent(spec)}&cells=200x200&bc=free&flex=0`, { width: 1280, height: 800 }, false);
    await page.waitForFunction(() => document.querySelector('[data-testid=error]')?.textContent?.includes('Too large'));
    const msg = (await page.getByTestId('error').textContent()) ?? '';
    expect(msg).toContain(`${fit![0]}×${fit![1]}`);
    expect(msg).toMatch(/fewer cells/);
    expect(await page.getByTestId('size-guard').isHidden()).toBe(true);
    expect(await version(page)).toBe(0);
    await page.close();
  }, 30_000);

  it('runs N1 then N2 as one edit, asks before a large auto-run, and runs it on confirm', async () => {
    const page = await open('#framework=gallery%3Asquare&cells=3x3&bc=free&flex=0');
    const v = await version(page);
    await page.getByTestId('cells-n1').fill('25');
    await page.getByTestId('cells-n1').press('Tab');
    await page.waitForTimeout(700);
    // 25×3 (150 columns) would auto-run: it must not while the focus is still in N1/N2
    expect(await version(page)).toBe(v);
    expect(await page.getByTestId('status').textContent()).toMatch(/^computed/);
    await page.getByTestId('cells-n2').fill('25');
    await page.getByTestId('cells-n2').press('Tab');
    // 2·625 = 1250 columns is above the automatic limit: the guard asks
    await page.getByTestId('size-guard').waitFor({ state: 'visible' });
    expect(await version(page)).toBe(v);
    await page.getByTestId('size-guard-confirm').click();
    await waitForResult(page, v);
    expect(await version(page)).toBe(v + 1);
    const { analysis } = count({ framework: buildGallery('gallery:square'), cells: [25, 25], boundary: 'free' });
    expect(await page.getByTestId('count-flexes').textContent()).toBe(String(analysis.flexes));
    expect(await page.getByTestId('count-self-stresses').textContent()).toBe(String(analysis.selfStresses));
    await page.close();
  }, 40_000);

  it('runs a dragged twist slider once, when it settles', async () => {
    const page = await open('#framework=gallery%3Akagome&cells=3x3&bc=x%3Dperiodic%2Cy%3Dfree&flex=0');
    const v = await version(page);
    const range = page.locator('input[type=range][aria-label^="phase θ"]');
    for (const x of [0.05, 0.1, 0.15, 0.2]) {
      await range.evaluate((el, val) => {
        (el as HTMLInputElement).value = String(val);
        el.dispatchEvent(new Event('input', { bubbles: true }));
      }, x);
      await page.waitForTimeout(450); // longer than the debounce
    }
    expect(await version(page)).toBe(v);
    expect(await page.getByTestId('bc-text').inputValue()).toBe('x=twist:0.2,y=free');
    await range.evaluate((el) => el.dispatchEvent(new Event('change', { bubbles: true })));
    await waitForResult(page, v);
    await page.waitForTimeout(800);
    expect(await version(page)).toBe(v + 1);
    expect(await page.getByTestId('result-title').textContent()).toContain('x=twist:0.2');
    await page.close();
  }, 30_000);

  it('makes the flex list one Tab stop with arrow keys, Home and End inside it', async () => {
    const page = await open('#framework=gallery%3Akagome&cells=3x3&bc=free&flex=0');
    const rows = page.locator('[data-testid=mode-list] [role=option]');
    const n = await rows.count();
    expect(n).toBeGreaterThan(3);
    expect(await page.locator('[data-testid=mode-list] [role=option][tabindex="0"]').count()).toBe(1);
    expect(await page.locator('[data-testid=mode-list] [role=option][tabindex="-1"]').count()).toBe(n - 1);
    await page.getByTestId('tab-stresses').focus();
    await page.keyboard.press('Tab');
    const focused = () => page.evaluate(() => document.activeElement?.getAttribute('data-testid'));
    expect(await focused()).toBe('flex-0');
    await page.keyboard.press('ArrowDown');
    await page.keyboard.press('ArrowDown');
    expect(await focused()).toBe('flex-2');
    expect(await page.getByTestId('flex-2').getAttribute('aria-selected')).toBe('true');
    expect(await page.getByTestId('flex-2').getAttribute('tabindex')).toBe('0');
    await page.keyboard.press('End');
    expect(await focused()).toBe(`flex-${n - 1}`);
    await page.keyboard.press('Home');
    await page.keyboard.press('ArrowRight');
    expect(await focused()).toBe('flex-1');
    // one Tab leaves the list; Shift+Tab comes back to the selected row
    await page.keyboard.press('Tab');
    expect(await focused()).not.toMatch(/^flex-/);
    await page.keyboard.press('Shift+Tab');
    expect(await focused()).toBe('flex-1');
    await page.close();
  }, 30_000);

  it('refuses contradictory boundary text, shows periodic as periodic, and drops a stale flex note on a lattice change', async () => {
    const page = await open('#framework=gallery%3Asquare&cells=2x2&bc=free&flex=14');
    const modes = await page.locator('[data-testid=mode-list] [role=option]').count();
    expect(modes).toBeLessThan(15);
    const note = page.locator('[data-testid=error] [data-source=selection]');
    expect(await note.textContent()).toContain('Flex 14 does not exist');
    const v = await version(page);
    await page.getByTestId('gallery-select').selectOption('gallery:kagome');
    expect(await note.count()).toBe(0);
    await waitForResult(page, v);
    expect(await note.count()).toBe(0);

    await page.getByTestId('bc-text').fill('x=periodic,left=pinned');
    await page.getByTestId('bc-text').press('Enter');
    const err = page.locator('[data-testid=error] [data-source=bc]');
    await err.waitFor();
    expect(await err.textContent()).toMatch(/boundary left.*contradicts/);
    expect(await page.getByTestId('bc-text').getAttribute('aria-invalid')).toBe('true');
    expect(await page.evaluate(() => location.hash)).toContain('bc=free');

    const w = await version(page);
    await page.getByRole('button', { name: 'periodic', exact: true }).click();
    expect(await page.getByTestId('bc-text').inputValue()).toBe('periodic');
    await waitForResult(page, w);
    const title = (await page.getByTestId('result-title').textContent()) ?? '';
    expect(title).toContain('periodic');
    expect(title).not.toContain('twist');
    await page.waitForFunction(() => location.hash.includes('bc=periodic'));
    await page.close();
  }, 30_000);

  it('shows progress that only moves forward, in plain words, and cancels within half a second', async () => {
    const page = await open('#framework=gallery%3Akagome&cells=3x3&bc=free&flex=0&solver=dense');
    await page.getByTestId('auto-run').uncheck();
    await page.getByTestId('cells-n1').fill('14');
    await page.getByTestId('cells-n2').fill('14');
    await page.getByTestId('cells-n2').press('Tab');
    await page.getByTestId('run').click();
    await page.getByTestId('progress').waitFor({ state: 'visible', timeout: 5000 });
    const seen: { value: number; label: string }[] = [];
    for (let k = 0; k < 12; k++) {
      seen.push(await page.evaluate(() => ({ value: (document.querySelector('[data-testid=progress] progress') as HTMLProgressElement).value, label: document.querySelector('[data-testid=progress]')!.textContent ?? '' })));
      await page.waitForTimeout(150);
    }
    for (let k = 1; k < seen.length; k++) expect(seen[k].value).toBeGreaterThanOrEqual(seen[k - 1].value);
    for (const s of seen) expect(s.label).not.toMatch(/sweep|iteration|rank:|subspace|Lanczos|factor/i);
    // measured in the page, from the click to the progress leaving the results
    const ms = await page.evaluate(
      () =>
        new Promise<number>((resolve) => {
          const box = document.querySelector('[data-testid=progress]')!;
          const t0 = performance.now();
          const obs = new MutationObserver(() => {
            if (!box.isConnected) {
              obs.disconnect();
              resolve(performance.now() - t0);
            }
          });
          obs.observe(document.querySelector('[data-testid=status]')!, { childList: true });
          (document.querySelector('[data-testid=cancel]') as HTMLButtonElement).click();
        }),
    );
    expect(ms).toBeLessThan(500);
    expect(await page.getByTestId('error').textContent()).toContain('cancelled');
    await page.close();
  }, 40_000);

  it('has thrown no uncaught error in any page', () => {
    expect(pageErrors).toEqual([]);
  });
});
