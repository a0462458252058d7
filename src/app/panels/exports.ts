/** Export panel: figures (PNG, SVG, GIF), data (JSON, CSV), state file and link. */
import type { App } from '../app.js';
import { h, newId, section } from '../dom.js';
import { LIMITS } from '../state.js';

export interface ExportPanel {
  el: HTMLElement;
  refresh(): void;
  refreshLink(): void;
}

export function buildExportPanel(app: App): ExportPanel {
  const btn = (label: string, testid: string, onclick: () => void, title?: string) => h('button', { type: 'button', 'data-testid': testid, onclick, title }, label);
  const num = (label: string, testid: string, r: { min: number; max: number; integer?: boolean }, get: () => number, set: (v: number) => void) => {
    const id = newId('g');
    const input = h('input', { type: 'number', id, class: 'num', min: r.min, max: r.max, step: r.integer ? 1 : 'any', value: String(get()), 'data-testid': testid });
    const msg = h('div', { class: 'field-msg', role: 'status' });
    input.addEventListener('change', () => {
      const v = Number(input.value);
      const ok = input.value.trim() !== '' && Number.isFinite(v) && v >= r.min && v <= r.max && (!r.integer || Number.isInteger(v));
      input.setAttribute('aria-invalid', String(!ok));
      msg.textContent = ok ? '' : `${label}: give ${r.integer ? 'a whole number' : 'a number'} from ${r.min} to ${r.max}.`;
      if (ok) {
        set(v);
        app.syncHash();
      }
    });
    return { el: h('div', { class: 'field' }, h('label', { for: id }, label), input, msg), input };
  };
  const frames = num('frames', 'gif-frames', LIMITS.gifFrames, () => app.state.gif.frames, (v) => (app.state.gif.frames = v));
  const width = num('width (px)', 'gif-width', LIMITS.gifWidth, () => app.state.gif.width, (v) => (app.state.gif.width = v));
  const period = num('period (s)', 'gif-period', LIMITS.gifPeriod, () => app.state.gif.period, (v) => (app.state.gif.period = v));
  const gifStatus = h('span', { class: 'hint', 'data-testid': 'gif-status', 'aria-live': 'polite' });
  const gifCancel = h('button', { type: 'button', class: 'small', hidden: true, onclick: () => app.cancelGif() }, 'Cancel');
  const gifBtn = btn('GIF of one period', 'export-gif', () => {
    gifBtn.disabled = true;
    gifCancel.hidden = false;
    gifStatus.textContent = 'drawing frames…';
    void app
      .exportGif((f, stage) => (gifStatus.textContent = `${stage} ${Math.round(f * 100)} %`))
      .finally(() => {
        gifBtn.disabled = false;
        gifCancel.hidden = true;
        gifStatus.textContent = '';
      });
  });
  const stateInput = h('input', { type: 'file', accept: '.json,application/json', class: 'visually-hidden', 'data-testid': 'import-state', 'aria-label': 'Open a saved state file' });
  stateInput.addEventListener('change', () => {
    const f = stateInput.files?.[0];
    if (f) void app.openFile(f);
    stateInput.value = '';
  });
  const link = h('input', { type: 'text', readonly: true, class: 'mono', 'data-testid': 'share-url', 'aria-label': 'Link to this view' });
  const copied = h('span', { class: 'hint', 'aria-live': 'polite' });
  const copy = btn('Copy link', 'copy-link', () => {
    refreshLink();
    link.select();
    const done = () => (copied.textContent = 'copied');
    if (navigator.clipboard?.writeText) navigator.clipboard.writeText(link.value).then(done, () => (copied.textContent = 'select the link and copy it'));
    else copied.textContent = 'select the link and copy it';
  });
  const refreshLink = () => {
    link.value = app.shareUrl();
  };
  const el = section(
    'Export',
    h('h3', null, 'Figures'),
    h('div', { class: 'row wrap' }, btn('PNG snapshot', 'export-png', () => app.exportPng(), 'The stage as shown, at twice its pixel size'), btn('SVG figure', 'export-svg', () => app.exportSvg(), 'Vectors: framework, displaced shape, arrows, boundary marks, legend')),
    h('div', { class: 'grid3' }, frames.el, width.el, period.el),
    h('div', { class: 'row' }, gifBtn, gifCancel, gifStatus),
    h('h3', null, 'Data'),
    h('div', { class: 'row wrap' }, btn('Mode data (JSON)', 'export-json', () => app.exportJson()), btn('Counts (CSV)', 'export-csv', () => app.exportCsv())),
    h('h3', null, 'Come back to this view'),
    h('div', { class: 'row wrap' }, btn('Save state', 'export-state', () => app.exportState()), h('button', { type: 'button', onclick: () => stateInput.click() }, 'Open state…'), stateInput),
    h('div', { class: 'row' }, link, copy),
    copied,
  );
  return {
    el,
    refresh() {
      frames.input.value = String(app.state.gif.frames);
      width.input.value = String(app.state.gif.width);
      period.input.value = String(app.state.gif.period);
      refreshLink();
    },
    refreshLink,
  };
}
