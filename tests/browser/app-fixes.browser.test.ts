/**
 * Browser checks of the app fixes of issue 12, item 6: the "Loaded: …" picker entry reloads its
 * file, the phase map and sweep are cleared by a framework change, mode extents never read larger
 * than the supercell, Back (and Undo) return to the previous settings. Expected counts come from
 * the core called here in Node, never from the page.
 */
import fs from 'node:fs';
import path from 'node:path';
import type { Page } from 'playwright-core';
import { describe, expect, it } from 'vitest';
import { count } from '../../src/analysis.js';
import { classifyFlexes } from '../../src/flex/classify.js';
import { buildGallery } from '../../src/framework/gallery.js';
import { parseFramework } from '../../src/framework/validate.js';
import { appSession, browserAvailable, open as openApp, ROOT } from './harness.js';

const available = browserAvailable();

describe.skipIf(!available)('browser app fixes (issue 12, item 6)', () => {
  const session = appSession();

  const pageErrors: string[] = [];

  const open = (hash: string): Promise<Page> => openApp(session, hash, pageErrors);

  const version = async (page: Page) => Number(await page.getByTestId('results').getAttribute('data-version'));

  async function waitForResult(page: Page, after: number): Promise<void> {
    await page.waitForFunction((v) => Number(document.querySelector('[data-testid=results]')?.getAttribute('data-version')) > v, after, { timeout: 30_000 });
  }

  /** Waits until the shown result is current (no stale note) and newer than `after`. */
  async function waitForFresh(page: Page, after: number): Promise<void> {
    await waitForResult(page, after);
    await page.waitForFunction(() => !document.querySelector('[data-testid=stale]:not([hidden])'), null, { timeout: 30_000 });
  }

  const flexes = async (page: Page) => Number(await page.getByTestId('count-flexes').textContent());
  const hashParam = (page: Page, key: string) => new URLSearchParams(new URL(page.url()).hash.slice(1)).get(key);

  it('choosing "Loaded: …" again reloads that file, not only the label', async () => {
    const file = 'facade-screen';
    const fw = parseFramework(fs.readFileSync(path.join(ROOT, 'demos', `${file}.json`), 'utf8'), `${file}.json`);
    const fileFlexes = count({ framework: fw, cells: [3, 3], boundary: 'free' }).analysis.flexes;
    const squareFlexes = count({ framework: buildGallery('gallery:square'), cells: [3, 3], boundary: 'free' }).analysis.flexes;
    // the check needs the two to differ
    expect(fileFlexes).not.toBe(squareFlexes);

    const page = await open('#framework=gallery%3Akagome&cells=3x3&bc=free&flex=0');
    let v = await version(page);
    await page.getByTestId('gallery-select').selectOption(`demo:${file}`);
    await waitForFresh(page, v);
    expect(await flexes(page)).toBe(fileFlexes);
    v = await version(page);
    await page.getByTestId('gallery-select').selectOption('gallery:square');
    await waitForFresh(page, v);
    expect(await flexes(page)).toBe(squareFlexes);
    v = await version(page);
    await page.getByTestId('gallery-select').selectOption('file');
    await waitForFresh(page, v);
    expect(await flexes(page)).toBe(fileFlexes);
    expect(await page.getByTestId('gallery-select').inputValue()).toBe('file');
    expect(await page.locator('[data-testid=gallery-select] option[value=file]').textContent()).toContain('Loaded:');
    await page.close();
  }, 60_000);

  it('a framework change clears the phase map and the sweep; a click on the cleared map changes nothing', async () => {
    const page = await open('#framework=gallery%3Akagome&cells=3x3&bc=free&flex=0');
    // phase map of kagome
    await page.getByTestId('phasemap-panel').locator('summary').click();
    await page.getByTestId('phasemap-grid').selectOption('16');
    await page.waitForFunction(() => !(document.querySelector('[data-testid=phasemap-run]') as HTMLButtonElement).disabled);
    await page.getByTestId('phasemap-run').click();
    await page.waitForFunction(() => document.querySelector('[data-testid=phasemap-summary]')?.textContent?.includes('Unit-cell symbol'), null, { timeout: 30_000 });
    // size sweep of kagome
    await page.getByTestId('sweep-panel').locator('summary').click();
    await page.getByTestId('sweep-sizes').fill('2,3');
    await page.getByTestId('sweep-run').click();
    await page.getByTestId('sweep-table').waitFor({ timeout: 30_000 });

    const v = await version(page);
    await page.getByTestId('gallery-select').selectOption('gallery:square');
    await waitForFresh(page, v);
    expect(await page.getByTestId('sweep-table').count()).toBe(0);
    expect(await page.getByTestId('sweep-cleared').count()).toBe(1);
    expect(await page.getByTestId('phasemap-summary').textContent()).not.toContain('Unit-cell symbol');
    expect(await page.getByTestId('phasemap-cleared').count()).toBe(1);

    const before = await version(page);
    await page.getByTestId('phasemap-canvas').click({ position: { x: 100, y: 100 } });
    await page.waitForTimeout(600);
    expect(await page.getByTestId('bc-text').inputValue()).toBe('free');
    expect(hashParam(page, 'bc')).toBe('free');
    expect(await version(page)).toBe(before);
    await page.close();
  }, 90_000);

  it('shows no mode extent larger than the supercell', async () => {
    // the core counts the cells spanned along a1 and a2: never more than the supercell's
    const { supercell, analysis } = count({ framework: buildGallery('gallery:twisted-kagome?twist=15'), cells: [6, 6], boundary: 'free' });
    const modes = classifyFlexes(supercell, analysis, { window: 3, strip: 2 }).modes;
    expect(modes.every((m) => m.extents[0] <= 6 && m.extents[1] <= 6)).toBe(true);
    expect(modes.some((m) => m.extents[0] === 6)).toBe(true);

    const page = await open('#framework=gallery%3Atwisted-kagome%3Ftwist%3D15&cells=6x6&bc=free&flex=0');
    const texts = await page.locator('[data-testid^=flex-] .mode-metrics').allTextContents();
    expect(texts).toHaveLength(modes.length);
    const numbers: number[] = [];
    for (const t of texts) {
      const m = /extent ([\d.]+) × ([\d.]+) cells/.exec(t);
      if (m) numbers.push(Number(m[1]), Number(m[2]));
      else expect(t).toMatch(/extent(:| across) the whole/);
    }
    for (const n of numbers) expect(n).toBeLessThanOrEqual(6);
    // flexes along a whole side span its 6 cells
    expect(numbers).toContain(6);
    await page.close();
  }, 40_000);

  it('Back returns to the previous settings and Forward to the next, without leaving the app', async () => {
    const kagome3 = count({ framework: buildGallery('gallery:kagome'), cells: [3, 3], boundary: 'free' }).analysis.flexes;
    const kagome4 = count({ framework: buildGallery('gallery:kagome'), cells: [4, 3], boundary: 'free' }).analysis.flexes;
    expect(kagome3).not.toBe(kagome4);

    const page = await open('#framework=gallery%3Akagome&cells=3x3&bc=free&flex=0');
    let v = await version(page);
    await page.getByTestId('cells-n1').fill('4');
    await page.getByTestId('cells-n1').press('Enter');
    await waitForFresh(page, v);
    await page.waitForFunction(() => location.hash.includes('cells=4x3'));
    expect(await flexes(page)).toBe(kagome4);

    v = await version(page);
    await page.goBack();
    await waitForFresh(page, v);
    expect(page.url().startsWith(session.server.url)).toBe(true);
    expect(hashParam(page, 'cells')).toBe('3x3');
    expect(await page.getByTestId('cells-n1').inputValue()).toBe('3');
    expect(await flexes(page)).toBe(kagome3);

    v = await version(page);
    await page.goForward();
    await waitForFresh(page, v);
    expect(await page.getByTestId('cells-n1').inputValue()).toBe('4');
    expect(await flexes(page)).toBe(kagome4);
    await page.close();
  }, 60_000);

  it('Undo (button and Ctrl+Z) restores the previous settings and stops at the first', async () => {
    const page = await open('#framework=gallery%3Akagome&cells=3x3&bc=free&flex=0');
    expect(await page.getByTestId('undo').isDisabled()).toBe(true);
    let v = await version(page);
    await page.getByTestId('gallery-select').selectOption('gallery:square');
    await waitForFresh(page, v);
    await page.waitForFunction(() => !(document.querySelector('[data-testid=undo]') as HTMLButtonElement).disabled);
    v = await version(page);
    await page.getByTestId('cells-n1').fill('4');
    await page.getByTestId('cells-n1').press('Enter');
    await waitForFresh(page, v);
    await page.waitForFunction(() => location.hash.includes('cells=4x3'));

    v = await version(page);
    await page.getByTestId('undo').click();
    await waitForFresh(page, v);
    expect(await page.getByTestId('cells-n1').inputValue()).toBe('3');
    expect(await page.getByTestId('gallery-select').inputValue()).toBe('gallery:square');

    v = await version(page);
    await page.locator('body').click({ position: { x: 5, y: 5 } });
    await page.keyboard.press('Control+z');
    await waitForFresh(page, v);
    expect(await page.getByTestId('gallery-select').inputValue()).toBe('gallery:kagome');
    expect(await page.getByTestId('undo').isDisabled()).toBe(true);
    // nothing left to undo: the app stays
    await page.getByTestId('undo').click({ force: true });
    await page.keyboard.press('Control+z');
    await page.waitForTimeout(300);
    expect(page.url().startsWith(session.server.url)).toBe(true);
    expect(await page.getByTestId('gallery-select').inputValue()).toBe('gallery:kagome');
    await page.close();
  }, 60_000);

  it('raised no page errors', () => {
    expect(pageErrors).toEqual([]);
  });
});
