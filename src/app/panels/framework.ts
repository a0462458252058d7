/** Framework panel: gallery lattice with parameters, example files, open/save, the JSON editor and a live preview. */
import { InputError, type Problem } from '../../errors.js';
import { GALLERY, galleryEntry } from '../../framework/gallery.js';
import type { Framework } from '../../framework/types.js';
import { parseFramework } from '../../framework/validate.js';
import type { Host } from '../host.js';
import { clear, h, section, sliderField, type NumberControl } from '../dom.js';
import { locate } from '../jsonpath.js';
import { INK } from '../stage/colours.js';
import { frameworkOf, type FrameworkSource } from '../state.js';

/** The invented example frameworks shipped in demos/ (labelled as invented in each file). */
const DEMOS = import.meta.glob('../../../demos/*.json', { query: '?raw', import: 'default', eager: true }) as Record<string, string>;

export interface FrameworkPanel {
  el: HTMLElement;
  refresh(): void;
  setEditorText(text: string): void;
  showInvalidText(text: string, e: unknown): void;
}

function demoName(path: string): string {
  return path.split('/').pop()!.replace(/\.json$/, '');
}

export function buildFrameworkPanel(app: Host): FrameworkPanel {
  const picker = h('select', { id: 'framework-picker', 'data-testid': 'gallery-select' });
  const galleryGroup = h('optgroup', { label: 'Gallery lattices' }, GALLERY.map((e) => h('option', { value: `gallery:${e.name}` }, e.title)));
  const demoGroup = h(
    'optgroup',
    { label: 'Example files (invented)' },
    Object.keys(DEMOS)
      .sort()
      .map((p) => h('option', { value: `demo:${demoName(p)}` }, demoName(p).replace(/-/g, ' '))),
  );
  const fileOption = h('option', { value: 'file', disabled: true }, 'Loaded file');
  const fileGroup = h('optgroup', { label: 'Your file' }, fileOption);
  picker.append(galleryGroup, demoGroup, fileGroup);
  const summary = h('p', { class: 'summary' });
  const params = h('div', { class: 'params' });
  let controls: Record<string, NumberControl> = {};
  const preview = h('canvas', { class: 'preview', width: 520, height: 300, role: 'img', 'aria-label': 'Preview of the unit cell and its neighbours' });

  const fileInput = h('input', { type: 'file', accept: '.json,application/json', class: 'visually-hidden', 'data-testid': 'open-file', 'aria-label': 'Open a framework or state file' });
  fileInput.addEventListener('change', () => {
    const f = fileInput.files?.[0];
    if (f) void app.openFile(f);
    fileInput.value = '';
  });
  const openBtn = h('button', { type: 'button', onclick: () => fileInput.click() }, 'Open file…');
  const saveBtn = h('button', { type: 'button', onclick: () => app.saveFramework(), 'data-testid': 'save-framework' }, 'Save framework');

  // JSON editor
  const editor = h('textarea', { class: 'json-editor', spellcheck: 'false', rows: 14, 'data-testid': 'framework-json', 'aria-label': 'Framework as JSON' });
  const problemsList = h('ul', { class: 'problems', 'data-testid': 'json-problems', 'aria-live': 'polite' });
  const editorStatus = h('div', { class: 'editor-status', role: 'status' });
  const applyBtn = h('button', { type: 'button', class: 'primary small', 'data-testid': 'apply-json' }, 'Use this framework');
  const editorBox = h('details', { class: 'editor' }, h('summary', null, 'Edit as JSON'), editor, editorStatus, problemsList, h('div', { class: 'row' }, applyBtn));
  let validateTimer = 0;
  let editorParsed: Framework | null = null;

  const showProblems = (text: string, problems: Problem[]) => {
    clear(problemsList);
    for (const p of problems) {
      const span = locate(text, p.where);
      const li = h('li', null, span ? h('button', { type: 'button', class: 'link', title: 'Select this place in the editor', onclick: () => selectSpan(span) }, p.where) : h('strong', null, p.where), `: ${p.what}. Fix: ${p.fix}.`);
      problemsList.append(li);
    }
  };
  const selectSpan = (span: [number, number]) => {
    editorBox.open = true;
    editor.focus();
    editor.setSelectionRange(span[0], span[1]);
    // scroll the selection into view: estimate the line
    const line = editor.value.slice(0, span[0]).split('\n').length;
    const lh = parseFloat(getComputedStyle(editor).lineHeight) || 16;
    editor.scrollTop = Math.max(0, (line - 3) * lh);
  };
  const validate = () => {
    const text = editor.value;
    try {
      editorParsed = parseFramework(text, 'the editor');
      clear(problemsList);
      editorStatus.textContent = 'Valid framework.';
      editorStatus.className = 'editor-status ok';
      applyBtn.disabled = false;
    } catch (e) {
      editorParsed = null;
      applyBtn.disabled = true;
      if (e instanceof InputError) {
        editorStatus.textContent = `${e.problems.length} problem${e.problems.length === 1 ? '' : 's'}:`;
        editorStatus.className = 'editor-status bad';
        showProblems(text, e.problems);
      } else {
        editorStatus.textContent = String(e);
      }
    }
  };
  editor.addEventListener('input', () => {
    clearTimeout(validateTimer);
    validateTimer = window.setTimeout(validate, 300);
  });
  applyBtn.addEventListener('click', () => {
    validate();
    if (!editorParsed) return;
    const name = editorParsed.name ?? 'edited framework';
    app.message('file', null);
    app.setFramework({ kind: 'file', framework: editorParsed, fileName: `${name}.json` });
  });

  /** The last loaded or edited file, so that choosing "Loaded: …" again brings it back. */
  let lastFile: FrameworkSource | null = null;
  picker.addEventListener('change', () => {
    const v = picker.value;
    if (v === 'file') {
      if (lastFile) app.setFramework(lastFile);
    } else if (v.startsWith('gallery:')) {
      const entry = galleryEntry(v.slice(8));
      const p: Record<string, number> = {};
      for (const q of entry.params) p[q.key] = q.default;
      app.setFramework({ kind: 'gallery', name: entry.name, params: p });
    } else if (v.startsWith('demo:')) {
      const path = Object.keys(DEMOS).find((k) => demoName(k) === v.slice(5));
      if (path) app.openText(DEMOS[path], `${v.slice(5)}.json`);
    }
  });

  const buildParams = () => {
    clear(params);
    controls = {};
    const src = app.state.framework;
    if (src.kind !== 'gallery') return;
    const entry = galleryEntry(src.name);
    for (const q of entry.params) {
      const c = sliderField({
        label: q.label,
        min: q.min,
        max: q.max,
        step: q.step,
        value: src.params[q.key] ?? q.default,
        unit: q.unit,
        help: q.help,
        testid: `param-${q.key}`,
        onChange: (v) => {
          const s = app.state.framework;
          if (s.kind !== 'gallery') return;
          app.setFramework({ kind: 'gallery', name: s.name, params: { ...s.params, [q.key]: v } });
        },
      });
      controls[q.key] = c;
      params.append(c.el);
    }
  };

  let builtFor = '';
  const refresh = () => {
    const src = app.state.framework;
    if (src.kind === 'gallery') {
      picker.value = `gallery:${src.name}`;
      const entry = galleryEntry(src.name);
      summary.textContent = entry.summary;
      if (builtFor !== src.name) {
        buildParams();
        builtFor = src.name;
      } else for (const q of entry.params) controls[q.key]?.set(src.params[q.key] ?? q.default);
    } else {
      lastFile = src;
      fileOption.disabled = false;
      fileOption.textContent = `Loaded: ${src.framework.name ?? src.fileName}`;
      picker.value = 'file';
      summary.textContent = src.framework.description ?? `From ${src.fileName}.`;
      clear(params);
      builtFor = '';
    }
    let fw: Framework | null = null;
    try {
      fw = frameworkOf(src);
    } catch (e) {
      app.reportError('framework', e);
    }
    if (fw) {
      drawPreview(preview, fw);
      editor.value = JSON.stringify(fw, null, 2);
      editorParsed = fw;
      clear(problemsList);
      editorStatus.textContent = '';
      applyBtn.disabled = false;
    }
  };

  const el = section(
    'Framework',
    h('div', { class: 'field' }, h('label', { for: 'framework-picker' }, 'Lattice or file'), picker),
    summary,
    params,
    preview,
    h('p', { class: 'hint' }, 'Preview: the unit cell (dark) and its neighbours; arrows are the lattice vectors a₁, a₂. Drop a JSON file anywhere to open it.'),
    h('div', { class: 'row' }, openBtn, saveBtn, fileInput),
    editorBox,
  );
  refresh();
  return {
    el,
    refresh,
    setEditorText(text: string) {
      editor.value = text;
    },
    showInvalidText(text: string, e: unknown) {
      editor.value = text;
      editorBox.open = true;
      editorParsed = null;
      applyBtn.disabled = true;
      if (e instanceof InputError) {
        editorStatus.textContent = `${e.problems.length} problem${e.problems.length === 1 ? '' : 's'} in the loaded file (the previous framework is still in use):`;
        editorStatus.className = 'editor-status bad';
        showProblems(text, e.problems);
      } else editorStatus.textContent = e instanceof Error ? e.message : String(e);
    },
  };
}

/** The unit cell and its 8 neighbours, bars of cell (0, 0) dark. */
export function drawPreview(canvas: HTMLCanvasElement, fw: Framework): void {
  const cssW = canvas.clientWidth;
  if (cssW === 0) {
    // not laid out yet
    requestAnimationFrame(() => {
      if (canvas.clientWidth > 0) drawPreview(canvas, fw);
    });
    return;
  }
  const dpr = Math.min(2, window.devicePixelRatio || 1);
  const W = cssW;
  const H = Math.round(cssW * 0.62);
  canvas.width = Math.round(W * dpr);
  canvas.height = Math.round(H * dpr);
  const ctx = canvas.getContext('2d');
  if (!ctx) return;
  ctx.setTransform(dpr, 0, 0, dpr, 0, 0);
  ctx.fillStyle = INK.background;
  ctx.fillRect(0, 0, W, H);
  const [a1, a2] = fw.lattice;
  const site = new Map(fw.joints.map((j) => [j.id, j.at]));
  const pos = (at: [number, number], i: number, j: number): [number, number] => [at[0] + i * a1[0] + j * a2[0], at[1] + i * a1[1] + j * a2[1]];
  const segs: { a: [number, number]; b: [number, number]; home: boolean }[] = [];
  const pts: [number, number][] = [];
  for (let i = -1; i <= 1; i++)
    for (let j = -1; j <= 1; j++) {
      for (const jt of fw.joints) pts.push(pos(jt.at, i, j));
      for (const b of fw.bars) {
        const f = site.get(b.from);
        const t = site.get(b.to);
        if (!f || !t) continue;
        segs.push({ a: pos(f, i, j), b: pos(t, i + b.shift[0], j + b.shift[1]), home: i === 0 && j === 0 });
      }
    }
  let minX = Infinity;
  let maxX = -Infinity;
  let minY = Infinity;
  let maxY = -Infinity;
  for (const p of pts) {
    minX = Math.min(minX, p[0]);
    maxX = Math.max(maxX, p[0]);
    minY = Math.min(minY, p[1]);
    maxY = Math.max(maxY, p[1]);
  }
  const k = Math.min((W - 30) / Math.max(1e-9, maxX - minX), (H - 30) / Math.max(1e-9, maxY - minY));
  const cx = (minX + maxX) / 2;
  const cy = (minY + maxY) / 2;
  const sc = (p: [number, number]): [number, number] => [W / 2 + (p[0] - cx) * k, H / 2 - (p[1] - cy) * k];
  ctx.lineCap = 'round';
  for (const home of [false, true]) {
    ctx.strokeStyle = home ? INK.bar : INK.rest;
    ctx.lineWidth = home ? 2.2 : 1.4;
    ctx.beginPath();
    for (const s of segs.filter((x) => x.home === home)) {
      const a = sc(s.a);
      const b = sc(s.b);
      ctx.moveTo(a[0], a[1]);
      ctx.lineTo(b[0], b[1]);
    }
    ctx.stroke();
  }
  ctx.fillStyle = INK.joint;
  ctx.strokeStyle = INK.outline;
  ctx.lineWidth = 1.2;
  for (const p of pts) {
    const [x, y] = sc(p);
    ctx.beginPath();
    ctx.arc(x, y, 3, 0, 2 * Math.PI);
    ctx.fill();
    ctx.stroke();
  }
  // lattice vectors from the origin
  ctx.strokeStyle = INK.marker;
  ctx.fillStyle = INK.marker;
  ctx.lineWidth = 1.6;
  const o = sc([0, 0]);
  for (const [v, label] of [
    [a1, 'a₁'],
    [a2, 'a₂'],
  ] as const) {
    const e = sc([v[0], v[1]]);
    const dx = e[0] - o[0];
    const dy = e[1] - o[1];
    const len = Math.hypot(dx, dy) || 1;
    ctx.beginPath();
    ctx.moveTo(o[0], o[1]);
    ctx.lineTo(e[0], e[1]);
    ctx.stroke();
    ctx.beginPath();
    ctx.moveTo(e[0], e[1]);
    ctx.lineTo(e[0] - (dx / len) * 8 - (dy / len) * 4, e[1] - (dy / len) * 8 + (dx / len) * 4);
    ctx.lineTo(e[0] - (dx / len) * 8 + (dy / len) * 4, e[1] - (dy / len) * 8 - (dx / len) * 4);
    ctx.closePath();
    ctx.fill();
    ctx.font = '13px system-ui, sans-serif';
    ctx.fillText(label, e[0] + 4, e[1] - 4);
  }
}

