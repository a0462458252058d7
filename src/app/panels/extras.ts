/** Further analyses: the phase-torus map of the unit-cell symbol, and the size sweep (when available). */
import type { PhaseMapData, SweepData, WorkerFeatures } from '../../worker/protocol.js';
import type { App } from '../app.js';
import { RunError } from '../client.js';
import { append, clear, fmt, h, newId } from '../dom.js';
import { amplitudeColour, INK } from '../stage/colours.js';
import { frameworkOf } from '../state.js';

export interface ExtrasPanel {
  el: HTMLElement;
  setFeatures(f: WorkerFeatures): void;
  /** Clears the map and the sweep table: they belong to the previous framework. */
  frameworkChanged(): void;
}

export function buildExtrasPanel(app: App): ExtrasPanel {
  // ---- phase map
  const gridId = newId('grid');
  const grid = h('select', { id: gridId, 'data-testid': 'phasemap-grid' }, [16, 24, 32, 48, 64, 96].map((g) => h('option', { value: g, selected: g === 32 }, `${g} × ${g}`)));
  const pmStatus = h('span', { class: 'hint', 'data-testid': 'phasemap-status', 'aria-live': 'polite' });
  const pmCancel = h('button', { type: 'button', class: 'small', hidden: true, onclick: () => void app.client.cancelSpectrum() }, 'Cancel');
  const pmCanvas = h('canvas', { class: 'phasemap', width: 288, height: 288, role: 'img', 'aria-label': 'Phase map of the smallest singular value over the torus of twist phases', 'data-testid': 'phasemap-canvas' });
  const pmSummary = h('div', { class: 'phasemap-summary', 'data-testid': 'phasemap-summary' });
  let pm: PhaseMapData | null = null;
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
        drawPhaseMap(pmCanvas, r);
        summarise(r);
      })
      .catch((e: unknown) => {
        pmStatus.textContent = '';
        if (e instanceof RunError && e.error.kind === 'cancelled') pmStatus.textContent = 'cancelled';
        else app.reportError('phasemap', e);
      })
      .finally(() => (pmCancel.hidden = true));
  });
  pmCanvas.addEventListener('click', (e) => {
    if (!pm) return;
    const r = pmCanvas.getBoundingClientRect();
    const t1 = Math.min(0.999, Math.max(0, (e.clientX - r.left) / r.width));
    const t2 = Math.min(0.999, Math.max(0, 1 - (e.clientY - r.top) / r.height));
    const q = (t: number) => Math.round(t * 1000) / 1000;
    app.state.bc = `twist:${q(t1)},${q(t2)}`;
    app.applyState(app.state, true);
  });
  const summarise = (r: PhaseMapData) => {
    clear(pmSummary);
    append(pmSummary, [
      h('p', null, `Unit-cell symbol Φ(θ): ${r.bars} bars × ${r.dof} columns; generic dim ker Φ = ${r.genericKernel}; colour: log₁₀ of σ_${r.genericKernel + 1}/σ_max, dark = small (the range follows the data, floored at the tolerance). Tolerance ${fmt(r.tolerance.relative)}·σ_max.`),
      r.lines.length
        ? h('ul', null, r.lines.map((l) => h('li', null, `zero line ${l.p}·θ₁ + ${l.q}·θ₂ ≡ ${fmt(l.c, 6)} (mod 1), dim ker ≥ ${l.kernel}, ${l.support} points`)))
        : h('p', null, 'No zero lines found.'),
      r.isolated.length ? h('p', null, `Isolated zeros: ${r.isolated.map((z) => `(${fmt(z.theta[0], 4)}, ${fmt(z.theta[1], 4)})`).join(', ')}`) : null,
      h('p', { class: 'hint' }, 'Click the map to use that point as the twisted boundary rule θ = (θ₁, θ₂) of the supercell.'),
    ]);
  };
  const phaseCard = h(
    'details',
    { class: 'panel extra', 'data-testid': 'phasemap-panel' },
    h('summary', null, h('h2', null, 'Phase map (Bloch phases)')),
    h('div', { class: 'row' }, h('label', { for: gridId }, 'grid'), grid, pmRun, pmCancel, pmStatus),
    h('div', { class: 'phasemap-body' }, pmCanvas, pmSummary),
  );

  // ---- size sweep
  let sweepOut: HTMLElement | null = null;
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
    const sizes = h('input', { type: 'text', id: sizesId, class: 'mono', value: '3,4,5,6', 'data-testid': 'sweep-sizes' });
    const out = h('div', { class: 'sweep-out', 'data-testid': 'sweep-out' });
    sweepOut = out;
    const status = h('span', { class: 'hint', 'aria-live': 'polite' });
    const run = h('button', { type: 'button', class: 'small primary', 'data-testid': 'sweep-run' }, 'Run sweep');
    run.addEventListener('click', () => {
      const list = sizes.value.split(',').map((t) => Number(t.trim()));
      if (!list.length || !list.every((n) => Number.isInteger(n) && n >= 1)) {
        app.message('sweep', { kind: 'error', title: 'Sizes: write whole numbers of cells separated by commas, e.g. 4,6,8' });
        return;
      }
      app.message('sweep', null);
      status.textContent = 'running…';
      const gen = generation;
      app.client
        .sweep({ framework: frameworkOf(app.state.framework), sizes: list.map((n) => [n, n] as [number, number]), bc: app.state.bc, tolerance: app.state.tolerance, solver: app.state.solver, window: app.state.window, strip: app.state.strip }, (fr, st) => (status.textContent = `${st} ${Math.round(fr * 100)} %`))
        .then((r) => {
          status.textContent = '';
          if (gen === generation) renderSweep(out, r);
        })
        .catch((e: unknown) => {
          status.textContent = '';
          app.reportError('sweep', e);
        });
    });
    sweepBody.append(h('div', { class: 'row' }, h('label', { for: sizesId }, 'N×N sizes'), sizes, run, status), out);
  };

  const frameworkChanged = () => {
    generation++;
    const hadMap = pm !== null;
    pm = null;
    pmCanvas.getContext('2d')?.clearRect(0, 0, pmCanvas.width, pmCanvas.height);
    clear(pmSummary);
    if (hadMap) pmSummary.append(h('p', { class: 'hint', 'data-testid': 'phasemap-cleared' }, 'The framework changed: compute the map again for this one.'));
    if (pmStatus.textContent === 'computing…' || pmStatus.textContent?.endsWith('%')) pmStatus.textContent = '';
    if (sweepOut?.firstChild) {
      clear(sweepOut);
      sweepOut.append(h('p', { class: 'hint', 'data-testid': 'sweep-cleared' }, 'The framework changed: run the sweep again for this one.'));
    }
    app.message('phasemap', null);
    app.message('sweep', null);
  };

  const el = h('div', { class: 'extras' }, phaseCard, sweepCard);
  return { el, setFeatures, frameworkChanged };
}

const SWEEP_COLUMNS = ['N1', 'N2', 'joints', 'bars', 'flexes', 'trivial', 'selfStresses', 'local', 'line', 'decaying', 'bulk', 'seconds'] as const;

function renderSweep(out: HTMLElement, r: SweepData): void {
  clear(out);
  const cell = (row: SweepData['rows'][number], k: (typeof SWEEP_COLUMNS)[number]) => (k === 'seconds' ? row.seconds.toFixed(2) : String(row[k]));
  out.append(
    h(
      'table',
      { class: 'sweep-table', 'data-testid': 'sweep-table' },
      h('thead', null, h('tr', null, SWEEP_COLUMNS.map((k) => h('th', null, k === 'selfStresses' ? 'self-stresses' : k)))),
      h('tbody', null, r.rows.map((row) => h('tr', null, SWEEP_COLUMNS.map((k) => h('td', null, cell(row, k)))))),
    ),
    h(
      'p',
      null,
      `Growth with ${r.linearSize} (least-squares slope of ln count against ln N): `,
      Object.entries(r.fits)
        .map(([q, f]) => `${q} ${f.exponent === null ? '—' : `${fmt(f.exponent, 3)}${f.r2 === null ? '' : ` (R² ${fmt(f.r2, 3)})`}`}`)
        .join(' · '),
    ),
  );
  const warnings = r.rows.flatMap((row) => row.warnings.map((w) => `${row.N1}×${row.N2}: ${w}`));
  if (warnings.length) out.append(h('p', { class: 'hint' }, `Warnings: ${warnings.join(' ')}`));
}

/** log₁₀(σ/σ_max) over the torus, dark where small; zero lines drawn on top. */
export function drawPhaseMap(canvas: HTMLCanvasElement, r: PhaseMapData): void {
  const ctx = canvas.getContext('2d');
  if (!ctx) return;
  const W = canvas.width;
  const H = canvas.height;
  const g = r.grid;
  // colour range: from the data's smallest value (not below the tolerance) up to σ_max
  let minLog = 0;
  for (const v of r.sigma1) if (v > 0) minLog = Math.min(minLog, Math.log10(v / (r.sigmaMax || 1)));
  const lo = Math.min(-1, Math.max(Math.log10(Math.max(r.tolerance.relative, 1e-16)), Math.floor(minLog)));
  const img = document.createElement('canvas');
  img.width = g;
  img.height = g;
  const ic = img.getContext('2d')!;
  for (let i2 = 0; i2 < g; i2++)
    for (let i1 = 0; i1 < g; i1++) {
      const s = r.sigma1[i2 * g + i1] / (r.sigmaMax || 1);
      const l = s > 0 ? Math.log10(s) : lo;
      const t = Math.min(1, Math.max(0, (l - lo) / -lo));
      ic.fillStyle = amplitudeColour(1 - t);
      ic.fillRect(i1, g - 1 - i2, 1, 1);
    }
  ctx.imageSmoothingEnabled = false;
  ctx.drawImage(img, 0, 0, W, H);
  ctx.strokeStyle = '#c2410c';
  ctx.lineWidth = 1.5;
  for (const l of r.lines) {
    // points θ with p·θ1 + q·θ2 ≡ c: θ = base + t·(−q, p)/(p² + q²)·… sampled and wrapped
    ctx.beginPath();
    let prev: [number, number] | null = null;
    const N = 600;
    for (let k = 0; k <= N; k++) {
      const t = k / N;
      const nn = l.p * l.p + l.q * l.q;
      const b: [number, number] = [(l.p * l.c) / nn, (l.q * l.c) / nn];
      const span = Math.max(Math.abs(l.p), Math.abs(l.q)) + Math.min(Math.abs(l.p), Math.abs(l.q));
      const x = b[0] - l.q * t * span;
      const y = b[1] + l.p * t * span;
      const fx = x - Math.floor(x);
      const fy = y - Math.floor(y);
      const px = fx * W;
      const py = (1 - fy) * H;
      if (prev && Math.hypot(px - prev[0], py - prev[1]) < W / 4) ctx.lineTo(px, py);
      else ctx.moveTo(px, py);
      prev = [px, py];
    }
    ctx.stroke();
  }
  ctx.fillStyle = '#c2410c';
  for (const z of r.isolated) {
    ctx.beginPath();
    ctx.arc(z.theta[0] * W, (1 - z.theta[1]) * H, 3, 0, 2 * Math.PI);
    ctx.fill();
  }
  ctx.strokeStyle = INK.outline;
  ctx.strokeRect(0.5, 0.5, W - 1, H - 1);
  ctx.fillStyle = INK.text;
  ctx.font = '11px system-ui, sans-serif';
  ctx.fillText('θ₁ →', W - 34, H - 6);
  ctx.save();
  ctx.translate(10, 36);
  ctx.rotate(-Math.PI / 2);
  ctx.fillText('θ₂ →', 0, 0);
  ctx.restore();
}
