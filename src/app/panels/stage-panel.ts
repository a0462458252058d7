/** The stage panel: animation controls, the pixi canvas host, the colour legend. */
import { describeBoundary, parseBoundary } from '../../supercell/boundary.js';
import type { Host } from '../host.js';
import { checkbox, h, select, sliderField } from '../dom.js';
import { AMPLITUDE_GRADIENT, STRESS_GRADIENT } from '../stage/colours.js';
import { jointVelocity, nearestJoint } from '../export/compose.js';
import { computeFrame, fieldOf, newFrame, toScreen, toWorldPoint, type ArrowMode } from '../stage/scene.js';
import type { Stage } from '../stage/stage.js';
import { LIMITS } from '../state.js';
import { modeSummary } from './results.js';

export interface StagePanel {
  el: HTMLElement;
  host: HTMLElement;
  attach(stage: Stage): void;
  refresh(): void;
  refreshLegend(): void;
  showPhase(turns: number): void;
  /** Text shown on the empty stage (before the first result). */
  setEmpty(text: string): void;
  /** The selection or the drawn flex changed: the joint readout follows. */
  selectionChanged(): void;
  /** Where joint k is drawn now (css px from the canvas's top left), or null. */
  jointOnScreen(k: number): [number, number] | null;
}

/** A click picks the nearest joint within this many css px. */
const PICK_RADIUS = 14;

export function buildStagePanel(app: Host): StagePanel {
  const v = () => app.state.view;
  let stage: Stage | null = null;
  const play = h('button', { type: 'button', class: 'primary small', 'data-testid': 'play', 'aria-pressed': 'true', onclick: () => app.togglePlay() }, 'Pause');
  const back = h('button', { type: 'button', class: 'small', 'data-testid': 'step-back', title: 'Step back 1/32 period', 'aria-label': 'Step back', onclick: () => app.stepPhase(-1) }, '◀');
  const fwd = h('button', { type: 'button', class: 'small', 'data-testid': 'step', title: 'Step forward 1/32 period', 'aria-label': 'Step forward', onclick: () => app.stepPhase(1) }, '▶');
  const phase = h('span', { class: 'phase mono', 'data-testid': 'phase', 'aria-live': 'off' }, 'φ/2π = 0.000');
  const amp = sliderField({
    label: 'amplitude',
    min: 0,
    max: LIMITS.amplitude.max,
    step: 0.01,
    value: v().amplitude,
    unit: 'bar lengths',
    compact: true,
    help: 'Largest joint displacement drawn, in median bar lengths (a first-order motion: large amplitudes stretch bars).',
    testid: 'amplitude',
    onChange: (x) => {
      v().amplitude = x;
      app.viewChanged();
    },
  });
  const speed = sliderField({
    label: 'speed',
    min: LIMITS.speed.min,
    max: LIMITS.speed.max,
    step: 0.05,
    value: v().speed,
    unit: 'periods/s',
    compact: true,
    help: 'Animation periods per second.',
    testid: 'speed',
    onChange: (x) => {
      v().speed = x;
      app.viewChanged();
    },
  });
  const arrows = select<ArrowMode>(
    'arrows',
    [
      { value: 'none', label: 'no arrows' },
      { value: 'velocity', label: 'velocity' },
      { value: 'displacement', label: 'displacement' },
    ],
    v().arrows,
    (x) => {
      v().arrows = x;
      app.viewChanged();
    },
    'arrows',
  );
  const colour = checkbox('colour joints by amplitude', v().colour, (x) => {
    v().colour = x;
    app.viewChanged();
  }, 'colour-joints');
  const rest = checkbox('show rest shape', v().rest, (x) => {
    v().rest = x;
    app.viewChanged();
  }, 'show-rest');
  const fit = h('button', { type: 'button', class: 'small', 'data-testid': 'fit', onclick: () => stage?.fit() }, 'Fit');
  const zin = h('button', { type: 'button', class: 'small', 'aria-label': 'Zoom in', onclick: () => stage?.zoomBy(1.25) }, '+');
  const zout = h('button', { type: 'button', class: 'small', 'aria-label': 'Zoom out', onclick: () => stage?.zoomBy(0.8) }, '−');

  const host = h('div', { class: 'stage-host', tabindex: '0', 'data-testid': 'stage', 'aria-label': 'Stage: drag to pan, wheel or + and − to zoom, 0 or double-click to fit' });
  host.addEventListener('keydown', (e) => {
    if (e.key === '+' || e.key === '=') stage?.zoomBy(1.25);
    else if (e.key === '-') stage?.zoomBy(0.8);
    else if (e.key === '0') stage?.fit();
  });
  const legend = h('div', { class: 'legend', 'data-testid': 'legend', hidden: true });
  const readout = h('div', { class: 'joint-readout mono', 'data-testid': 'joint-readout', 'aria-live': 'polite', hidden: true });
  /** The joint whose velocity the readout shows. */
  let picked: number | null = null;
  /** Joint positions as drawn now (world units), with the view; null without a drawn flex. */
  const drawnJoints = () => {
    const src = app.figureSource();
    const view = stage?.view();
    if (!src || !view) return null;
    const u = app.drawnMotion();
    const field = u ? fieldOf(src.model, u, app.state.view.amplitude) : null;
    return { frame: computeFrame(src.model, field, src.turns, 'none', newFrame(src.model)), view };
  };
  const jointOnScreen = (k: number): [number, number] | null => {
    const d = drawnJoints();
    if (!d || k < 0 || 2 * k + 1 >= d.frame.joints.length) return null;
    return toScreen(d.view, d.frame.joints[2 * k], d.frame.joints[2 * k + 1]);
  };
  const showReadout = () => {
    const r = app.result;
    const u = app.drawnMotion();
    if (picked === null || !r || !u || 2 * picked + 1 >= u.re.length) {
      readout.hidden = true;
      readout.textContent = '';
      for (const k of ['joint', 'uxRe', 'uxIm', 'uyRe', 'uyIm']) delete readout.dataset[k];
      return;
    }
    const jv = jointVelocity(u, picked);
    const g = r.geometry;
    const c = (z: [number, number]) => (z[1] === 0 ? z[0].toPrecision(6) : `${z[0].toPrecision(6)} ${z[1] < 0 ? '−' : '+'} ${Math.abs(z[1]).toPrecision(6)}i`);
    readout.hidden = false;
    readout.textContent = `joint ${picked} (cell ${g.jointCells[2 * picked]}, ${g.jointCells[2 * picked + 1]}; site ${picked % g.sites}): u = (${c(jv.ux)}, ${c(jv.uy)}), |u| = ${jv.norm.toPrecision(6)}, ${(100 * jv.relative).toFixed(1)} % of the largest`;
    Object.assign(readout.dataset, { joint: String(picked), uxRe: String(jv.ux[0]), uxIm: String(jv.ux[1]), uyRe: String(jv.uy[0]), uyIm: String(jv.uy[1]) });
  };
  // a new result may have other joints: the readout starts empty
  app.onResult(() => (picked = null));
  // a click (not a drag) on the stage reads the velocity of the nearest joint
  let down: [number, number] | null = null;
  host.addEventListener('pointerdown', (e) => (down = [e.clientX, e.clientY]));
  host.addEventListener('pointerup', (e) => {
    const start = down;
    down = null;
    if (!start || Math.hypot(e.clientX - start[0], e.clientY - start[1]) > 4) return;
    const d = drawnJoints();
    if (!d || !app.drawnMotion()) return;
    const box = (host.querySelector('canvas') ?? host).getBoundingClientRect();
    const [x, y] = toWorldPoint(d.view, e.clientX - box.left, e.clientY - box.top);
    picked = nearestJoint(d.frame.joints, x, y, PICK_RADIUS / d.view.scale);
    showReadout();
  });
  const info = h('div', { class: 'stage-info', 'data-testid': 'stage-info' });
  const empty = h('div', { class: 'stage-empty' }, 'Computing the demo…');
  const frame = h('div', { class: 'stage-frame' }, host, empty);

  const toolbar = h(
    'div',
    { class: 'toolbar', role: 'toolbar', 'aria-label': 'Animation and view' },
    h('div', { class: 'tool-row' }, h('div', { class: 'tool-group' }, back, play, fwd, phase), h('div', { class: 'tool-group grow' }, amp.el), h('div', { class: 'tool-group' }, zout, fit, zin)),
    h('div', { class: 'tool-row' }, h('div', { class: 'tool-group grow' }, speed.el), h('div', { class: 'tool-group' }, arrows.el), h('div', { class: 'tool-group checks' }, colour.el, rest.el)),
  );

  const gradient = (stops: readonly string[]) => `linear-gradient(to right, ${stops.join(', ')})`;
  const refreshLegend = () => {
    const r = app.result;
    empty.hidden = !!r;
    if (!r) return;
    const vs = v();
    const showStress = vs.show === 'stress' && r.stresses[vs.stress];
    const mode = !showStress ? r.modes[vs.flex] : undefined;
    legend.replaceChildren();
    if (showStress) {
      legend.hidden = false;
      legend.append(
        h('div', { class: 'legend-title' }, 'bar force of the self-stress (colour and width)'),
        h('div', { class: 'legend-bar', style: `background:${gradient(STRESS_GRADIENT)}` }),
        h('div', { class: 'legend-ends' }, h('span', null, 'compression'), h('span', null, 'tension')),
        h('div', { class: 'legend-widths', 'aria-hidden': 'true' }, h('span', { class: 'legend-width thin' }), h('span', null, 'no force'), h('span', { class: 'legend-width thick' }), h('span', null, 'largest |force|')),
        h('div', { class: 'legend-note' }, 'force scaled to the largest; the overall sign of a self-stress is arbitrary'),
      );
    } else if (mode && vs.colour) {
      legend.hidden = false;
      legend.append(h('div', { class: 'legend-title' }, 'joint amplitude |u| / max |u|'), h('div', { class: 'legend-bar', style: `background:${gradient(AMPLITUDE_GRADIENT)}` }), h('div', { class: 'legend-ends' }, h('span', null, '0'), h('span', null, '0.5'), h('span', null, '1')));
    } else legend.hidden = true;
    let bc = r.geometry.bc;
    try {
      bc = describeBoundary(parseBoundary(r.geometry.bc));
    } catch {
      // keep the text
    }
    const what = showStress
      ? `self-stress #${vs.stress} of ${r.stresses.length}${r.stresses[vs.stress].class ? ` · ${r.stresses[vs.stress].class}` : ''}`
      : mode
        ? `flex #${vs.flex} of ${r.modes.length}${mode.class ? ` · ${mode.class}` : ''} · ${modeSummary(mode, r.geometry.cells)}`
        : r.modes.length === 0
          ? 'no flexes to animate'
          : '';
    info.replaceChildren(h('div', null, `${r.geometry.cells[0]}×${r.geometry.cells[1]} cells · ${bc}`));
    if (what) info.append(h('div', null, what));
  };

  const refresh = () => {
    const vs = v();
    play.textContent = vs.playing ? 'Pause' : 'Play';
    play.setAttribute('aria-pressed', String(vs.playing));
    amp.set(vs.amplitude);
    speed.set(vs.speed);
    arrows.input.value = vs.arrows;
    colour.input.checked = vs.colour;
    rest.input.checked = vs.rest;
    showPhase(vs.phase);
    refreshLegend();
  };
  const showPhase = (t: number) => {
    phase.textContent = `φ/2π = ${t.toFixed(3)}`;
  };

  const el = h('section', { class: 'panel stage-panel', 'aria-label': 'Stage' }, toolbar, frame, readout, h('div', { class: 'stage-foot' }, info, legend));
  return {
    el,
    host,
    attach(s: Stage) {
      stage = s;
      // prefers-reduced-motion: start paused (Play still animates on request)
      if (window.matchMedia?.('(prefers-reduced-motion: reduce)').matches && v().playing) {
        v().playing = false;
        refresh();
      }
    },
    refresh,
    refreshLegend,
    showPhase,
    setEmpty(text: string) {
      empty.textContent = text;
    },
    selectionChanged: showReadout,
    jointOnScreen,
  };
}
