/**
 * The app's view: builds the page, the panels and the stage, and shows what the controller
 * (./controller.ts) reports. Panels get the controller as their `Host` (./host.ts) and never
 * see this class.
 */
import { h } from './dom.js';
import { Controller, type ViewPort } from './controller.js';
import type { RunEstimate } from '../flex/estimate.js';
import type { AnalyseResult } from '../worker/protocol.js';
import type { FigureSource } from './host.js';
import { buildAboutDialog } from './panels/about.js';
import { buildExportPanel, type ExportPanel } from './panels/exports.js';
import { buildExtrasPanel, type ExtrasPanel } from './panels/extras.js';
import { buildFrameworkPanel, type FrameworkPanel } from './panels/framework.js';
import { buildMessages, type Message, type MessagesView } from './panels/messages.js';
import { buildResultsPanel, type ResultsPanel } from './panels/results.js';
import { buildSizeGuard, type SizeGuard } from './panels/size-guard.js';
import { buildStagePanel, type StagePanel } from './panels/stage-panel.js';
import { buildSupercellPanel, type SupercellPanel } from './panels/supercell.js';
import { buildScene, fieldOf, stressForceValues, stressWidths, type SceneModel } from './stage/scene.js';
import { Stage, type DrawMode } from './stage/stage.js';

export { AUTO_RUN_MAX_DOF, GUARD_LIMITS, round, roundTurns } from './controller.js';
export type { RunStatus, SizeVerdict } from './host.js';
export { wrapLines } from './export/compose.js';

export class App implements ViewPort {
  readonly controller: Controller;
  model: SceneModel | null = null;
  stage!: Stage;

  private root: HTMLElement;
  private messages!: MessagesView;
  private frameworkPanel!: FrameworkPanel;
  private supercellPanel!: SupercellPanel;
  private resultsPanel!: ResultsPanel;
  private stagePanel!: StagePanel;
  private exportPanel!: ExportPanel;
  private extrasPanel!: ExtrasPanel;
  private about!: HTMLDialogElement;
  private guard!: SizeGuard;
  private undoBtn!: HTMLButtonElement;

  constructor(root: HTMLElement) {
    this.root = root;
    this.controller = new Controller(this);
  }

  /** Shortcuts for scripts and the browser tests (window.shimmy). */
  get state() {
    return this.controller.state;
  }
  get result() {
    return this.controller.result;
  }

  async start(): Promise<void> {
    const ctl = this.controller;
    const linkError = ctl.loadInitial();
    this.build();
    if (linkError) ctl.reportError('link', linkError, 'The link could not be opened; the demo is shown instead.');
    const mode = new URLSearchParams(location.search).get('draw') as DrawMode | null;
    this.stage = new Stage(this.stagePanel.host, mode === 'graphics' || mode === 'mesh' ? mode : null);
    this.stagePanel.attach(this.stage);
    try {
      await this.stage.init();
    } catch (e) {
      this.message('stage', { kind: 'error', title: e instanceof Error ? e.message : String(e) });
    }
    this.stage.onPhase = (t) => {
      ctl.phaseReported(t);
      this.stagePanel.showPhase(t);
    };
    this.stage.onViewChange = (zoom, centre) => {
      ctl.viewMoved(zoom, centre);
      this.stage.update({ zoom: ctl.state.view.zoom, centre: ctl.state.view.centre });
    };
    this.viewShown();
    this.bindKeys();
    this.bindDrop();
    void ctl.client.features().then((f) => this.extrasPanel.setFeatures(f));
    ctl.begin();
  }

  // ---- layout ---------------------------------------------------------------------------------

  private build(): void {
    const host = this.controller;
    this.messages = buildMessages();
    this.frameworkPanel = buildFrameworkPanel(host);
    this.supercellPanel = buildSupercellPanel(host);
    this.resultsPanel = buildResultsPanel(host);
    this.stagePanel = buildStagePanel(host);
    this.exportPanel = buildExportPanel(host);
    this.extrasPanel = buildExtrasPanel(host);
    this.about = buildAboutDialog();
    this.guard = buildSizeGuard();
    const header = h(
      'header',
      { class: 'topbar' },
      h('div', { class: 'brand' }, h('span', { class: 'logo', 'aria-hidden': 'true' }, '⟡'), h('span', { class: 'name' }, 'shimmy'), h('span', { class: 'tagline' }, 'flexes and self-stresses of periodic bar-and-joint frameworks')),
      h(
        'div',
        { class: 'topbar-actions' },
        (this.undoBtn = h('button', { type: 'button', class: 'ghost', onclick: () => this.controller.undo(), disabled: true, title: 'Undo the last settings change (Ctrl+Z)', 'data-testid': 'undo' }, 'Undo')),
        h('button', { type: 'button', class: 'ghost', onclick: () => this.openAbout(), 'data-testid': 'about' }, 'About & caution'),
      ),
    );
    const left = h('aside', { class: 'column left', 'aria-label': 'Framework and supercell' }, this.frameworkPanel.el, this.supercellPanel.el);
    const centre = h('section', { class: 'column centre', 'aria-label': 'Stage' }, this.messages.el, this.guard.el, this.stagePanel.el, this.extrasPanel.el);
    const right = h('aside', { class: 'column right', 'aria-label': 'Results and exports' }, this.resultsPanel.el, this.exportPanel.el);
    const dropHint = h('div', { class: 'drop-hint', 'aria-hidden': 'true' }, h('div', null, 'Drop a framework file (JSON) or a saved state file'));
    this.root.append(header, h('main', { class: 'workbench' }, left, centre, right), dropHint, this.about);
  }

  // ---- ViewPort: what the controller asks of the view -------------------------------------------

  openAbout(): void {
    if (typeof this.about.showModal === 'function') this.about.showModal();
    else this.about.setAttribute('open', '');
  }

  message(source: string, m: Message | null): void {
    this.messages.set(source, m);
  }

  statusChanged(): void {
    this.resultsPanel.refreshStatus();
  }

  settingsShown(): void {
    this.supercellPanel.refreshEstimate();
    this.resultsPanel.refreshStale();
  }

  frameworkShown(other: boolean): void {
    if (other) this.extrasPanel.frameworkChanged();
    this.frameworkPanel.refresh();
  }

  stateShown(frameworkChanged: boolean): void {
    if (frameworkChanged) this.extrasPanel.frameworkChanged();
    this.frameworkPanel.refresh();
    this.supercellPanel.refresh();
    this.stagePanel.refresh();
    this.exportPanel.refresh();
    this.viewShown();
  }

  resultShown(result: AnalyseResult): void {
    this.model = buildScene(result.geometry);
    this.stage.setScene(this.model);
  }

  countsShown(): void {
    this.resultsPanel.refresh();
    this.exportPanel.refresh();
  }

  /** The stage shows the selected flex (as the recipe draws it) or self-stress. */
  selectionShown(): void {
    const r = this.controller.result;
    const v = this.controller.state.view;
    if (r && this.model) {
      if (v.show === 'stress' && r.stresses[v.stress]) {
        // colour and width both follow the bar force t_b = w_b·|p_b|
        const values = stressForceValues(r.stresses[v.stress], r.geometry);
        this.stage.setStress(values, stressWidths(values));
      } else {
        const u = this.controller.drawnMotion();
        this.stage.setField(u ? fieldOf(this.model, u, v.amplitude) : null);
      }
    } else this.stage.setField(null);
    this.stagePanel.selectionChanged();
    this.resultsPanel.refreshSelection();
    this.stagePanel.refreshLegend();
  }

  viewShown(controls = false): void {
    if (controls) this.stagePanel.refresh();
    const v = this.controller.state.view;
    if (!this.stage) return;
    // while playing, the stage's own phase runs ahead of the (rounded, throttled) copy in the state
    this.stage.update({ playing: v.playing, speed: v.speed, ...(v.playing ? {} : { turns: v.phase }), arrows: v.arrows, colour: v.colour, rest: v.rest, zoom: v.zoom, centre: v.centre });
    const u = v.show === 'flex' ? this.controller.drawnMotion() : null;
    if (this.model && u) this.stage.setField(fieldOf(this.model, u, v.amplitude));
    this.stagePanel.refreshLegend();
  }

  playShown(): void {
    const v = this.controller.state.view;
    this.stage.update({ playing: v.playing, turns: v.phase });
    this.stagePanel.refresh();
  }

  stepStage(direction: number): number {
    this.stage.step(direction);
    return this.stage.settings().turns;
  }

  phaseShown(): void {
    const phase = this.controller.state.view.phase;
    this.stage.update({ turns: phase });
    this.stagePanel.showPhase(phase);
  }

  currentTurns(): number {
    return this.stage.settings().turns;
  }

  setEmpty(text: string): void {
    this.stagePanel.setEmpty(text);
  }

  askGuard(what: string, e: RunEstimate, onConfirm: () => void, onCancel: () => void): void {
    this.guard.ask(what, e, onConfirm, onCancel);
  }

  hideGuard(): void {
    this.guard.hide();
  }

  linkShown(): void {
    this.undoBtn.disabled = this.controller.undoDepth() === 0;
    this.exportPanel.refreshLink();
  }

  invalidFileShown(text: string, e: unknown): void {
    this.frameworkPanel.showInvalidText(text, e);
  }

  editorTextShown(text: string): void {
    this.frameworkPanel.setEditorText(text);
  }

  focusSelection(): void {
    this.resultsPanel.focusSelection();
  }

  figureSource(): FigureSource | null {
    const c = this.controller;
    if (!c.result || !c.resultState || !this.model || !this.stage) return null;
    const st = this.stage.settings();
    return { result: c.result, resultState: c.resultState, state: c.state, model: this.model, turns: st.turns, zoom: st.zoom, centre: st.centre, size: this.stage.size };
  }

  /** Where joint k is drawn now on the stage canvas (css px from its top left), for scripts and tests. */
  jointOnScreen(k: number): [number, number] | null {
    return this.stagePanel.jointOnScreen(k);
  }

  /**
   * The self-stress on the stage, for scripts and tests: its index, its bar forces as the
   * result holds them (null for an unclassified basis vector) and the bar widths as drawn
   * (css px, read back from the stage).
   */
  stressDrawing(): { index: number; forces: number[] | null; widths: number[]; baseWidth: number } | null {
    const r = this.controller.result;
    const v = this.controller.state.view;
    const st = r && v.show === 'stress' ? r.stresses[v.stress] : undefined;
    const drawn = st ? this.stage.drawnBarWidths() : null;
    if (!st || !drawn) return null;
    return { index: v.stress, forces: st.forces ? Array.from(st.forces) : null, widths: Array.from(drawn.factors, (f) => f * drawn.base), baseWidth: drawn.base };
  }

  // ---- keyboard and drag-and-drop ---------------------------------------------------------------

  private bindKeys(): void {
    const ctl = this.controller;
    window.addEventListener('keydown', (e) => {
      if (e.defaultPrevented || e.altKey) return;
      const t = e.target as HTMLElement | null;
      const tag = t?.tagName;
      const editable = tag === 'INPUT' || tag === 'TEXTAREA' || tag === 'SELECT' || t?.isContentEditable;
      // Ctrl+Z (Cmd+Z) undoes a settings change; inside a text field it stays the field's own undo
      if ((e.ctrlKey || e.metaKey) && !e.shiftKey && e.key.toLowerCase() === 'z' && (!editable || tag === 'SELECT')) {
        e.preventDefault();
        ctl.undo();
        return;
      }
      if (editable || e.ctrlKey || e.metaKey) return;
      // Space plays/pauses everywhere except on ordinary buttons and links (where it presses
      // them); on a row of the flex list it plays/pauses too.
      const listRow = t?.getAttribute('role') === 'option';
      if (e.key === ' ' && (listRow || (tag !== 'BUTTON' && tag !== 'SUMMARY' && tag !== 'A'))) {
        e.preventDefault();
        ctl.togglePlay();
      } else if (e.key === 'ArrowRight' || e.key === 'ArrowDown') {
        e.preventDefault();
        ctl.stepSelection(1);
      } else if (e.key === 'ArrowLeft' || e.key === 'ArrowUp') {
        e.preventDefault();
        ctl.stepSelection(-1);
      }
    });
  }

  private bindDrop(): void {
    let depth = 0;
    const body = document.body;
    window.addEventListener('dragenter', (e) => {
      if (!e.dataTransfer?.types.includes('Files')) return;
      depth++;
      body.classList.add('dropping');
    });
    window.addEventListener('dragleave', () => {
      depth = Math.max(0, depth - 1);
      if (depth === 0) body.classList.remove('dropping');
    });
    window.addEventListener('dragover', (e) => {
      if (e.dataTransfer?.types.includes('Files')) e.preventDefault();
    });
    window.addEventListener('drop', (e) => {
      depth = 0;
      body.classList.remove('dropping');
      const file = e.dataTransfer?.files?.[0];
      if (!file) return;
      e.preventDefault();
      void this.controller.openFile(file);
    });
  }
}
