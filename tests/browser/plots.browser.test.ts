/**
 * The plots of the app (issue 12, item 4) in headless chromium: the sweep plot and its CSV, the
 * phase map's colour bar, hover readout and snapped click, and the edge panel's ξ(θ) plot. The
 * expected numbers come from the core called here in Node, never from the page.
 */
import fs from 'node:fs';
import type { Page } from 'playwright-core';
import { describe, expect, it } from 'vitest';
import { count } from '../../src/analysis.js';
import { edges } from '../../src/edges/edges.js';
import { sideWeights } from '../../src/flex/side-weights.js';
import { sweep } from '../../src/flex/sweep.js';
import { buildGallery } from '../../src/framework/gallery.js';
import { phaseMap } from '../../src/spectrum/phasemap.js';
import { SWEEP_SERIES } from '../../src/app/plots/sweep.js';
import { artifact, appSession, browserAvailable, open as openApp } from './harness.js';

const available = browserAvailable();

describe.skipIf(!available)('browser plots (issue 12, item 4)', () => {
  const session = appSession();
  const pageErrors: string[] = [];

  const open = (hash: string): Promise<Page> => openApp(session, hash, pageErrors);

  it('runs a sweep, plots one curve per class and exports the counts as CSV', async () => {
    const core = sweep(buildGallery('gallery:kagome'), { sizes: [[2, 2], [3, 3], [4, 4]], boundary: 'free' });
    const page = await open('#framework=gallery%3Akagome&cells=3x3&bc=free&flex=0');
    await page.getByTestId('sweep-panel').locator('summary').click();
    // a bad sizes text is refused with a message naming the field
    await page.getByTestId('sweep-sizes').fill('4..2');
    await page.getByTestId('sweep-run').click();
    await page.getByTestId('error').filter({ hasText: 'backwards' }).first().waitFor({ timeout: 5_000 });
    await page.getByTestId('sweep-sizes').fill('2..4');
    await page.getByTestId('sweep-run').click();
    await page.locator('[data-testid=sweep-plot] svg').waitFor({ timeout: 30_000 });
    const series = await page.locator('[data-testid=sweep-plot] svg path.series-curve').evaluateAll((ps) => ps.map((p) => p.getAttribute('data-series')));
    expect(series).toEqual(SWEEP_SERIES.map((s) => s.key));
    const title = await page.locator('[data-testid=sweep-plot] svg .plot-title').textContent();
    expect(title).toMatch(/kagome/i);
    expect(await page.locator('[data-testid=sweep-plot] svg .plot-subtitle').textContent()).toContain('boundary free');
    await page.getByTestId('sweep-log').check();
    await page.locator('[data-testid=sweep-plot] svg .axis-bottom').waitFor();
    expect(await page.locator('[data-testid=sweep-plot] svg path.series-curve').count()).toBe(SWEEP_SERIES.length);

    const [download] = await Promise.all([page.waitForEvent('download', { timeout: 10_000 }), page.getByTestId('sweep-export-csv').click()]);
    const csv = fs.readFileSync((await download.path())!, 'utf8');
    const rows = csv.trim().split('\n').filter((l) => !l.startsWith('#'));
    const head = rows[0].split(',');
    expect(rows).toHaveLength(1 + core.rows.length);
    core.rows.forEach((row, i) => {
      const cells = rows[i + 1].split(',');
      for (const k of ['N1', 'N2', 'flexes', 'local', 'line', 'decaying', 'bulk', 'selfStresses'] as const) expect(Number(cells[head.indexOf(k)]), k).toBe(row[k]);
    });
    expect(csv).toContain(`# fit flexes: `);
    expect(download.suggestedFilename()).toMatch(/sweep\.csv$/);
    await page.getByTestId('sweep-plot').screenshot({ path: artifact('sweep-plot.png') });
    await page.close();
  }, 60_000);

  it('draws the phase map with a colour bar, reads a value on hover and snaps a click to k/N', async () => {
    const grid = 16;
    const fw = buildGallery('gallery:kagome');
    const map = phaseMap(fw, { grid });
    const page = await open('#framework=gallery%3Akagome&cells=3x3&bc=free&flex=0');
    await page.getByTestId('phasemap-panel').locator('summary').click();
    await page.getByTestId('phasemap-grid').selectOption(String(grid));
    await page.waitForFunction(() => !(document.querySelector('[data-testid=phasemap-run]') as HTMLButtonElement).disabled);
    await page.getByTestId('phasemap-run').click();
    const bar = page.getByTestId('phasemap-colorbar');
    await bar.waitFor({ timeout: 30_000 });
    expect(await bar.locator('text.axis-title').textContent()).toBe('log₁₀(σ₁/σ_max)');
    expect(await page.locator('[data-testid=phasemap-figure] .zero-line').count()).toBeGreaterThan(0);

    // hover near θ = (0.25, 0.75): sample (4, 12) of the 16-grid
    await page.getByTestId('phasemap-figure').scrollIntoViewIfNeeded();
    const box = (await page.getByTestId('phasemap-canvas').boundingBox())!;
    await page.mouse.move(box.x + 0.25 * box.width, box.y + 0.25 * box.height);
    const text = (await page.getByTestId('phasemap-readout').textContent())!;
    const m = /θ₁ ([\d.]+), θ₂ ([\d.]+) turns/.exec(text)!;
    expect(Number(m[1])).toBeCloseTo(0.25, 2);
    expect(Number(m[2])).toBeCloseTo(0.75, 2);
    const sigma = map.smallest[0][12 * grid + 4];
    const expectedLog = Math.log10(sigma / map.sigmaMax);
    expect(text).toContain(`log₁₀ ${sigma > 0 ? expectedLog.toFixed(2).replace('-', '−') : '−∞'}`);
    expect(text).toContain(`dim ker ${map.kernel[12 * grid + 4]}`);
    await page.getByTestId('phasemap-figure').screenshot({ path: artifact('phasemap-figure.png') });

    // exports: the SVG embeds the map and carries the colour bar; the PNG is 3× the figure
    const [svgFile] = await Promise.all([page.waitForEvent('download', { timeout: 10_000 }), page.getByTestId('phasemap-export-svg').click()]);
    const svg = fs.readFileSync((await svgFile.path())!, 'utf8');
    expect(svg.startsWith('<?xml')).toBe(true);
    expect(svg).toContain('<image ');
    expect(svg).toContain('data-testid="phasemap-colorbar"');
    const width = Number(/<svg[^>]* width="([\d.]+)"/.exec(svg)![1]);
    const [pngFile] = await Promise.all([page.waitForEvent('download', { timeout: 10_000 }), page.getByTestId('phasemap-export-png').click()]);
    const png = fs.readFileSync((await pngFile.path())!);
    expect([...png.subarray(1, 4)].map((c) => String.fromCharCode(c)).join('')).toBe('PNG');
    expect(png.readUInt32BE(16)).toBe(3 * width);
    fs.writeFileSync(artifact('phasemap-export.png'), png);
    await page.getByTestId('phasemap-large').click();
    await page.locator('[data-testid=phasemap-dialog] svg').waitFor();
    await page.getByTestId('phasemap-dialog-close').click();

    // a click at θ = (0.3, 0.62) on 3×3 cells snaps to (1/3, 2/3)
    const before = Number(await page.getByTestId('results').getAttribute('data-version'));
    await page.mouse.click(box.x + 0.3 * box.width, box.y + (1 - 0.62) * box.height);
    await page.waitForFunction((v) => Number(document.querySelector('[data-testid=results]')?.getAttribute('data-version')) > v, before, { timeout: 30_000 });
    expect(await page.getByTestId('bc-text').inputValue()).toBe(`twist:${1 / 3},${2 / 3}`);
    await page.close();
  }, 60_000);

  it('opens the edge panel on a twisted kagome: ξ(θ) plot, predicted and counted modes per side', async () => {
    const fw = buildGallery('gallery:twisted-kagome?twist=15');
    const e = edges({ framework: fw, phase: 0.25, along: 'a1', grid: 0, strip: 0 });
    const { supercell, analysis } = count({ framework: fw, cells: [4, 4], boundary: 'free' });
    const weights = sideWeights(supercell, analysis);
    const page = await open('#framework=gallery%3Atwisted-kagome%3Ftwist%3D15&cells=4x4&bc=free&flex=0');
    await page.getByTestId('edges-panel').locator('summary').click();
    await page.getByTestId('edges-phase').fill('0.25');
    await page.getByTestId('edges-run').click();
    await page.locator('[data-testid=edges-xi-plot] svg path.series-curve').first().waitFor({ timeout: 30_000 });
    const sides = await page.locator('[data-testid=edges-xi-plot] svg g.series').evaluateAll((gs) => gs.map((g) => g.getAttribute('data-series')));
    expect(sides).toEqual(['bottom', 'top', 'left', 'right']);
    const bottom = page.locator('[data-testid=edges-table] tr[data-side=bottom] td');
    expect(await bottom.nth(1).textContent()).toBe(String(e.sides.bottom.predicted));
    // counted in the supercell: its side weight (4 significant digits, as the page shows numbers)
    expect(Number(await bottom.nth(4).textContent())).toBeCloseTo(weights.bottom!, 3);
    await page.getByTestId('edges-panel').screenshot({ path: artifact('edges-panel.png') });
    await page.close();
    expect(pageErrors).toEqual([]);
  }, 60_000);
});
