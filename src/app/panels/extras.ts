/** Further analyses: the phase-torus map of the unit-cell symbol, the size sweep, the edge modes and the strain of the cell. */
import type { PhaseMapData, SweepData, WorkerFeatures } from '../../worker/protocol.js';
import type { Host } from '../host.js';
import { RunError } from '../client.js';
import { append, clear, fmt, h, newId } from '../dom.js';
import { download } from '../export/download.js';
import { chargeLabel, sigmaName, phaseMapBody, phaseMapFigure, phaseMapLayout, rasterPixels, rasterPlacement, readout, snapPhase } from '../plots/phasemap.js';
import { pixelsCanvas, svgToPng } from '../plots/raster.js';
import { el as svgEl, svgDocument } from '../plots/svg.js';
import { parseSweepSizes, sweepCsv, sweepFigure } from '../plots/sweep.js';
import { frameworkOf, frameworkTitle, slug } from '../state.js';
import { buildEdgesPanel } from './edges-panel.js';
import { buildStrainPanel } from './strain-panel.js';

/** Side of the phase map's square in the panel (css px). */
const PM_SIDE = 288;

export interface ExtrasPanel {
  el: HTMLElement;
  setFeatures(f: WorkerFeatures): void;
  /** Clears the map and the sweep table: they belong to the previous framework. */
  frameworkChanged(): void;
}

export function buildExtrasPanel(app: Host): ExtrasPanel {
  // ---- phase map
  const gridId = newId('grid');
  const grid = h('select', { id: gridId, 'data-testid': 'phasemap-grid' }, [16, 24, 32, 48, 64, 96].map((g) => h('option', { value: g, selected: g === 32 }, `${g} × ${g}`)));
  const pmStatus = h('span', { class: 'hint', 'data-testid': 'phasemap-status', 'aria-live': 'polite' });
  const pmCancel = h('button', { type: 'button', class: 'small', hidden: true, onclick: () => void app.client.cancelSpectrum() }, 'Cancel');
  const pmCanvas = h('canvas', { class: 'phasemap', width: 288, height: 288, role: 'img', 'aria-label': 'Phase map of the smallest singular value over the torus of twist phases', 'data-testid': 'phasemap-canvas' });
  const pmSummary = h('div', { class: 'phasemap-summary', 'data-testid': 'phasemap-summary' });
  const pmOverlay = h('div', { class: 'phasemap-overlay', 'aria-hidden': 'true' });
  const pmFigure = h('div', { class: 'phasemap-figure', 'data-testid': 'phasemap-figure' }, pmCanvas, pmOverlay);
  const pmReadout = h('p', { class: 'phasemap-readout', 'data-testid': 'phasemap-readout', 'aria-live': 'polite' });
  const pmLarge = h('button', { type: 'button', class: 'small', disabled: true, 'data-testid': 'phasemap-large' }, 'Larger view');
  const pmPng = h('button', { type: 'button', class: 'small', disabled: true, 'data-testid': 'phasemap-export-png', title: 'The figure as a PNG image (3× its size)' }, 'PNG');
  const pmSvg = h('button', { type: 'button', class: 'small', disabled: true, 'data-testid': 'phasemap-export-svg', title: 'The figure as SVG (the map itself embedded as an image)' }, 'SVG');
  const pmDialog = h('dialog', { class: 'plot-dialog', 'data-testid': 'phasemap-dialog', 'aria-label': 'Phase map, larger view' });
  let pm: PhaseMapData | null = null;
  /** Framework title and file-name stem of the shown map (the settings may change afterwards). */
  let pmName = '';
  /** Bumped on every framework change; a map or sweep started before it is dropped when it arrives. */
  let generation = 0;
  const pmRun = h('button', { type: 'button', class: 'small primary', 'data-testid': 'phasemap-run', disabled: true }, 'Compute map');
  pmRun.addEventListener('click', () => {
    let framework;
    try {
      framework = frameworkOf(app.state.framework);
    } catch (e) {
      app.reportError('phasemap', e);
      return;
    }
    pmStatus.textContent = 'computing…';
    pmCancel.hidden = false;
    app.message('phasemap', null);
    const gen = generation;
    app.client
      .phaseMap({ framework, grid: Number(grid.value), tolerance: app.state.tolerance }, (f, stage) => (pmStatus.textContent = `${stage} ${Math.round(f * 100)} %`))
      .then((r) => {
        pmStatus.textContent = '';
        if (gen !== generation) return;
        pm = r;
        pmName = frameworkTitle(app.state.framework);
        showPhaseMap();
        summarise(r);
      })
      .catch((e: unknown) => {
        pmStatus.textContent = '';
        if (e instanceof RunError && e.error.kind === 'cancelled') pmStatus.textContent = 'cancelled';
        else app.reportError('phasemap', e);
      })
      .finally(() => (pmCancel.hidden = true));
  });
  /** The phase under the pointer, in turns, within [0, 1]². */
  const thetaAt = (e: MouseEvent): [number, number] => {
    const r = pmCanvas.getBoundingClientRect();
    return [Math.min(1, Math.max(0, (e.clientX - r.left) / r.width)), Math.min(1, Math.max(0, 1 - (e.clientY - r.top) / r.height))];
  };
  const cellsNow = (): [number, number] => [app.state.cells[0], app.state.cells[1]];
  const figureOptions = (side: number, image: string | null, idPrefix: string) => ({ side, title: `Phase map: ${pmName}`, image, background: image ? '#ffffff' : null, allowed: image ? null : cellsNow(), idPrefix });
  /** The map drawn on the canvas, with axes, colour bar and zero set in an SVG over it. */
  const showPhaseMap = () => {
    if (!pm) return;
    const { body, layout } = phaseMapBody(pm, figureOptions(PM_SIDE, null, 'pm-view'));
    const hover = svgEl('circle', { 'data-role': 'hover', r: 6, fill: 'none', stroke: '#ffffff', 'stroke-width': 2, visibility: 'hidden' });
    pmOverlay.innerHTML = svgDocument({ width: layout.width, height: layout.height, title: `Phase map: ${pmName}`, background: null, body: [...body, hover] });
    pmFigure.classList.add('has-map');
    Object.assign(pmFigure.style, { width: `${layout.width}px`, height: `${layout.height}px` });
    Object.assign(pmCanvas.style, { left: `${layout.left}px`, top: `${layout.top}px`, width: `${PM_SIDE}px`, height: `${PM_SIDE}px` });
    paintPhaseMap(pmCanvas, pm, PM_SIDE);
    for (const b of [pmLarge, pmPng, pmSvg]) b.disabled = false;
  };
  const hideMap = () => {
    pmOverlay.innerHTML = '';
    pmFigure.classList.remove('has-map');
    pmFigure.removeAttribute('style');
    pmCanvas.removeAttribute('style');
    pmCanvas.getContext('2d')?.clearRect(0, 0, pmCanvas.width, pmCanvas.height);
    pmReadout.textContent = '';
    for (const b of [pmLarge, pmPng, pmSvg]) b.disabled = true;
  };
  pmCanvas.addEventListener('mousemove', (e) => {
    if (!pm) return;
    const t = thetaAt(e);
    const r = readout(pm, t);
    const cells = cellsNow();
    const s = snapPhase(t, cells);
    const what = sigmaName(pm.genericKernel);
    pmReadout.textContent =
      `θ₁ ${t[0].toFixed(3)}, θ₂ ${t[1].toFixed(3)} turns · ${what}/σ_max at the nearest sample: log₁₀ ${Number.isFinite(r.log10) ? r.log10.toFixed(2).replace('-', '−') : '−∞'} (${what} ${fmt(r.sigma)}), dim ker ${r.kernel}` +
      ` · a click sets the twist (${s.k[0]}/${cells[0]}, ${s.k[1]}/${cells[1]})`;
    const L = phaseMapLayout(PM_SIDE);
    const c = pmOverlay.querySelector('[data-role=hover]');
    c?.setAttribute('cx', String(L.left + s.theta[0] * PM_SIDE));
    c?.setAttribute('cy', String(L.top + (1 - s.theta[1]) * PM_SIDE));
    c?.setAttribute('visibility', 'visible');
  });
  pmCanvas.addEventListener('mouseleave', () => pmOverlay.querySelector('[data-role=hover]')?.setAttribute('visibility', 'hidden'));
  pmCanvas.addEventListener('click', (e) => {
    if (!pm) return;
    // snapped to the phases k/N the current supercell holds
    const { theta } = snapPhase(thetaAt(e), cellsNow());
    app.state.bc = `twist:${theta[0]},${theta[1]}`;
    app.applyState(app.state, true);
  });
  /** The figure for a file or the larger view: the map embedded as pixels scaled up without smoothing. */
  const pmDocument = (side: number, prolog: boolean, idPrefix: string) => {
    const px = rasterPixels(pm!);
    const image = pixelsCanvas(px.size, px.data, Math.max(1, Math.ceil(600 / px.size))).toDataURL('image/png');
    const o = figureOptions(side, image, idPrefix);
    return { svg: phaseMapFigure(pm!, { ...o, prolog }), layout: phaseMapLayout(side) };
  };
  const stem = () => `${slug(pmName)}-phase-map-${pm!.grid}`;
  pmSvg.addEventListener('click', () => pm && download(pmDocument(PM_SIDE, true, 'pm').svg, `${stem()}.svg`, 'image/svg+xml'));
  pmPng.addEventListener('click', () => {
    if (!pm) return;
    const { svg, layout } = pmDocument(PM_SIDE, true, 'pm');
    svgToPng(svg, layout.width, layout.height, 3, '#ffffff')
      .then((b) => download(b, `${stem()}.png`, 'image/png'))
      .catch((e: unknown) => app.reportError('phasemap', e, 'The PNG could not be made'));
  });
  pmLarge.addEventListener('click', () => {
    if (!pm) return;
    const side = Math.max(300, Math.min(window.innerHeight - 200, window.innerWidth - 280));
    clear(pmDialog);
    const holder = h('div', { class: 'plot-dialog-figure' });
    holder.innerHTML = pmDocument(side, false, 'pm-large').svg;
    pmDialog.append(h('div', { class: 'row' }, h('button', { type: 'button', class: 'small', onclick: () => pmDialog.close(), 'data-testid': 'phasemap-dialog-close' }, 'Close')), holder);
    if (typeof pmDialog.showModal === 'function') pmDialog.showModal();
    else pmDialog.setAttribute('open', '');
  });
  const summarise = (r: PhaseMapData) => {
    clear(pmSummary);
    append(pmSummary, [
      h('p', null, `Unit-cell symbol Φ(θ): ${r.bars} bars × ${r.dof} columns; generic dim ker Φ = ${r.genericKernel}; colour: log₁₀ of σ_${r.genericKernel + 1}/σ_max, dark = small (the range follows the data, floored at the tolerance). Tolerance ${fmt(r.tolerance.relative)}·σ_max.`),
      r.lines.length
        ? h('ul', null, r.lines.map((l) => h('li', null, `zero line ${l.p}·θ₁ + ${l.q}·θ₂ ≡ ${fmt(l.c, 6)} (mod 1), dim ker ≥ ${l.kernel}, ${l.support} points`)))
        : h('p', null, 'No zero lines found.'),
      r.isolated.length ? h('p', null, `Isolated zeros: ${r.isolated.map((z) => `(${fmt(z.theta[0], 4)}, ${fmt(z.theta[1], 4)})`).join(', ')}`) : null,
      zeroSetText(r),
      h('p', { class: 'hint' }, 'Click the map to use that point as the twisted boundary rule θ = (θ₁, θ₂) of the supercell, snapped to the nearest phases (k₁/N₁, k₂/N₂) of the current N₁×N₂ cells (the white dots).'),
    ]);
  };
  const phaseCard = h(
    'details',
    { class: 'panel extra', 'data-testid': 'phasemap-panel' },
    h('summary', null, h('h2', null, 'Phase map (Bloch phases)')),
    h('div', { class: 'row' }, h('label', { for: gridId }, 'grid'), grid, pmRun, pmCancel, pmStatus),
    h('div', { class: 'row' }, pmLarge, h('span', { class: 'hint' }, 'export'), pmPng, pmSvg),
    h('div', { class: 'phasemap-body' }, h('div', null, pmFigure, pmReadout), pmSummary),
    pmDialog,
  );

  // ---- size sweep
  let sweepOut: HTMLElement | null = null;
  /** The sweep on show and the framework it was run for. */
  let sweepShown: { r: SweepData; name: string } | null = null;
  let sweepExports: HTMLButtonElement[] = [];
  const sweepBody = h('div', { 'data-testid': 'sweep-body' }, h('p', { class: 'unavailable', 'data-testid': 'sweep-unavailable' }, 'Checking…'));
  const sweepCard = h('details', { class: 'panel extra', 'data-testid': 'sweep-panel' }, h('summary', null, h('h2', null, 'Size sweep')), sweepBody);

  const setFeatures = (f: WorkerFeatures) => {
    pmRun.disabled = !f.phaseMap;
    if (!f.phaseMap) pmStatus.textContent = 'Not yet available in this build.';
    clear(sweepBody);
    if (!f.sweep) {
      sweepBody.append(h('p', { class: 'unavailable', 'data-testid': 'sweep-unavailable' }, 'Not yet available in this build: the size sweep will appear here once it is part of shimmy. Nothing is shown until then.'));
      return;
    }
    const sizesId = newId('sizes');
    const helpId = newId('sizes-help');
    const logId = newId('sweep-log');
    const sizes = h('input', { type: 'text', id: sizesId, class: 'mono', value: '3,4,5,6', spellcheck: 'false', 'aria-describedby': helpId, 'data-testid': 'sweep-sizes' });
    const out = h('div', { class: 'sweep-out', 'data-testid': 'sweep-out' });
    sweepOut = out;
    const status = h('span', { class: 'hint', 'aria-live': 'polite', 'data-testid': 'sweep-status' });
    const run = h('button', { type: 'button', class: 'small primary', 'data-testid': 'sweep-run' }, 'Run sweep');
    const cancel = h('button', { type: 'button', class: 'small', hidden: true, 'data-testid': 'sweep-cancel', onclick: () => void app.client.cancelSpectrum() }, 'Cancel');
    const logBox = h('input', { type: 'checkbox', id: logId, 'data-testid': 'sweep-log' });
    const csvBtn = h('button', { type: 'button', class: 'small', disabled: true, 'data-testid': 'sweep-export-csv', title: 'The counts per size and the fits, as CSV' }, 'CSV');
    const svgBtn = h('button', { type: 'button', class: 'small', disabled: true, 'data-testid': 'sweep-export-svg', title: 'The plot as SVG' }, 'SVG');
    sweepExports = [csvBtn, svgBtn];
    const draw = () => sweepShown && renderSweep(out, sweepShown.r, sweepShown.name, logBox.checked);
    logBox.addEventListener('change', draw);
    csvBtn.addEventListener('click', () => sweepShown && download(sweepCsv(sweepShown.r, sweepShown.name), `${slug(sweepShown.name)}-sweep.csv`, 'text/csv'));
    svgBtn.addEventListener('click', () => {
      if (!sweepShown) return;
      const svg = sweepFigure(sweepShown.r, { log: logBox.checked, framework: sweepShown.name, background: '#ffffff', prolog: true }).svg;
      download(svg, `${slug(sweepShown.name)}-sweep${logBox.checked ? '-log' : ''}.svg`, 'image/svg+xml');
    });
    run.addEventListener('click', () => {
      let list: [number, number][];
      let framework;
      try {
        list = parseSweepSizes(sizes.value);
        framework = frameworkOf(app.state.framework);
      } catch (e) {
        sizes.setAttribute('aria-invalid', 'true');
        app.reportError('sweep', e);
        return;
      }
      sizes.removeAttribute('aria-invalid');
      app.message('sweep', null);
      status.textContent = 'running…';
      cancel.hidden = false;
      const gen = generation;
      const name = frameworkTitle(app.state.framework);
      app.client
        .sweep({ framework, sizes: list, bc: app.state.bc, tolerance: app.state.tolerance, solver: app.state.solver, window: app.state.window, strip: app.state.strip }, (fr, st) => (status.textContent = `${st} ${Math.round(fr * 100)} %`))
        .then((r) => {
          status.textContent = '';
          if (gen !== generation) return;
          sweepShown = { r, name };
          csvBtn.disabled = svgBtn.disabled = false;
          draw();
        })
        .catch((e: unknown) => {
          status.textContent = '';
          if (e instanceof RunError && e.error.kind === 'cancelled') status.textContent = 'cancelled';
          else app.reportError('sweep', e);
        })
        .finally(() => (cancel.hidden = true));
    });
    sweepBody.append(
      h('div', { class: 'row' }, h('label', { for: sizesId }, 'sizes'), sizes, run, cancel, status),
      h('p', { class: 'hint', id: helpId }, 'For example 3..6 (squares 3×3 to 6×6), 4x2,6x3,8x4 (rectangles), 3x4..10:2 (a strip: N1 = 3, N2 = 4, 6, 8, 10). Boundary and classification settings are the current ones.'),
      h('div', { class: 'row' }, logBox, h('label', { for: logId }, 'log–log axes'), h('span', { class: 'hint' }, 'export'), csvBtn, svgBtn),
      out,
    );
  };

  const frameworkChanged = () => {
    generation++;
    const hadMap = pm !== null;
    pm = null;
    hideMap();
    clear(pmSummary);
    if (hadMap) pmSummary.append(h('p', { class: 'hint', 'data-testid': 'phasemap-cleared' }, 'The framework changed: compute the map again for this one.'));
    if (pmStatus.textContent === 'computing…' || pmStatus.textContent?.endsWith('%')) pmStatus.textContent = '';
    sweepShown = null;
    for (const b of sweepExports) b.disabled = true;
    if (sweepOut?.firstChild) {
      clear(sweepOut);
      sweepOut.append(h('p', { class: 'hint', 'data-testid': 'sweep-cleared' }, 'The framework changed: run the sweep again for this one.'));
    }
    app.message('phasemap', null);
    app.message('sweep', null);
  };

  const edgesPanel = buildEdgesPanel(app);
  const strainPanel = buildStrainPanel(app);
  const resultChanged = () => {
    // the white dots show the current cells' phases k/N
    if (pm) showPhaseMap();
    edgesPanel.resultChanged();
  };
  app.onResult(resultChanged);
  const el = h('div', { class: 'extras' }, phaseCard, sweepCard, edgesPanel.el, strainPanel.el);
  return {
    el,
    setFeatures,
    frameworkChanged: () => {
      frameworkChanged();
      edgesPanel.frameworkChanged();
      strainPanel.frameworkChanged();
    },
  };
}

const SWEEP_COLUMNS = ['N1', 'N2', 'joints', 'bars', 'flexes', 'trivial', 'selfStresses', 'local', 'line', 'decaying', 'bulk', 'seconds'] as const;

function renderSweep(out: HTMLElement, r: SweepData, name: string, log: boolean): void {
  clear(out);
  const plot = h('div', { class: 'sweep-plot', 'data-testid': 'sweep-plot' });
  // as wide as the panel (never scaled down: the text stays at 13 px)
  const width = Math.max(480, Math.min(900, out.clientWidth || 640));
  plot.innerHTML = sweepFigure(r, { log, framework: name, background: null, prolog: false, idPrefix: 'sweep-view', width, height: Math.round(width * 0.72) }).svg;
  const cell = (row: SweepData['rows'][number], k: (typeof SWEEP_COLUMNS)[number]) => (k === 'seconds' ? row.seconds.toFixed(2) : String(row[k]));
  out.append(
    plot,
    h(
      'table',
      { class: 'sweep-table', 'data-testid': 'sweep-table' },
      h('thead', null, h('tr', null, SWEEP_COLUMNS.map((k) => h('th', null, k === 'selfStresses' ? 'self-stresses' : k)))),
      h('tbody', null, r.rows.map((row) => h('tr', null, SWEEP_COLUMNS.map((k) => h('td', null, cell(row, k)))))),
    ),
    h(
      'p',
      null,
      `Secondary figure, growth with ${r.linearSize} (least-squares slope of ln count against ln N): `,
      Object.entries(r.fits)
        .map(([q, f]) => `${q} ${f.exponent === null ? '—' : `${fmt(f.exponent, 3)}${f.r2 === null ? '' : ` (R² ${fmt(f.r2, 3)})`}`}`)
        .join(' · '),
    ),
  );
  const warnings = r.rows.flatMap((row) => row.warnings.map((w) => `${row.N1}×${row.N2}: ${w}`));
  if (warnings.length) out.append(h('p', { class: 'hint' }, `Warnings: ${warnings.join(' ')}`));
}

/** The map's pixels on the canvas (side P css px, sharp on high-density screens); the SVG over it has the rest. */
function paintPhaseMap(canvas: HTMLCanvasElement, pm: PhaseMapData, P: number): void {
  const dpr = Math.min(3, window.devicePixelRatio || 1);
  canvas.width = Math.round(P * dpr);
  canvas.height = Math.round(P * dpr);
  const ctx = canvas.getContext('2d');
  if (!ctx) return;
  const px = rasterPixels(pm);
  const place = rasterPlacement(pm.grid, canvas.width);
  ctx.imageSmoothingEnabled = false;
  ctx.drawImage(pixelsCanvas(px.size, px.data), place.offset, place.offset, place.side, place.side);
}

/** The zero set in words: charged points, curves and near-zeros (the lines are listed above). */
function zeroSetText(r: PhaseMapData): HTMLElement | null {
  const parts: string[] = [];
  if (r.zeroPoints.length) parts.push(`Zeros with their charge (winding of det Φ around them; ? where undefined): ${r.zeroPoints.map((z) => `(${fmt(z.theta[0], 4)}, ${fmt(z.theta[1], 4)}) ${chargeLabel(z.charge)}`).join(', ')}.`);
  if (r.zeroCurves.length) parts.push(`${r.zeroCurves.length} zero curve${r.zeroCurves.length > 1 ? 's' : ''} (dashed).`);
  if (r.nearZeros.length) parts.push(`Near-zeros, σ small but not zero (rings): ${r.nearZeros.map((z) => `(${fmt(z.theta[0], 4)}, ${fmt(z.theta[1], 4)}) σ ${fmt(z.sigma, 3)}`).join(', ')}.`);
  return parts.length ? h('p', { 'data-testid': 'phasemap-zero-set' }, parts.join(' ')) : null;
}
