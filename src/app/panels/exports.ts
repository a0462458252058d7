/**
 * Export panel: figures (PNG, SVG, GIF) at a chosen size and resolution, the drawn motion
 * (superposition of two flexes, rigid motions removed), data (JSON, CSV), state file and link.
 */
import { InputError } from '../../errors.js';
import { checkbox, h, newId, section, select } from '../dom.js';
import { captionLines, checkFigureSize, fileStem, figurePixels, recipeIsPlain, wrapLines, type MotionRecipe } from '../export/compose.js';
import { countsCsv, modesJson } from '../export/data.js';
import { download } from '../export/download.js';
import { captionHeight, type FigureSpec } from '../export/figure.js';
import { encodeGif } from '../export/gif.js';
import { figureCanvas } from '../export/paint2d.js';
import { svgFigure } from '../export/svg.js';
import type { Host } from '../host.js';
import { fieldOf, stressForceValues, viewFor } from '../stage/scene.js';
import { figureSizeRange, LIMITS, type FigureState, type Range } from '../state.js';

export interface ExportPanel {
  el: HTMLElement;
  refresh(): void;
  refreshLink(): void;
}

/** Caption text: 12 px lines at about 6.6 px per character. */
const CHAR_WIDTH = 6.6;

export function buildExportPanel(app: Host): ExportPanel {
  const btn = (label: string, testid: string, onclick: () => void, title?: string) => h('button', { type: 'button', 'data-testid': testid, onclick, title }, label);
  /** A number field of the state; `range` may change (figure sizes follow the unit), `unit` is named in the message. */
  const num = (label: string, testid: string, range: Range | (() => Range), get: () => number, set: (v: number) => void, unit: () => string = () => '') => {
    const id = newId('g');
    const rangeNow = () => (typeof range === 'function' ? range() : range);
    const r0 = rangeNow();
    const input = h('input', { type: 'number', id, class: 'num', min: r0.min, max: r0.max, step: r0.integer ? 1 : 'any', value: String(get()), 'data-testid': testid });
    const msg = h('div', { class: 'field-msg', role: 'status' });
    input.addEventListener('change', () => {
      const r = rangeNow();
      const v = Number(input.value);
      const ok = input.value.trim() !== '' && Number.isFinite(v) && v >= r.min && v <= r.max && (!r.integer || Number.isInteger(v));
      input.setAttribute('aria-invalid', String(!ok));
      msg.textContent = ok ? '' : `${label}: give ${r.integer ? 'a whole number' : 'a number'} from ${r.min} to ${r.max}${unit() ? ` ${unit()}` : ''}.`;
      if (ok) {
        set(v);
        app.syncHash();
      }
    });
    return { el: h('div', { class: 'field' }, h('label', { for: id }, label), input, msg), input, msg };
  };

  // ---- figure settings: part of the state (state files and links), so always read through
  // app.state (opening a state file or a link replaces the whole state object)
  const fig = (): FigureState => app.state.figure;
  const sizeNote = h('p', { class: 'hint', 'data-testid': 'figure-pixels', 'aria-live': 'polite' });
  const showPixels = () => {
    const f = fig();
    const { pixels } = figurePixels(f);
    sizeNote.textContent = `${pixels[0]} × ${pixels[1]} pixels${f.unit === 'mm' ? ` (${f.width} × ${f.height} mm at ${f.dpi} dpi)` : ` at ${f.dpi} dpi (text and lines ×${(f.dpi / 96).toFixed(2)})`}`;
  };
  const sizeRange = () => figureSizeRange(fig().unit);
  const unitName = () => (fig().unit === 'mm' ? 'mm' : 'px');
  const fw = num('width', 'figure-width', sizeRange, () => fig().width, (v) => ((fig().width = v), showPixels()), unitName);
  const fh = num('height', 'figure-height', sizeRange, () => fig().height, (v) => ((fig().height = v), showPixels()), unitName);
  const dpi = num('dpi', 'figure-dpi', LIMITS.figureDpi, () => fig().dpi, (v) => ((fig().dpi = v), showPixels()));
  const unit = select<'px' | 'mm'>(
    'unit',
    [
      { value: 'px', label: 'pixels' },
      { value: 'mm', label: 'millimetres' },
    ],
    fig().unit,
    (u) => {
      // keep the physical size: convert at the current dpi; a size the new unit does not allow
      // (e.g. 64 px at 1200 dpi is 1.4 mm) is brought to the nearest allowed one, and said so
      const f = fig();
      const k = u === 'mm' ? 25.4 / f.dpi : f.dpi / 25.4;
      const r = figureSizeRange(u);
      const notes: [typeof fw, string][] = [];
      for (const [key, field] of [['width', fw], ['height', fh]] as const) {
        const x = Math.round(f[key] * k * 10) / 10;
        const c = Math.min(r.max, Math.max(r.min, x));
        if (c !== x) notes.push([field, `${key}: ${x} ${u} is outside ${r.min} to ${r.max} ${u}; set to ${c} ${u}.`]);
        f[key] = c;
      }
      f.unit = u;
      showFigure();
      for (const [field, text] of notes) field.msg.textContent = text;
      app.syncHash();
    },
    'figure-unit',
  );
  const transparent = checkbox('transparent background (PNG, SVG)', fig().transparent, (v) => ((fig().transparent = v), app.syncHash()), 'figure-transparent');
  const caption = checkbox('caption (setup and phase)', fig().caption, (v) => ((fig().caption = v), app.syncHash()), 'figure-caption');
  const caution = checkbox('short caution in the caption', fig().caution, (v) => ((fig().caution = v), app.syncHash()), 'figure-caution');
  const arrowScale = num('arrows ×', 'figure-arrow-scale', LIMITS.figureScale, () => fig().arrowScale, (v) => (fig().arrowScale = v));
  const lineScale = num('lines ×', 'figure-line-scale', LIMITS.figureScale, () => fig().lineScale, (v) => (fig().lineScale = v));
  /** The controls show the state's figure (after a state file or link is opened; an input being edited is left alone). */
  const showFigure = () => {
    const f = fig();
    const r = figureSizeRange(f.unit);
    for (const field of [fw, fh]) {
      field.input.min = String(r.min);
      field.input.max = String(r.max);
    }
    const values: [typeof fw, number][] = [
      [fw, f.width],
      [fh, f.height],
      [dpi, f.dpi],
      [arrowScale, f.arrowScale],
      [lineScale, f.lineScale],
    ];
    for (const [field, v] of values) {
      if (field.input === document.activeElement && Number(field.input.value) !== v) continue;
      field.input.value = String(v);
      field.input.setAttribute('aria-invalid', 'false');
      field.msg.textContent = '';
    }
    unit.input.value = f.unit;
    transparent.input.checked = f.transparent;
    caption.input.checked = f.caption;
    caution.input.checked = f.caution;
    showPixels();
  };
  showPixels();

  // ---- the drawn motion
  const recipe = (): MotionRecipe => app.recipe;
  const mixMsg = h('div', { class: 'field-msg', role: 'status', 'data-testid': 'mix-message' });
  const mixB = h('input', { type: 'number', class: 'num', min: 0, step: 1, placeholder: 'none', 'data-testid': 'mix-b', 'aria-label': 'Second flex (index in the list; empty for none)' });
  const mixWa = h('input', { type: 'number', class: 'num', step: 'any', value: '1', 'data-testid': 'mix-wa', 'aria-label': 'Weight of the selected flex' });
  const mixWb = h('input', { type: 'number', class: 'num', step: 'any', value: '1', 'data-testid': 'mix-wb', 'aria-label': 'Weight of the second flex' });
  const applyMix = () => {
    const problems: { where: string; what: string; fix: string }[] = [];
    const n = app.result?.modes.length ?? 0;
    const bText = mixB.value.trim();
    const b = bText === '' ? null : Number(bText);
    if (b !== null && (!Number.isInteger(b) || b < 0 || b >= n)) problems.push({ where: 'second flex', what: `"${bText}" is not a flex of the list (there are ${n})`, fix: n ? `give a whole number from 0 to ${n - 1}, or leave it empty` : 'run an analysis with flexes first' });
    const wa = Number(mixWa.value);
    const wb = Number(mixWb.value);
    if (mixWa.value.trim() === '' || !Number.isFinite(wa)) problems.push({ where: 'weight of the selected flex', what: `"${mixWa.value}" is not a number`, fix: 'give a number, e.g. 1' });
    if (mixWb.value.trim() === '' || !Number.isFinite(wb)) problems.push({ where: 'weight of the second flex', what: `"${mixWb.value}" is not a number`, fix: 'give a number, e.g. 0.5' });
    for (const [el, bad] of [[mixB, problems.some((p) => p.where === 'second flex')], [mixWa, problems.some((p) => p.where.startsWith('weight of the selected'))], [mixWb, problems.some((p) => p.where.startsWith('weight of the second'))]] as const) el.setAttribute('aria-invalid', String(bad));
    if (problems.length) {
      mixMsg.textContent = problems.map((p) => `${p.where}: ${p.what}; ${p.fix}.`).join(' ');
      app.reportError('mix', new InputError('The superposition cannot be drawn:', problems));
      return;
    }
    mixMsg.textContent = '';
    app.message('mix', null);
    app.setRecipe({ ...recipe(), b, wa, wb: b === null ? 0 : wb });
  };
  for (const el of [mixB, mixWa, mixWb]) el.addEventListener('change', applyMix);
  const project = checkbox('remove the rigid motions the boundary allows', false, (v) => app.setRecipe({ ...recipe(), projectRigid: v }), 'project-rigid');
  const rigidNote = h('p', { class: 'hint', 'data-testid': 'rigid-note' });
  const refreshRigid = () => {
    const r = app.result;
    const names = r?.rigid.map((m) => m.name) ?? [];
    rigidNote.textContent = !r ? '' : names.length ? `Allowed rigid motions here: ${names.join(', ')} (projected out of the drawn flex when ticked).` : 'This boundary allows no rigid motion: nothing to remove.';
  };

  // ---- figures
  const requireResult = (what: string) => {
    const src = app.figureSource();
    if (!src) app.message('export', { kind: 'error', title: `Nothing to export as ${what} yet: run an analysis first.` });
    return src;
  };
  const sizeOk = () => {
    const problems = checkFigureSize(fig());
    if (!problems.length) return true;
    app.reportError('export', new InputError('The figure size cannot be used:', problems));
    return false;
  };

  /** The figure at a layout size (css px); `turns` null: the stage's phase. */
  const figure = (layoutW: number, layoutH: number, turns: number | null): FigureSpec | null => {
    const src = app.figureSource();
    if (!src) return null;
    const { result: r, state, model } = src;
    const v = state.view;
    const t = turns ?? src.turns;
    const stress = v.show === 'stress' && r.stresses[v.stress] ? stressForceValues(r.stresses[v.stress], r.geometry) : null;
    const motion = stress ? null : app.drawnMotion();
    const field = motion ? fieldOf(model, motion, v.amplitude) : null;
    const rc = recipe();
    const lines = captionLines({ result: r, resultState: src.resultState, view: v, recipe: rc }, { caption: fig().caption, caution: fig().caution, turns: field ? t : null });
    const caption = wrapLines(lines, layoutW - 24, CHAR_WIDTH);
    const drawH = Math.max(32, layoutH - captionHeight(caption.length));
    return {
      model,
      field,
      stress,
      turns: t,
      arrows: v.arrows,
      colour: v.colour,
      rest: v.rest,
      view: viewFor(model, layoutW, drawH, src.zoom, src.centre),
      caption,
      legend: stress ? { kind: 'stress', title: 'bar tension (self-stress)' } : field && v.colour ? { kind: 'amplitude', title: 'joint amplitude |u| / max |u|' } : null,
      background: fig().transparent ? null : undefined,
      lineScale: fig().lineScale,
      arrowScale: fig().arrowScale,
    };
  };
  const stem = () => {
    const src = app.figureSource();
    return src ? fileStem(src.resultState, src.state.view, recipe()) : 'figure';
  };
  const exportPng = () => {
    if (!requireResult('PNG') || !sizeOk()) return;
    const { layout, scale } = figurePixels(fig());
    const f = figure(layout[0], layout[1], null)!;
    const canvas = figureCanvas(f, scale);
    const name = `${stem()}.png`;
    canvas.toBlob((blob) => {
      if (blob) download(blob, name, 'image/png');
      else app.message('export', { kind: 'error', title: 'The PNG could not be made (the browser returned no image).' });
    }, 'image/png');
    app.message('export', null);
  };
  const exportSvg = () => {
    const src = requireResult('SVG');
    if (!src || !sizeOk()) return;
    const { layout } = figurePixels(fig());
    const f = figure(layout[0], layout[1], null)!;
    if (fig().unit === 'mm') f.outerSize = [`${fig().width}mm`, `${fig().height}mm`];
    const rc = recipe();
    const setup = captionLines({ result: src.result, resultState: src.resultState, view: src.state.view, recipe: rc }, { caption: true, caution: true, turns: null });
    const title = setup[0].split(';')[0];
    download(svgFigure(f, title, `${setup[0]}. Drawn by shimmy. ${setup[1].replace(/^shimmy — /, '')}`), `${stem()}.svg`, 'image/svg+xml');
    app.message('export', null);
  };

  let gifAbort: AbortController | null = null;
  const gifCaptions = h('span', { hidden: true, 'data-testid': 'gif-captions' });
  const exportGif = async (onProgress: (f: number, stage: 'drawing' | 'encoding') => void) => {
    if (!requireResult('GIF')) return;
    gifAbort?.abort();
    const abort = new AbortController();
    gifAbort = abort;
    const g = app.state.gif;
    const width = g.width;
    // the figure's aspect, not the window's
    const height = Math.max(32, Math.round((width * fig().height) / Math.max(1e-9, fig().width)));
    const captions: string[] = [];
    const name = `${stem()}.gif`;
    try {
      const blob = await encodeGif(
        (t) => {
          const f = figure(width, height, t)!;
          captions.push(f.caption.join(' '));
          return f;
        },
        { frames: g.frames, period: g.period, onProgress, signal: abort.signal },
      );
      if (abort.signal.aborted) return;
      gifCaptions.dataset.captions = JSON.stringify(captions);
      download(blob, name, 'image/gif');
      app.message('export', null);
    } catch (e) {
      if (!abort.signal.aborted) app.reportError('export', e, 'The GIF could not be made');
    } finally {
      if (gifAbort === abort) gifAbort = null;
    }
  };

  // ---- data
  const exportJson = () => {
    const src = requireResult('JSON');
    if (!src) return;
    download(modesJson(src.result, src.resultState), `${fileStem(src.resultState, src.state.view)}-modes.json`, 'application/json');
    app.message('export', null);
  };
  const exportCsv = () => {
    const src = requireResult('CSV');
    if (!src) return;
    download(countsCsv(src.result, src.resultState), `${fileStem(src.resultState, src.state.view)}-counts.csv`, 'text/csv');
    app.message('export', null);
  };
  /** The drawn motion: the flex (or weighted sum) as drawn, rigid motions removed when asked. */
  const exportDrawn = () => {
    const src = requireResult('the drawn motion');
    if (!src) return;
    const u = app.drawnMotion();
    if (!u) {
      app.message('export', { kind: 'error', title: 'No flex is drawn (a self-stress or nothing is shown): select a flex first.' });
      return;
    }
    const rc = recipe();
    const doc = {
      format: 'shimmy drawn motion',
      flex: src.state.view.flex,
      weight: rc.wa,
      second: rc.b === null ? null : { flex: rc.b, weight: rc.wb },
      rigidRemoved: rc.projectRigid ? src.result.rigid.map((m) => m.name) : [],
      plain: recipeIsPlain(rc),
      joints: u.re.length / 2,
      velocity: { re: Array.from(u.re), im: u.im ? Array.from(u.im) : null },
      note: 'u = weight·flex + second.weight·second.flex (vectors of the mode data file, not normalised), minus its projection on the listed rigid motions; 2 entries per joint (x, y)',
    };
    download(JSON.stringify(doc, null, 1) + '\n', `${stem()}-drawn.json`, 'application/json');
    app.message('export', null);
  };

  // ---- GIF controls
  const frames = num('frames', 'gif-frames', LIMITS.gifFrames, () => app.state.gif.frames, (v) => (app.state.gif.frames = v));
  const width = num('width (px)', 'gif-width', LIMITS.gifWidth, () => app.state.gif.width, (v) => (app.state.gif.width = v));
  const period = num('period (s)', 'gif-period', LIMITS.gifPeriod, () => app.state.gif.period, (v) => (app.state.gif.period = v));
  const gifStatus = h('span', { class: 'hint', 'data-testid': 'gif-status', 'aria-live': 'polite' });
  const gifCancel = h('button', { type: 'button', class: 'small', hidden: true, onclick: () => (gifAbort?.abort(), (gifAbort = null)) }, 'Cancel');
  const gifBtn = btn('GIF of one period', 'export-gif', () => {
    gifBtn.disabled = true;
    gifCancel.hidden = false;
    gifStatus.textContent = 'drawing frames…';
    void exportGif((f, stage) => (gifStatus.textContent = `${stage} ${Math.round(f * 100)} %`)).finally(() => {
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
    h('div', { class: 'row wrap' }, btn('PNG image', 'export-png', exportPng, 'The figure at the size and resolution below'), btn('SVG figure', 'export-svg', exportSvg, 'Vectors: framework, displaced shape, arrows, boundary marks, legend')),
    h('details', { class: 'figure-settings', 'data-testid': 'figure-settings' },
      h('summary', null, 'Size, background, caption, strokes'),
      h('div', { class: 'grid3' }, fw.el, fh.el, unit.el),
      h('div', { class: 'grid3' }, dpi.el, arrowScale.el, lineScale.el),
      sizeNote,
      transparent.el,
      caption.el,
      caution.el,
      h('p', { class: 'hint' }, 'The size does not depend on the window; these settings are saved with the state and carried by the link. The caution about first-order motions stays in the app and the README; tick it to print it in the figure too.'),
    ),
    h('div', { class: 'grid3' }, frames.el, width.el, period.el),
    h('div', { class: 'row' }, gifBtn, gifCancel, gifStatus, gifCaptions),
    h('h3', null, 'Drawn flex'),
    h('div', { class: 'row wrap mix' }, h('span', null, 'selected ×'), mixWa, h('span', null, '+'), mixWb, h('span', null, '× flex'), mixB),
    mixMsg,
    project.el,
    rigidNote,
    h('h3', null, 'Data'),
    h('div', { class: 'row wrap' }, btn('Mode data (JSON)', 'export-json', exportJson), btn('Counts (CSV)', 'export-csv', exportCsv), btn('Drawn flex (JSON)', 'export-drawn', exportDrawn, 'The velocities as drawn: superposition, rigid motions removed')),
    h('h3', null, 'Come back to this view'),
    h('div', { class: 'row wrap' }, btn('Save state', 'export-state', () => app.exportState()), h('button', { type: 'button', onclick: () => stateInput.click() }, 'Open state…'), stateInput),
    h('div', { class: 'row' }, link, copy),
    copied,
  );
  app.onResult(refreshRigid);
  return {
    el,
    refresh() {
      frames.input.value = String(app.state.gif.frames);
      width.input.value = String(app.state.gif.width);
      period.input.value = String(app.state.gif.period);
      showFigure();
      refreshLink();
    },
    refreshLink,
  };
}
