/**
 * The browser app end to end: a production build served by `vite preview` on 127.0.0.1 and
 * driven in Debian's headless chromium (playwright-core). Expected counts come from the core
 * called here in Node (count() and classifyFlexes(), the CLI's code path), never from the page.
 * Screenshots go to tests/.artifacts/ (git-ignored).
 */
import fs from 'node:fs';
import type { Download, Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { count } from '../../src/analysis.js';
import { CAUTION, CAUTION_SHORT } from '../../src/caution.js';
import { classifyFlexes } from '../../src/flex/classify.js';
import { buildGallery } from '../../src/framework/gallery.js';
import { stateToHash } from '../../src/app/state-link.js';
import { stateFromFile } from '../../src/app/state.js';
import { artifact, browserAvailable, launchBrowser, parseGif, startServer, type Browser, type Served } from './harness.js';

const available = browserAvailable();

describe.skipIf(!available)('browser app', () => {
  let server: Served;
  let browser: Browser;

  /** Counts of the core for every setup the tests open, keyed by spec|cells|bc. */
  const reference = new Map<string, Record<string, string>>();
  const CASES: [string, [number, number], string][] = [
    ['gallery:twisted-kagome?twist=15', [6, 6], 'free'],
    ['gallery:kagome', [3, 3], 'free'],
    ['gallery:square', [5, 3], 'x=periodic,bottom=pinned'],
    ['gallery:twisted-kagome?twist=-20', [5, 3], 'x=periodic,bottom=pinned'],
    ['gallery:kagome', [4, 3], 'x=periodic,y=free'],
    ['gallery:square', [4, 4], 'pinned'],
    ['gallery:square', [3, 3], 'free'],
    ['gallery:square-diagonal', [3, 3], 'free'],
  ];

  beforeAll(async () => {
    // the build and the browser start run outside this thread; compute the references meanwhile
    const starting = Promise.all([startServer('preview'), launchBrowser()]);
    for (const [spec, cells, bc] of CASES) reference.set(`${spec}|${cells}|${bc}`, computeExpected(spec, cells, bc));
    [server, browser] = await starting;
  }, 60_000);

  afterAll(async () => {
    await browser?.close();
    await server?.close();
  });

  const pageErrors: string[] = [];

  async function open(hash = '', viewport = { width: 1280, height: 800 }): Promise<Page> {
    const page = await browser.context.newPage();
    await page.setViewportSize(viewport);
    page.on('pageerror', (e) => pageErrors.push(e.message));
    await page.goto(server.url + hash);
    await waitForResult(page, 0);
    return page;
  }

  const version = async (page: Page) => Number(await page.getByTestId('results').getAttribute('data-version'));

  /** Waits until a result newer than `after` is shown. */
  async function waitForResult(page: Page, after: number): Promise<void> {
    await page.waitForFunction((v) => Number(document.querySelector('[data-testid=results]')?.getAttribute('data-version')) > v, after, { timeout: 30_000 });
  }

  async function shown(page: Page): Promise<Record<string, string>> {
    const ids = ['count-flexes', 'count-trivial', 'count-self-stresses', 'count-local', 'count-line', 'count-decaying', 'count-bulk', 'certified'];
    const out: Record<string, string> = {};
    for (const id of ids) out[id] = (await page.getByTestId(id).textContent()) ?? '';
    return out;
  }

  function expected(spec: string, cells: [number, number], bc: string): Record<string, string> {
    const r = reference.get(`${spec}|${cells}|${bc}`);
    if (!r) throw new Error(`no reference computed for ${spec} ${cells} ${bc}: add it to CASES`);
    return r;
  }

  function computeExpected(spec: string, cells: [number, number], bc: string): Record<string, string> {
    const { supercell, analysis } = count({ framework: buildGallery(spec), cells, boundary: bc });
    const c = classifyFlexes(supercell, analysis, { window: 3, strip: 2 });
    return {
      'count-flexes': String(analysis.flexes),
      'count-trivial': String(analysis.trivialFlexes),
      'count-self-stresses': String(analysis.selfStresses),
      'count-local': String(c.counts.local),
      'count-line': String(c.counts.line),
      'count-decaying': String(c.counts.decaying),
      'count-bulk': String(c.counts.bulk),
      certified: analysis.status.certified ? (analysis.status.fallback ? `yes (after falling back from the ${analysis.status.fallback.from} solver)` : 'yes') : 'no: see the warning below',
    };
  }

  const canvasShot = (page: Page) => page.getByTestId('stage-canvas').screenshot();

  async function saved(page: Page, testid: string): Promise<Download> {
    const [d] = await Promise.all([page.waitForEvent('download', { timeout: 30_000 }), page.getByTestId(testid).click()]);
    return d;
  }
  const bytes = async (d: Download) => fs.readFileSync((await d.path())!);

  it('opens on the computed demo with the counts of the CLI and the caution', async () => {
    const page = await open();
    expect(await shown(page)).toEqual(expected('gallery:twisted-kagome?twist=15', [6, 6], 'free'));
    expect(await page.getByTestId('caution-short').textContent()).toContain(CAUTION_SHORT);
    await page.getByTestId('about').click();
    expect(await page.getByTestId('caution').textContent()).toBe(CAUTION);
    await page.getByTestId('about-close').click();
    expect(await page.locator('[data-testid^=flex-][aria-selected=true]').count()).toBe(1);
    expect(await page.getByTestId('error').isHidden()).toBe(true);
    await page.screenshot({ path: artifact('demo-1280x800.png') });
    const overflow = () => page.evaluate(() => document.documentElement.scrollWidth - window.innerWidth);
    expect(await overflow()).toBeLessThanOrEqual(0);
    await page.setViewportSize({ width: 1920, height: 1080 });
    await page.waitForTimeout(200);
    expect(await overflow()).toBeLessThanOrEqual(0);
    await page.screenshot({ path: artifact('demo-1920x1080.png') });
    await page.close();
  }, 40_000);

  it('runs a chosen gallery lattice and boundary with the counts of the CLI', async () => {
    const page = await open('#framework=gallery%3Akagome&cells=3x3&bc=free&flex=0');
    expect(await shown(page)).toEqual(expected('gallery:kagome', [3, 3], 'free'));
    let v = await version(page);
    await page.getByTestId('gallery-select').selectOption('gallery:square');
    await page.getByTestId('cells-n1').fill('5');
    await page.getByTestId('cells-n1').press('Tab');
    await page.getByTestId('bc-text').fill('x=periodic,bottom=pinned');
    await page.getByTestId('bc-text').press('Enter');
    await page.getByTestId('run').click();
    await page.waitForFunction(() => document.querySelector('[data-testid=result-title]')?.textContent?.includes('x=periodic'));
    expect(await version(page)).toBeGreaterThan(v);
    expect(await shown(page)).toEqual(expected('gallery:square', [5, 3], 'x=periodic,bottom=pinned'));
    v = await version(page);
    await page.getByTestId('gallery-select').selectOption('gallery:twisted-kagome');
    await page.getByTestId('param-twist').fill('-20');
    await page.getByTestId('param-twist').press('Tab');
    await page.getByTestId('run').click();
    await page.waitForFunction(() => !document.querySelector('[data-testid=stale]:not([hidden])') && document.querySelector('[data-testid=status]')?.textContent?.includes('computed'));
    await waitForResult(page, v);
    expect(await shown(page)).toEqual(expected('gallery:twisted-kagome?twist=-20', [5, 3], 'x=periodic,bottom=pinned'));
    await page.screenshot({ path: artifact('twisted-periodic-pinned.png') });
    await page.close();
  }, 40_000);

  it('animates the selected flex: frames change while playing, stand still when paused, move on a step', async () => {
    const page = await open('#framework=gallery%3Akagome&cells=3x3&bc=free&flex=0');
    await page.getByTestId('flex-4').click();
    expect(await page.getByTestId('flex-4').getAttribute('aria-selected')).toBe('true');
    const a = await canvasShot(page);
    await page.waitForTimeout(400);
    const b = await canvasShot(page);
    expect(a.equals(b)).toBe(false);
    await page.keyboard.press('Space');
    expect(await page.getByTestId('play').textContent()).toBe('Play');
    await page.waitForTimeout(150);
    const c = await canvasShot(page);
    await page.waitForTimeout(300);
    const d = await canvasShot(page);
    expect(c.equals(d)).toBe(true);
    await page.getByTestId('step').click();
    await page.waitForTimeout(150);
    const e = await canvasShot(page);
    expect(e.equals(d)).toBe(false);
    await page.keyboard.press('ArrowRight');
    expect(await page.getByTestId('flex-5').getAttribute('aria-selected')).toBe('true');
    await page.keyboard.press('ArrowLeft');
    await page.keyboard.press('ArrowLeft');
    expect(await page.getByTestId('flex-3').getAttribute('aria-selected')).toBe('true');
    fs.writeFileSync(artifact('flex-frame.png'), e);
    await page.close();
  }, 30_000);

  it('exports a GIF of one period with the chosen frame count, size and speed', async () => {
    const page = await open('#framework=gallery%3Akagome&cells=3x3&bc=free&flex=3');
    await page.getByTestId('gif-frames').fill('6');
    await page.getByTestId('gif-frames').press('Tab');
    await page.getByTestId('gif-width').fill('240');
    await page.getByTestId('gif-width').press('Tab');
    await page.getByTestId('gif-period').fill('1.2');
    await page.getByTestId('gif-period').press('Tab');
    const gif = parseGif(await bytes(await saved(page, 'export-gif')));
    expect(gif.header).toBe('GIF89a');
    expect(gif.width).toBe(240);
    expect(gif.frames).toHaveLength(6);
    // 1.2 s / 6 frames = 20 hundredths of a second each
    expect(gif.frames.map((f) => f.delay)).toEqual([20, 20, 20, 20, 20, 20]);
    expect(gif.loops).toBe(true);
    await page.close();
  }, 40_000);

  it('exports PNG, SVG, JSON and CSV files that standard tools read', async () => {
    // paused at phase 0 (displacement = Re u, largest for a real flex), so the arrows do not depend on when the export runs
    const page = await open('#framework=gallery%3Akagome&cells=3x3&bc=x%3Dperiodic%2Cy%3Dfree&flex=1&arrows=displacement&rest=1&play=0&phase=0');
    const png = await bytes(await saved(page, 'export-png'));
    // PNG signature and IHDR (PNG specification, W3C Recommendation, 2003)
    expect([...png.subarray(0, 8)]).toEqual([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);
    expect(png.subarray(12, 16).toString('latin1')).toBe('IHDR');
    expect(png.readUInt32BE(16)).toBeGreaterThan(400);
    const svg = (await bytes(await saved(page, 'export-svg'))).toString('utf8');
    const parsed = await page.evaluate((text) => {
      const doc = new DOMParser().parseFromString(text, 'image/svg+xml');
      return { error: doc.getElementsByTagName('parsererror').length, bars: doc.querySelectorAll('#bars line').length, rest: doc.querySelectorAll('#rest-shape line').length, joints: doc.querySelectorAll('#joints circle').length, arrows: doc.querySelectorAll('#arrows polygon').length, wraps: doc.querySelectorAll('#boundary line[stroke-dasharray]').length };
    }, svg);
    const ref = count({ framework: buildGallery('gallery:kagome'), cells: [3, 3], boundary: 'x=periodic,y=free' });
    expect(parsed.error).toBe(0);
    expect(parsed.bars).toBe(ref.analysis.bars);
    expect(parsed.rest).toBe(ref.analysis.bars);
    expect(parsed.joints).toBe(ref.analysis.joints);
    expect(parsed.arrows).toBeGreaterThan(0);
    expect(parsed.wraps).toBe(2);
    const json = JSON.parse((await bytes(await saved(page, 'export-json'))).toString('utf8'));
    expect(json.counts.flexes).toBe(ref.analysis.flexes);
    expect(json.counts.selfStresses).toBe(ref.analysis.selfStresses);
    expect(json.flexes).toHaveLength(ref.analysis.flexes);
    const csv = (await bytes(await saved(page, 'export-csv'))).toString('utf8').trim().split('\r\n');
    expect(csv).toHaveLength(2);
    const header = csv[0].split(',');
    expect(csv[1].split(/,(?=(?:[^"]*"[^"]*")*[^"]*$)/)[header.indexOf('flexes')]).toBe(String(ref.analysis.flexes));
    await page.close();
  }, 40_000);

  it('saves a state file and restores exactly that state from it', async () => {
    const page = await open('#framework=gallery%3Akagome&cells=3x3&bc=free&flex=0');
    await page.getByTestId('flex-2').click();
    await page.keyboard.press('Space');
    await page.getByTestId('amplitude').fill('0.45');
    await page.getByTestId('amplitude').press('Tab');
    await page.getByTestId('arrows').selectOption('velocity');
    await page.getByTestId('step').click();
    const first = await saved(page, 'export-state');
    const a = (await bytes(first)).toString('utf8');
    const v = await version(page);
    await page.getByTestId('gallery-select').selectOption('gallery:square');
    await page.getByTestId('run').click();
    await waitForResult(page, v);
    const v2 = await version(page);
    await page.getByTestId('import-state').setInputFiles({ name: 'state.json', mimeType: 'application/json', buffer: Buffer.from(a) });
    await waitForResult(page, v2);
    const b = (await bytes(await saved(page, 'export-state'))).toString('utf8');
    expect(b).toBe(a);
    expect(await page.getByTestId('gallery-select').inputValue()).toBe('gallery:kagome');
    expect(await page.getByTestId('amplitude').inputValue()).toBe('0.45');
    expect(await page.getByTestId('flex-2').getAttribute('aria-selected')).toBe('true');
    // the link shows the restored state too
    await page.waitForFunction((h) => location.hash === h, stateToHash(stateFromFile(a)));
    await page.close();
  }, 40_000);

  it('reports an invalid framework file by field and keeps the previous result', async () => {
    const page = await open('#framework=gallery%3Akagome&cells=3x3&bc=free&flex=0');
    const before = await shown(page);
    const bad = JSON.stringify({ lattice: [[1, 0], [0, 1]], joints: [{ id: 'A', at: [0, 0] }, { id: 'B', at: [0.5] }], bars: [{ from: 'A', to: 'Z', shift: [1, 0] }] }, null, 2);
    await page.getByTestId('open-file').setInputFiles({ name: 'broken.json', mimeType: 'application/json', buffer: Buffer.from(bad) });
    const error = page.getByTestId('error');
    await error.waitFor({ state: 'visible' });
    const text = (await error.textContent()) ?? '';
    expect(text).toContain('broken.json');
    expect(text).toContain('joints[1].at');
    expect(text).toContain('bars[0].to');
    expect(await shown(page)).toEqual(before);
    expect(await page.getByTestId('json-problems').locator('li').count()).toBeGreaterThanOrEqual(2);
    await page.getByTestId('open-file').setInputFiles({ name: 'notjson.json', mimeType: 'application/json', buffer: Buffer.from('{ "lattice": [[1, 0], [0, 1]],\n  joints: [] }') });
    await page.waitForFunction(() => document.querySelector('[data-testid=error]')?.textContent?.includes('notjson.json'));
    expect(await error.textContent()).toMatch(/line 2, column 3/);
    expect(await shown(page)).toEqual(before);
    await page.screenshot({ path: artifact('invalid-file.png') });
    await page.close();
  }, 30_000);

  it('opens a dropped framework file and edits the framework as JSON with problems pointing at the field', async () => {
    const page = await open('#framework=gallery%3Akagome&cells=3x3&bc=free&flex=0');
    let v = await version(page);
    const text = JSON.stringify(buildGallery('gallery:square'), null, 2);
    await page.evaluate((t) => {
      const dt = new DataTransfer();
      dt.items.add(new File([t], 'grid.json', { type: 'application/json' }));
      window.dispatchEvent(new DragEvent('dragenter', { dataTransfer: dt }));
      window.dispatchEvent(new DragEvent('drop', { dataTransfer: dt, cancelable: true }));
    }, text);
    await waitForResult(page, v);
    expect(await shown(page)).toEqual(expected('gallery:square', [3, 3], 'free'));
    expect(await page.getByTestId('gallery-select').inputValue()).toBe('file');
    await page.locator('details.editor summary').click();
    const editor = page.getByTestId('framework-json');
    const broken = JSON.stringify({ ...buildGallery('gallery:square'), bars: [{ from: 'A', to: 'A', shift: [1, 0] }, { from: 'A', to: 'A', shift: [0, 1.5] }] }, null, 2);
    await editor.fill(broken);
    const problem = page.getByTestId('json-problems').getByRole('button', { name: 'bars[1].shift[1]' });
    await problem.waitFor();
    expect(await page.getByTestId('apply-json').isDisabled()).toBe(true);
    await problem.click();
    const selected = await editor.evaluate((el: HTMLTextAreaElement) => el.value.slice(el.selectionStart, el.selectionEnd));
    expect(selected).toBe('1.5');
    v = await version(page);
    await editor.fill(JSON.stringify(buildGallery('gallery:square-diagonal'), null, 2));
    await page.waitForFunction(() => !(document.querySelector('[data-testid=apply-json]') as HTMLButtonElement).disabled);
    await page.getByTestId('apply-json').click();
    await waitForResult(page, v);
    expect(await shown(page)).toEqual(expected('gallery:square-diagonal', [3, 3], 'free'));
    await page.close();
  }, 30_000);

  it('opens a shared link on the exact view and follows a changed hash', async () => {
    const page = await open('#framework=gallery%3Akagome&cells=4x3&bc=x%3Dperiodic%2Cy%3Dfree&flex=2&play=0&phase=0.25&amp=0.4&arrows=velocity');
    expect(await shown(page)).toEqual(expected('gallery:kagome', [4, 3], 'x=periodic,y=free'));
    expect(await page.getByTestId('flex-2').getAttribute('aria-selected')).toBe('true');
    expect(await page.getByTestId('cells-n1').inputValue()).toBe('4');
    expect(await page.getByTestId('cells-n2').inputValue()).toBe('3');
    expect(await page.getByTestId('bc-text').inputValue()).toBe('x=periodic,y=free');
    expect(await page.getByTestId('play').textContent()).toBe('Play');
    expect(await page.getByTestId('phase').textContent()).toBe('φ/2π = 0.250');
    expect(await page.getByTestId('amplitude').inputValue()).toBe('0.4');
    expect(await page.getByTestId('arrows').inputValue()).toBe('velocity');
    await page.screenshot({ path: artifact('shared-link.png') });
    await page.getByTestId('tab-stresses').click();
    expect(await page.getByTestId('stress-0').getAttribute('aria-selected')).toBe('true');
    expect(await page.getByTestId('legend').textContent()).toContain('tension');
    await page.waitForFunction(() => location.hash.includes('show=stress'));
    await page.screenshot({ path: artifact('self-stress.png') });
    const v = await version(page);
    await page.evaluate(() => (location.hash = '#framework=gallery%3Asquare&cells=4x4&bc=pinned&flex=0'));
    await waitForResult(page, v);
    expect(await shown(page)).toEqual(expected('gallery:square', [4, 4], 'pinned'));
    await page.evaluate(() => (location.hash = '#framework=gallery%3Asquare&cells=0x4&bc=free'));
    await page.getByTestId('error').waitFor({ state: 'visible' });
    expect(await page.getByTestId('error').textContent()).toContain('URL #cells');
    await page.close();
  }, 30_000);

  it('shows progress on a long run, cancels it, and reports a too-large problem; the page stays responsive', async () => {
    // the dense reference solver: its cost and its memory limit do not depend on the auto choice
    const page = await open('#framework=gallery%3Akagome&cells=3x3&bc=free&flex=0&solver=dense');
    const before = await shown(page);
    await page.getByTestId('auto-run').uncheck();
    await page.getByTestId('cells-n1').fill('14');
    await page.getByTestId('cells-n1').press('Tab');
    await page.getByTestId('cells-n2').fill('14');
    await page.getByTestId('cells-n2').press('Tab');
    await page.getByTestId('run').click();
    await page.getByTestId('progress').waitFor({ state: 'visible', timeout: 5000 });
    const t0 = Date.now();
    await page.evaluate(() => 1 + 1);
    expect(Date.now() - t0).toBeLessThan(500);
    await page.getByTestId('cancel').click();
    await page.waitForFunction(() => document.querySelector('[data-testid=error]')?.textContent?.includes('cancelled'));
    expect(await page.getByTestId('progress').count()).toBe(0);
    expect(await shown(page)).toEqual(before);
    await page.getByTestId('cells-n1').fill('60');
    await page.getByTestId('cells-n1').press('Tab');
    await page.getByTestId('cells-n2').fill('60');
    await page.getByTestId('cells-n2').press('Tab');
    await page.getByTestId('run').click();
    await page.waitForFunction(() => document.querySelector('[data-testid=error]')?.textContent?.includes('Too large'), null, { timeout: 15_000 });
    expect(await page.getByTestId('error').textContent()).toMatch(/fewer cells/);
    expect(await shown(page)).toEqual(before);
    await page.screenshot({ path: artifact('too-large.png') });
    await page.close();
  }, 40_000);

  it('has thrown no uncaught error in any page', () => {
    expect(pageErrors).toEqual([]);
  });
});
