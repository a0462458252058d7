/**
 * Browser checks of the strain and stress views (issue 13, item 4): the classified self-stresses
 * listed by class and drawn with bar widths that follow their bar forces, the strain view of the
 * cell, and the prestress check. Expected values come from outside sources or from the core
 * called here in Node, never from the page.
 */
import type { Page } from 'playwright-core';
import { describe, expect, it } from 'vitest';
import { buildGallery } from '../../src/framework/gallery.js';
import { flexibleLattice } from '../../src/strain/flexible-lattice.js';
import { STRESS_WIDTH } from '../../src/app/stage/scene.js';
import { appSession, artifact, browserAvailable, open as openApp } from './harness.js';

const available = browserAvailable();

type Drawing = { index: number; forces: number[] | null; widths: number[]; baseWidth: number } | null;

describe.skipIf(!available)('browser strain and stress views (issue 13, item 4)', () => {
  const session = appSession();
  const pageErrors: string[] = [];
  const open = (hash: string): Promise<Page> => openApp(session, hash, pageErrors);
  const drawing = (page: Page) => page.evaluate(() => (window as unknown as { shimmy: { stressDrawing(): Drawing } }).shimmy.stressDrawing());

  /** The drawn widths are STRESS_WIDTH.min + (max − min)·|t_b| / max|t| times the plain bar width. */
  function expectWidthsFollowForces(d: Drawing): void {
    expect(d).not.toBeNull();
    const forces = d!.forces!;
    const top = Math.max(...forces.map(Math.abs));
    expect(top).toBeGreaterThan(0);
    expect(d!.widths).toHaveLength(forces.length);
    forces.forEach((t, b) => {
      const factor = STRESS_WIDTH.min + ((STRESS_WIDTH.max - STRESS_WIDTH.min) * Math.abs(t)) / top;
      expect(d!.widths[b] / d!.baseWidth).toBeCloseTo(factor, 4);
    });
  }

  it('kagome 4×4 torus: 12 self-stresses, all line class, drawn by their bar forces', async () => {
    // N1 + N2 + gcd(N1, N2) = 12 self-stresses, each the tension of one closed straight bond
    // line (K. Sun, A. Souslov, X. Mao & T. C. Lubensky, PNAS 109, 12369–12374 (2012);
    // tests/published-counts.test.ts). A line of a 4-cell torus holds 8 bars.
    const page = await open('#framework=gallery%3Akagome&cells=4x4&bc=periodic&flex=0&play=0');
    await page.getByTestId('tab-stresses').click();
    expect(await page.getByTestId('tab-stresses').textContent()).toBe('Self-stresses (12)');
    const rows = page.locator('[data-testid^="stress-"][role=option]');
    expect(await rows.count()).toBe(12);
    expect(await rows.evaluateAll((els) => els.map((e) => e.getAttribute('data-class')))).toEqual(new Array(12).fill('line'));
    expect(await page.getByTestId('stress-classes').textContent()).toContain('line 12');
    expect(await page.getByTestId('stress-0').getAttribute('aria-selected')).toBe('true');

    const d0 = await drawing(page);
    expect(d0?.index).toBe(0);
    const on = d0!.forces!.filter((t) => Math.abs(t) > 1e-9);
    expect(on).toHaveLength(8);
    for (const t of on) expect(t).toBeCloseTo(on[0], 9);
    expectWidthsFollowForces(d0);
    // the 8 loaded bars are drawn at the largest width, the other 40 at the smallest
    const wide = d0!.widths.filter((w) => w / d0!.baseWidth > (STRESS_WIDTH.min + STRESS_WIDTH.max) / 2);
    expect(wide).toHaveLength(8);
    // the macroscopic stress of a periodic self-stress, as numbers
    expect(await page.getByTestId('stress-macro').textContent()).toMatch(/σ = \[\[.*\]\] per cell/);
    expect(await page.getByTestId('legend').textContent()).toContain('tension');

    // keyboard: the list is one Tab stop and ↓ selects the next self-stress, which the stage draws
    await page.getByTestId('stress-0').focus();
    await page.keyboard.press('ArrowDown');
    expect(await page.getByTestId('stress-1').getAttribute('aria-selected')).toBe('true');
    expect(await page.evaluate(() => document.activeElement?.getAttribute('data-testid'))).toBe('stress-1');
    const d1 = await drawing(page);
    expect(d1?.index).toBe(1);
    expectWidthsFollowForces(d1);
    // another line: other bars carry it
    const loaded = (d: Drawing) => d!.forces!.flatMap((t, b) => (Math.abs(t) > 1e-9 ? [b] : []));
    expect(loaded(d1)).not.toEqual(loaded(d0));
    await page.screenshot({ path: artifact('stresses-kagome.png') });
    expect(pageErrors).toEqual([]);
    await page.close();
  }, 40_000);

  it('twisted kagome: the strain view shows one flex, an auxetic dilation, before and after', async () => {
    // the twisted kagome's one strain flex is a pure dilation: zero bulk modulus, Poisson ratio −1
    // (K. Sun, A. Souslov, X. Mao & T. C. Lubensky, PNAS 109, 12369–12374 (2012)); the core
    // agrees here in Node
    const core = flexibleLattice(buildGallery('gallery:twisted-kagome'));
    expect(core.strainFlexes).toBe(1);
    const page = await open('#framework=gallery%3Atwisted-kagome&cells=3x3&bc=periodic&flex=0&play=0');
    await page.getByTestId('strain-panel').locator('summary').click();
    await page.getByTestId('strain-run').click();
    await page.getByTestId('strain-flex-0').waitFor({ state: 'visible', timeout: 30_000 });
    expect(await page.locator('[data-testid^="strain-flex-"]').count()).toBe(1);
    expect(await page.locator('[data-testid^="strain-zero-"]').count()).toBe(0);
    const item = page.getByTestId('strain-flex-0');
    expect(await item.getAttribute('data-kind')).toBe('dilation');
    expect(await item.getAttribute('data-auxetic')).toBe('true');
    expect(await item.textContent()).toMatch(/dilation.*auxetic/);
    expect(await page.getByTestId('strain-summary').getAttribute('data-strain-flexes')).toBe('1');
    // the overlay: the cell at rest and strained (a dilation grows both lattice vectors)
    const cells = await page.evaluate(() => ['before', 'after'].map((k) => document.querySelector(`[data-testid=strain-cell-${k}]`)?.getAttribute('points')));
    expect(cells[0]).toBeTruthy();
    expect(cells[1]).toBeTruthy();
    expect(cells[1]).not.toBe(cells[0]);
    await page.getByTestId('strain-figure').screenshot({ path: artifact('strain-twisted-kagome.png') });

    // a framework without any: said plainly (the triangular lattice is rigid with a deforming
    // lattice too; common practice)
    await page.getByTestId('gallery-select').selectOption('gallery:triangular');
    await page.getByTestId('strain-run').click();
    await page.getByTestId('strain-none').waitFor({ state: 'visible', timeout: 30_000 });
    expect(await page.getByTestId('strain-none').textContent()).toContain('no non-trivial flex');
    expect(pageErrors).toEqual([]);
    await page.close();
  }, 40_000);

  it('square grid pinned left and right: the prestress check says stable', async () => {
    // the row tensions stabilise the column slides (R. Connelly & W. Whiteley, SIAM J. Discrete
    // Math. 9, 453–491 (1996) for the notion; the eigenvalues 2 − 2cos(kπ/7) are derived in
    // tests/prestress.test.ts)
    const page = await open('#framework=gallery%3Asquare&cells=6x4&bc=x%3Dpinned%2Cy%3Dfree&flex=0&play=0');
    const run = page.getByTestId('prestress-run');
    expect(await run.isEnabled()).toBe(true);
    await run.click();
    await page.waitForSelector('[data-testid=prestress-verdict][data-verdict]', { timeout: 30_000 });
    expect(await page.getByTestId('prestress-verdict').getAttribute('data-verdict')).toBe('prestress-stable');
    expect(await page.getByTestId('prestress-result').textContent()).toBe('prestress stable');
    expect(await page.getByTestId('prestress-method').textContent()).toContain('eigenvalues');
    const eig = Number(/eigenvalue[^:]*: ([-0-9.e]+)/.exec((await page.getByTestId('prestress-eigenvalue').textContent()) ?? '')?.[1]);
    expect(eig).toBeGreaterThan(0);
    // a twisted boundary is complex: no check offered
    const v = Number(await page.getByTestId('results').getAttribute('data-version'));
    await page.evaluate(() => (location.hash = '#framework=gallery%3Asquare&cells=4x4&bc=twist%3A0.25%2C0&flex=0&play=0'));
    await page.waitForFunction((x) => Number(document.querySelector('[data-testid=results]')?.getAttribute('data-version')) > x, v, { timeout: 30_000 });
    expect(await run.isDisabled()).toBe(true);
    expect(await page.getByTestId('prestress-note').textContent()).toContain('real boundary');
    expect(await page.getByTestId('prestress-verdict').getAttribute('data-verdict')).toBeNull();
    expect(pageErrors).toEqual([]);
    await page.close();
  }, 40_000);
});
