/**
 * Figures and animations for talks (issue 12, item 5) in headless chromium: a PNG at a fixed
 * size with a transparent background, SVG with and without its caption, GIF frames captioned
 * with their own phase, file names that keep decimals, the superposition of two flexes, the
 * rigid-motion projection and the joint readout. Expected vectors come from the app's own mode
 * data export and from the core called here in Node (the rigid fields).
 */
import fs from 'node:fs';
import type { Download, Page } from 'playwright-core';
import { describe, expect, it } from 'vitest';
import { stateFromHash } from '../../src/app/state-link.js';
import { rigidMotions } from '../../src/flex/rigid.js';
import { buildGallery } from '../../src/framework/gallery.js';
import { parseBoundary } from '../../src/supercell/boundary.js';
import { buildSupercell } from '../../src/supercell/supercell.js';
import { appSession, browserAvailable, open as openApp } from './harness.js';

const available = browserAvailable();

const KAGOME = '#framework=gallery%3Akagome&cells=3x3&bc=free';

describe.skipIf(!available)('browser figures (issue 12, item 5)', () => {
  const session = appSession();
  const pageErrors: string[] = [];
  const open = (hash: string): Promise<Page> => openApp(session, hash, pageErrors);

  async function saved(page: Page, testid: string): Promise<Download> {
    const [d] = await Promise.all([page.waitForEvent('download', { timeout: 30_000 }), page.getByTestId(testid).click()]);
    return d;
  }
  const text = async (d: Download) => fs.readFileSync((await d.path())!, 'utf8');
  const fill = async (page: Page, testid: string, value: string) => {
    await page.getByTestId(testid).fill(value);
    await page.getByTestId(testid).press('Tab');
  };
  type Velocity = { re: number[]; im: number[] | null };
  const modes = async (page: Page) => JSON.parse(await text(await saved(page, 'export-json'))) as { flexes: { velocity: Velocity }[] };
  const drawn = async (page: Page) => JSON.parse(await text(await saved(page, 'export-drawn'))) as { flex: number; velocity: Velocity; rigidRemoved: string[] };

  it('exports a PNG of the chosen pixel size with a transparent background, named with decimals kept', async () => {
    const page = await open('#framework=gallery%3Atwisted-kagome%3Ftwist%3D15.5&cells=3x3&bc=free&flex=1&play=0');
    await page.getByTestId('figure-settings').locator('summary').click();
    await fill(page, 'figure-width', '640');
    await fill(page, 'figure-height', '400');
    await fill(page, 'figure-dpi', '96');
    await page.getByTestId('figure-transparent').check();
    const d = await saved(page, 'export-png');
    expect(d.suggestedFilename()).toBe('twisted-kagome_twist-15.5_3x3_free_flex-1.png');
    const png = fs.readFileSync((await d.path())!);
    // IHDR: width, height, colour type 6 = RGBA (PNG specification, W3C Recommendation, 2003)
    expect(png.subarray(12, 16).toString('latin1')).toBe('IHDR');
    expect([png.readUInt32BE(16), png.readUInt32BE(20)]).toEqual([640, 400]);
    expect(png[25]).toBe(6);
    const alpha = await page.evaluate(async (b64) => {
      const img = new Image();
      img.src = `data:image/png;base64,${b64}`;
      await img.decode();
      const c = document.createElement('canvas');
      c.width = img.width;
      c.height = img.height;
      const ctx = c.getContext('2d')!;
      ctx.drawImage(img, 0, 0);
      const px = ctx.getImageData(0, 0, c.width, c.height).data;
      let opaque = 0;
      for (let i = 3; i < px.length; i += 4) if (px[i] === 255) opaque++;
      return { corner: px[3], opaque };
    }, png.toString('base64'));
    expect(alpha.corner).toBe(0);
    // the drawing itself is opaque
    expect(alpha.opaque).toBeGreaterThan(100);

    // a size in mm at a dpi: 80 mm × 50 mm at 300 dpi = 945 × 591 pixels (25.4 mm per inch)
    await page.getByTestId('figure-unit').selectOption('mm');
    await fill(page, 'figure-width', '80');
    await fill(page, 'figure-height', '50');
    await fill(page, 'figure-dpi', '300');
    const mm = fs.readFileSync((await (await saved(page, 'export-png')).path())!);
    expect([mm.readUInt32BE(16), mm.readUInt32BE(20)]).toEqual([945, 591]);
    await page.close();
  }, 60_000);

  it('keeps the figure settings in the state file and the link, and shows them when the file is opened', async () => {
    const page = await open(KAGOME + '&flex=0&play=0');
    await page.getByTestId('figure-settings').locator('summary').click();
    await fill(page, 'figure-width', '640');
    await fill(page, 'figure-height', '400');
    // 640 px and 400 px at 192 dpi are 84.7 mm and 52.9 mm (25.4 mm per inch, to 0.1 mm)
    await page.getByTestId('figure-unit').selectOption('mm');
    await fill(page, 'figure-dpi', '300');
    await page.getByTestId('figure-transparent').check();
    await page.getByTestId('figure-caption').uncheck();
    await page.getByTestId('figure-caution').check();
    await fill(page, 'figure-arrow-scale', '1.5');
    await fill(page, 'figure-line-scale', '0.75');
    const expected = { width: 84.7, height: 52.9, unit: 'mm', dpi: 300, transparent: true, caption: false, caution: true, arrowScale: 1.5, lineScale: 0.75 };
    await page.waitForFunction(() => location.hash.includes('figlines=0.75'), null, { timeout: 5_000 });
    expect(stateFromHash(await page.evaluate(() => location.hash)).figure).toEqual(expected);
    const file = await text(await saved(page, 'export-state'));
    expect(JSON.parse(file).figure).toEqual(expected);
    await page.close();

    // a new page (default figure) opens the file: the controls show it and the PNG follows it
    const fresh = await open(KAGOME + '&flex=0&play=0');
    await fresh.getByTestId('figure-settings').locator('summary').click();
    expect(await fresh.getByTestId('figure-width').inputValue()).toBe('1200');
    await fresh.getByTestId('import-state').setInputFiles({ name: 'state.json', mimeType: 'application/json', buffer: Buffer.from(file) });
    await fresh.waitForFunction(() => (document.querySelector('[data-testid=figure-width]') as HTMLInputElement).value === '84.7', null, { timeout: 5_000 });
    const shown = {
      width: await fresh.getByTestId('figure-width').inputValue(),
      height: await fresh.getByTestId('figure-height').inputValue(),
      unit: await fresh.getByTestId('figure-unit').inputValue(),
      dpi: await fresh.getByTestId('figure-dpi').inputValue(),
      transparent: await fresh.getByTestId('figure-transparent').isChecked(),
      caption: await fresh.getByTestId('figure-caption').isChecked(),
      caution: await fresh.getByTestId('figure-caution').isChecked(),
      arrowScale: await fresh.getByTestId('figure-arrow-scale').inputValue(),
      lineScale: await fresh.getByTestId('figure-line-scale').inputValue(),
    };
    expect(shown).toEqual({ ...expected, width: '84.7', height: '52.9', dpi: '300', arrowScale: '1.5', lineScale: '0.75' });
    // 84.7 mm × 52.9 mm at 300 dpi = round(1000.4) × round(624.8) pixels
    expect(await fresh.getByTestId('figure-pixels').textContent()).toContain('1000 × 625 pixels');
    const png = fs.readFileSync((await (await saved(fresh, 'export-png')).path())!);
    expect([png.readUInt32BE(16), png.readUInt32BE(20)]).toEqual([1000, 625]);
    expect(await text(await saved(fresh, 'export-state'))).toBe(file);
    // an edit goes into the state
    await fill(fresh, 'figure-width', '90');
    expect(JSON.parse(await text(await saved(fresh, 'export-state'))).figure).toEqual({ ...expected, width: 90 });
    // a size the unit does not allow is refused by name and kept out of the state
    await fill(fresh, 'figure-height', '5000');
    expect(await fresh.getByTestId('figure-height').getAttribute('aria-invalid')).toBe('true');
    expect(JSON.parse(await text(await saved(fresh, 'export-state'))).figure.height).toBe(52.9);
    expect(pageErrors).toEqual([]);
    await fresh.close();
  }, 90_000);

  it('writes the SVG caption only when asked, and the caution only when ticked', async () => {
    const page = await open(KAGOME + '&flex=0&play=0');
    await page.getByTestId('figure-settings').locator('summary').click();
    const parse = (svg: string) =>
      page.evaluate((t) => {
        const doc = new DOMParser().parseFromString(t, 'image/svg+xml');
        return { error: doc.getElementsByTagName('parsererror').length, caption: doc.querySelector('#caption')?.textContent ?? null, background: doc.querySelectorAll('#background').length, width: doc.documentElement.getAttribute('width') };
      }, svg);
    const withCaption = await parse(await text(await saved(page, 'export-svg')));
    expect(withCaption.error).toBe(0);
    expect(withCaption.caption).toContain('3×3 cells');
    expect(withCaption.caption).toContain('φ = 0 turns');
    expect(withCaption.caption).not.toContain('shimmy —');
    expect(withCaption.background).toBe(1);
    await page.getByTestId('figure-caution').check();
    expect((await parse(await text(await saved(page, 'export-svg')))).caption).toContain('shimmy —');
    await page.getByTestId('figure-caption').uncheck();
    await page.getByTestId('figure-caution').uncheck();
    await page.getByTestId('figure-transparent').check();
    const bare = await parse(await text(await saved(page, 'export-svg')));
    expect(bare.caption).toBeNull();
    expect(bare.background).toBe(0);
    await page.close();
  }, 60_000);

  it('captions every GIF frame with its own phase', async () => {
    const page = await open(KAGOME + '&flex=2');
    await fill(page, 'gif-frames', '4');
    await fill(page, 'gif-width', '200');
    const d = await saved(page, 'export-gif');
    expect(d.suggestedFilename()).toBe('kagome_3x3_free_flex-2.gif');
    const captions = JSON.parse((await page.getByTestId('gif-captions').getAttribute('data-captions'))!) as string[];
    expect(captions).toHaveLength(4);
    ['φ = 0 turns', 'φ = 0.25 turns', 'φ = 0.5 turns', 'φ = 0.75 turns'].forEach((phase, k) => expect(captions[k]).toContain(phase));
    await page.close();
  }, 60_000);

  it('draws a superposition equal to the weighted sum of the two flexes of the mode data', async () => {
    const page = await open(KAGOME + '&flex=1&play=0');
    await fill(page, 'mix-wa', '0.5');
    await fill(page, 'mix-wb', '-2');
    await fill(page, 'mix-b', '4');
    const data = await modes(page);
    const u = await drawn(page);
    expect(u.flex).toBe(1);
    const a = data.flexes[1].velocity;
    const b = data.flexes[4].velocity;
    expect(u.velocity.re).toHaveLength(a.re.length);
    u.velocity.re.forEach((x, i) => expect(x).toBeCloseTo(0.5 * a.re[i] - 2 * b.re[i], 12));
    // a bad index is refused with a message naming the field
    await fill(page, 'mix-b', '99');
    await page.getByTestId('error').filter({ hasText: 'second flex' }).first().waitFor({ timeout: 5_000 });
    await page.close();
  }, 60_000);

  it('projects the rigid motions out of the drawn flex', async () => {
    const page = await open(KAGOME + '&flex=0&play=0');
    const data = await modes(page);
    // the core's rigid fields of the same supercell (orthonormal)
    const rigid = rigidMotions(buildSupercell(buildGallery('gallery:kagome'), [3, 3], parseBoundary('free'))).map((m) => m.field);
    const dot = (t: Float64Array, v: number[]) => v.reduce((s, x, i) => s + x * t[i], 0);
    // the listed flex with the largest rigid part (rigid motions are not removed by the classifier)
    const rigidPart = (v: number[]) => Math.hypot(...rigid.map((t) => dot(t, v)));
    const pick = data.flexes.map((f, i) => ({ i, r: rigidPart(f.velocity.re) })).sort((x, y) => y.r - x.r)[0];
    expect(pick.r).toBeGreaterThan(0.1);
    await page.getByTestId(`flex-${pick.i}`).click();
    await page.getByTestId('project-rigid').check();
    const u = await drawn(page);
    expect(u.flex).toBe(pick.i);
    expect(u.rigidRemoved).toEqual(['translation x', 'translation y', 'rotation']);
    const norm = Math.hypot(...u.velocity.re);
    expect(norm).toBeGreaterThan(0);
    for (const t of rigid) expect(Math.abs(dot(t, u.velocity.re))).toBeLessThan(1e-10 * Math.max(1, norm));
    // what was removed lies in the span of the rigid fields: u = a − Σ t (tᵀa)
    const a = data.flexes[pick.i].velocity.re;
    const expected = a.slice();
    for (const t of rigid) {
      const c = dot(t, a);
      for (let i = 0; i < expected.length; i++) expected[i] -= c * t[i];
    }
    u.velocity.re.forEach((x, i) => expect(x).toBeCloseTo(expected[i], 12));
    await page.close();
  }, 60_000);

  it('reads the velocity of a clicked joint as in the mode data; the amplitude goes up to 5', async () => {
    const page = await open(KAGOME + '&flex=3&play=0&phase=0');
    const data = await modes(page);
    // the joint that moves most in flex 3 (so the compared velocity is not zero)
    const re3 = data.flexes[3].velocity.re;
    const speeds = Array.from({ length: re3.length / 2 }, (_, j) => Math.hypot(re3[2 * j], re3[2 * j + 1]));
    const k = speeds.indexOf(Math.max(...speeds));
    expect(speeds[k]).toBeGreaterThan(0.1);
    const at = await page.evaluate((j) => (window as unknown as { shimmy: { jointOnScreen(k: number): [number, number] | null } }).shimmy.jointOnScreen(j), k);
    expect(at).not.toBeNull();
    const box = (await page.getByTestId('stage-canvas').boundingBox())!;
    await page.mouse.click(box.x + at![0], box.y + at![1]);
    const readout = page.getByTestId('joint-readout');
    await readout.waitFor({ state: 'visible', timeout: 5_000 });
    expect(await readout.getAttribute('data-joint')).toBe(String(k));
    const v = data.flexes[3].velocity;
    expect(Number(await readout.getAttribute('data-ux-re'))).toBeCloseTo(v.re[2 * k], 14);
    expect(Number(await readout.getAttribute('data-uy-re'))).toBeCloseTo(v.re[2 * k + 1], 14);
    expect(await readout.textContent()).toContain(`joint ${k}`);

    await fill(page, 'amplitude', '5');
    expect(await page.getByTestId('amplitude').getAttribute('aria-invalid')).toBe('false');
    await page.waitForFunction(() => location.hash.includes('amp=5'), null, { timeout: 5_000 });
    expect(pageErrors).toEqual([]);
    await page.close();
  }, 60_000);
});
