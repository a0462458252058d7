/**
 * The app controller: owns the state, the last result, the worker client and the stage, and
 * wires the panels together. Panels live in ./panels and talk to the app through this class.
 */
import { CAUTION_SHORT } from '../caution.js';
import { InputError, TooLargeError, type Problem } from '../errors.js';
import { checkRunSize, type RunEstimate } from '../flex/estimate.js';
import { checkFramework, parseFramework } from '../framework/validate.js';
import { describeBoundary, parseBoundary } from '../supercell/boundary.js';
import { checkCells } from '../supercell/supercell.js';
import type { AnalyseJob, AnalyseResult } from '../worker/protocol.js';
import { ComputeClient, RunError } from './client.js';
import { h } from './dom.js';
import { countsCsv, modesJson } from './export/data.js';
import { download } from './export/download.js';
import { captionHeight, type FigureSpec } from './export/figure.js';
import { encodeGif } from './export/gif.js';
import { figureCanvas } from './export/paint2d.js';
import { svgFigure } from './export/svg.js';
import { buildAboutDialog } from './panels/about.js';
import { buildExportPanel, type ExportPanel } from './panels/exports.js';
import { buildExtrasPanel, type ExtrasPanel } from './panels/extras.js';
import { buildFrameworkPanel, type FrameworkPanel } from './panels/framework.js';
import { buildMessages, type Message, type MessagesView } from './panels/messages.js';
import { buildResultsPanel, type ResultsPanel } from './panels/results.js';
import { buildSizeGuard, type SizeGuard } from './panels/size-guard.js';
import { buildStagePanel, type StagePanel } from './panels/stage-panel.js';
import { buildSupercellPanel, type SupercellPanel } from './panels/supercell.js';
import { buildScene, fieldOf, stressValues, viewFor, type SceneModel } from './stage/scene.js';
import { Stage, type DrawMode } from './stage/stage.js';
import {
  cloneState,
  defaultState,
  frameworkOf,
  frameworkSpec,
  frameworkTitle,
  looksLikeState,
  slug,
  stateFromFile,
  stateFromHash,
  stateToFile,
  stateToHash,
  type AppState,
  type FrameworkSource,
} from './state.js';

/** Problems bigger than this (columns of R) are not run automatically on every change: the size guard asks first. */
export const AUTO_RUN_MAX_DOF = 1200;

/**
 * A size from a link or a state file waits for confirmation above any of these: columns of R
 * (the drawing and the classifier grow with them; the estimate leaves the classifier out),
 * estimated seconds, or estimated bytes.
 */
export const GUARD_LIMITS = { dof: 20_000, seconds: 10, bytes: 256 * 2 ** 20 };

/** How a refusal names the cells and the way out in the app. */
const SIZE_LABELS = { cells: 'cells', allow: 'run it from the command line with --allow-large' };

/** What the size check says about the current settings. */
export type SizeVerdict = { kind: 'ok'; estimate: RunEstimate } | { kind: 'refused'; error: TooLargeError } | { kind: 'invalid' };

export type RunStatus =
  | { kind: 'idle' }
  | { kind: 'running'; started: number; fraction: number; stage: string; showProgress: boolean }
  | { kind: 'done'; ms: number };

export class App {
  state: AppState;
  result: AnalyseResult | null = null;
  /** The settings that produced `result`. */
  resultState: AppState | null = null;
  model: SceneModel | null = null;
  status: RunStatus = { kind: 'idle' };
  autoRun = true;
  readonly client = new ComputeClient();
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
  /** A settings change waits for the automatic run (debounced, or held while editing N1/N2). */
  private autoPending = false;
  private hashTimer = 0;
  /** The pending hash update is a committed settings change: it gets its own history entry. */
  private hashPush = false;
  private autoTimer = 0;
  private progressTimer = 0;
  private runSeq = 0;
  /** View settings to apply once the next result arrives (from a link or a state file). */
  private pendingView: AppState['view'] | null = null;
  /** True until the first result of the built-in demo (no link given) arrives. */
  private demo = false;

  constructor(root: HTMLElement) {
    this.root = root;
    this.state = defaultState();
  }

  async start(): Promise<void> {
    let initial: AppState = defaultState();
    let linkError: unknown = null;
    this.demo = location.hash.length <= 1;
    if (location.hash.length > 1) {
      try {
        initial = stateFromHash(location.hash);
      } catch (e) {
        linkError = e;
      }
    }
    this.state = initial;
    this.build();
    if (linkError) this.reportError('link', linkError, 'The link could not be opened; the demo is shown instead.');
    const mode = new URLSearchParams(location.search).get('draw') as DrawMode | null;
    this.stage = new Stage(this.stagePanel.host, mode === 'graphics' || mode === 'mesh' ? mode : null);
    this.stagePanel.attach(this.stage);
    try {
      await this.stage.init();
    } catch (e) {
      this.message('stage', { kind: 'error', title: e instanceof Error ? e.message : String(e) });
    }
    this.stage.onPhase = (t) => {
      this.state.view.phase = roundTurns(t);
      this.stagePanel.showPhase(t);
    };
    this.stage.onViewChange = (zoom, centre) => {
      this.state.view.zoom = round(zoom, 4);
      this.state.view.centre = centre ? [round(centre[0], 4), round(centre[1], 4)] : null;
      this.stage.update({ zoom: this.state.view.zoom, centre: this.state.view.centre });
      this.syncHash();
    };
    this.applyViewToStage();
    window.addEventListener('hashchange', () => this.openHash(location.hash));
    // Back and Forward between the entries pushed by syncHash
    window.addEventListener('popstate', () => {
      this.refreshUndo();
      this.openHash(location.hash);
    });
    this.bindKeys();
    this.bindDrop();
    void this.client.features().then((f) => this.extrasPanel.setFeatures(f));
    this.pendingView = cloneState(this.state).view;
    if (this.demo) this.run();
    else this.requestRun('link');
  }

  // ---- layout ---------------------------------------------------------------------------------

  private build(): void {
    this.messages = buildMessages();
    this.frameworkPanel = buildFrameworkPanel(this);
    this.supercellPanel = buildSupercellPanel(this);
    this.resultsPanel = buildResultsPanel(this);
    this.stagePanel = buildStagePanel(this);
    this.exportPanel = buildExportPanel(this);
    this.extrasPanel = buildExtrasPanel(this);
    this.about = buildAboutDialog();
    this.guard = buildSizeGuard();
    const header = h(
      'header',
      { class: 'topbar' },
      h('div', { class: 'brand' }, h('span', { class: 'logo', 'aria-hidden': 'true' }, '⟡'), h('span', { class: 'name' }, 'shimmy'), h('span', { class: 'tagline' }, 'flexes and self-stresses of periodic bar-and-joint frameworks')),
      h(
        'div',
        { class: 'topbar-actions' },
        (this.undoBtn = h('button', { type: 'button', class: 'ghost', onclick: () => this.undo(), disabled: true, title: 'Undo the last settings change (Ctrl+Z)', 'data-testid': 'undo' }, 'Undo')),
        h('button', { type: 'button', class: 'ghost', onclick: () => this.openAbout(), 'data-testid': 'about' }, 'About & caution'),
      ),
    );
    const left = h('aside', { class: 'column left', 'aria-label': 'Framework and supercell' }, this.frameworkPanel.el, this.supercellPanel.el);
    const centre = h('section', { class: 'column centre', 'aria-label': 'Stage' }, this.messages.el, this.guard.el, this.stagePanel.el, this.extrasPanel.el);
    const right = h('aside', { class: 'column right', 'aria-label': 'Results and exports' }, this.resultsPanel.el, this.exportPanel.el);
    const dropHint = h('div', { class: 'drop-hint', 'aria-hidden': 'true' }, h('div', null, 'Drop a framework file (JSON) or a saved state file'));
    this.root.append(header, h('main', { class: 'workbench' }, left, centre, right), dropHint, this.about);
  }

  openAbout(): void {
    if (typeof this.about.showModal === 'function') this.about.showModal();
    else this.about.setAttribute('open', '');
  }

  // ---- messages -----------------------------------------------------------------------------

  message(source: string, m: Message | null): void {
    this.messages.set(source, m);
  }

  reportError(source: string, e: unknown, context?: string): void {
    if (e instanceof InputError) {
      const [first] = e.message.split('\n');
      this.message(source, { kind: 'error', title: context ?? first, problems: e.problems, ...(context ? { detail: first } : {}) });
    } else if (e instanceof TooLargeError) {
      const fit = e.largestCells;
      const title = e.secondsNeeded === undefined ? 'Too large for memory' : `Too large for one run${fit ? `: at most about ${fit[0]}×${fit[1]} cells fit` : ''}`;
      this.message(source, { kind: 'error', title, detail: e.message });
    } else if (e instanceof RunError) {
      const err = e.error;
      if (err.kind === 'cancelled') this.message(source, { kind: 'info', title: `${err.message} The previous result is still shown.` });
      else if (err.kind === 'input') this.message(source, { kind: 'error', title: err.message.split('\n')[0], problems: err.problems });
      else if (err.kind === 'too-large') this.message(source, { kind: 'error', title: 'Too large for memory', detail: err.message });
      else this.message(source, { kind: 'error', title: err.message });
    } else {
      this.message(source, { kind: 'error', title: context ?? 'Something went wrong', detail: e instanceof Error ? e.message : String(e) });
    }
  }

  // ---- settings -------------------------------------------------------------------------------

  setFramework(src: FrameworkSource): void {
    const changed = frameworkSpec(src) !== frameworkSpec(this.state.framework);
    this.state.framework = src;
    if (changed) this.extrasPanel.frameworkChanged();
    // a note about the old lattice's list (e.g. a flex that does not exist) no longer applies
    this.message('selection', null);
    this.frameworkPanel.refresh();
    this.settingsChanged();
  }

  /** Called by panels after they changed a compute setting in `state`. */
  settingsChanged(): void {
    this.supercellPanel.refreshEstimate();
    this.resultsPanel.refreshStale();
    this.syncHash(true);
    if (this.autoRun) {
      clearTimeout(this.autoTimer);
      this.autoPending = true;
      this.autoTimer = window.setTimeout(() => this.autoRunNow(false), 300);
    }
  }

  /**
   * The debounced automatic run. While the focus is inside a `[data-hold-run]` group (N1 and
   * N2) it waits, so that typing N1 then N2 never runs the size in between; `commitSettings`
   * runs it when the focus leaves the group or Enter is pressed.
   */
  private autoRunNow(committed: boolean): void {
    if (!this.autoRun || !this.autoPending) return;
    if (!committed && document.activeElement?.closest('[data-hold-run]')) return;
    this.autoPending = false;
    // settings changed back to the shown result: nothing to run, unless another run is under way
    if (!this.isStale() && this.status.kind !== 'running') return;
    if (this.estimateDof() <= AUTO_RUN_MAX_DOF) this.run();
    else this.requestRun('auto');
  }

  /** Called by a `[data-hold-run]` group when its edit is finished. */
  commitSettings(): void {
    if (!this.autoPending) return;
    clearTimeout(this.autoTimer);
    this.autoTimer = window.setTimeout(() => this.autoRunNow(true), 0);
  }

  /** The core's size check (src/flex/estimate.ts, as in the CLI) for these settings. */
  sizeVerdict(s: AppState = this.state): SizeVerdict {
    let fw;
    let boundary;
    try {
      fw = frameworkOf(s.framework);
      boundary = parseBoundary(s.bc);
    } catch {
      return { kind: 'invalid' };
    }
    try {
      // the worker always computes the flex basis, so the estimate includes the bases
      return { kind: 'ok', estimate: checkRunSize(fw, [s.cells[0], s.cells[1]], boundary, { solver: s.solver, bases: true, labels: SIZE_LABELS }) };
    } catch (e) {
      if (e instanceof TooLargeError) return { kind: 'refused', error: e };
      return { kind: 'invalid' };
    }
  }

  /**
   * Runs the current settings unless they are large: a size from a link or a state file above
   * GUARD_LIMITS, or an input change above AUTO_RUN_MAX_DOF, waits for the size guard; a size
   * that cannot fit is refused with the largest that would.
   */
  requestRun(origin: 'link' | 'auto'): void {
    const v = this.sizeVerdict();
    if (v.kind !== 'ok') {
      this.run();
      return;
    }
    const e = v.estimate;
    const large = origin === 'auto' ? 2 * e.joints > AUTO_RUN_MAX_DOF : 2 * e.joints > GUARD_LIMITS.dof || e.seconds > GUARD_LIMITS.seconds || e.bytes > GUARD_LIMITS.bytes;
    if (!large) {
      this.run();
      return;
    }
    clearTimeout(this.autoTimer);
    const what = origin === 'link' ? 'The link or file asks for' : 'These settings ask for';
    this.guard.ask(
      what,
      e,
      () => this.run(),
      () => {
        this.pendingView = null;
        this.message('run', { kind: 'info', title: `Not run: ${e.cells[0]}×${e.cells[1]} cells waits for you. Press Run when you want it.` });
        if (!this.result) this.stagePanel.setEmpty('Nothing computed yet: press Run to compute these settings.');
      },
    );
    if (!this.result) this.stagePanel.setEmpty('Waiting for your confirmation of a large run (above the stage).');
  }

  /** Called by panels after they changed a view setting in `state.view`. */
  viewChanged(): void {
    this.applyViewToStage();
    this.syncHash();
  }

  estimateDof(): number {
    try {
      const fw = frameworkOf(this.state.framework);
      return 2 * fw.joints.length * this.state.cells[0] * this.state.cells[1];
    } catch {
      return 0;
    }
  }

  isStale(): boolean {
    if (!this.resultState) return true;
    const key = (s: AppState) => JSON.stringify([frameworkSpec(s.framework), s.cells, s.bc, s.tolerance, s.solver, s.window, s.strip, s.stresses, s.classify]);
    return key(this.resultState) !== key(this.state);
  }

  /** Writes the state into the URL; `push` (a settings change) adds a history entry, so Back returns to it. */
  syncHash(push = false): void {
    clearTimeout(this.hashTimer);
    this.hashPush ||= push;
    this.hashTimer = window.setTimeout(() => {
      const hash = stateToHash(this.state);
      const url = `${location.pathname}${location.search}${hash}`;
      // the first hash of a page replaces its bare address, so Back from there leaves the app as before
      if (hash !== location.hash) {
        if (this.hashPush && location.hash.length > 1) history.pushState({ shimmyDepth: undoDepth() + 1 }, '', url);
        else history.replaceState(history.state, '', url);
      }
      this.hashPush = false;
      this.refreshUndo();
      this.exportPanel.refreshLink();
    }, 200);
  }

  /** Undo goes back through the history entries this app pushed (never out of the app). */
  undo(): void {
    if (undoDepth() > 0) history.back();
  }

  private refreshUndo(): void {
    this.undoBtn.disabled = undoDepth() === 0;
  }

  shareUrl(): string {
    return `${location.origin}${location.pathname}${location.search}${stateToHash(this.state)}`;
  }

  /** Apply a whole state (from a link or a state file) and run it; `push` adds a history entry. */
  applyState(s: AppState, push = false): void {
    const changed = frameworkSpec(s.framework) !== frameworkSpec(this.state.framework);
    this.state = cloneState(s);
    if (changed) this.extrasPanel.frameworkChanged();
    this.frameworkPanel.refresh();
    this.supercellPanel.refresh();
    this.stagePanel.refresh();
    this.exportPanel.refresh();
    this.applyViewToStage();
    this.pendingView = cloneState(s).view;
    this.message('selection', null);
    this.syncHash(push);
    this.requestRun('link');
  }

  openHash(hash: string): void {
    // a history entry without a hash (the page as first opened) keeps the current state
    if (hash.length <= 1 || hash === stateToHash(this.state)) return;
    try {
      const s = stateFromHash(hash);
      this.message('link', null);
      this.applyState(s);
    } catch (e) {
      this.reportError('link', e, 'The link cannot be opened:');
    }
  }

  // ---- files ----------------------------------------------------------------------------------

  async openFile(file: File): Promise<void> {
    let text: string;
    try {
      text = await file.text();
    } catch (e) {
      this.reportError('file', e, `${file.name} could not be read`);
      return;
    }
    this.openText(text, file.name);
  }

  openText(text: string, fileName: string): void {
    let value: unknown = undefined;
    try {
      value = JSON.parse(text.charCodeAt(0) === 0xfeff ? text.slice(1) : text);
    } catch {
      // not JSON: parseFramework reports where
    }
    try {
      if (looksLikeState(value)) {
        const s = stateFromFile(text, fileName);
        this.message('file', null);
        this.applyState(s, true);
        return;
      }
      const fw = parseFramework(text, fileName);
      this.message('file', null);
      this.frameworkPanel.setEditorText(text);
      this.setFramework({ kind: 'file', framework: fw, fileName });
    } catch (e) {
      if (!looksLikeState(value)) this.frameworkPanel.showInvalidText(text, e);
      this.reportError('file', e);
    }
  }

  saveFramework(): void {
    const fw = frameworkOf(this.state.framework);
    download(JSON.stringify(fw, null, 2) + '\n', `${slug(fw.name ?? 'framework')}.json`, 'application/json');
  }

  // ---- running --------------------------------------------------------------------------------

  job(): AnalyseJob {
    const s = this.state;
    const framework = checkFramework(frameworkOf(s.framework));
    checkCells(s.cells);
    parseBoundary(s.bc);
    return { framework, cells: [s.cells[0], s.cells[1]], bc: s.bc, tolerance: s.tolerance, solver: s.solver, window: s.window, strip: s.strip, stresses: s.stresses, classify: s.classify };
  }

  run(): void {
    clearTimeout(this.autoTimer);
    this.autoPending = false;
    this.guard.hide();
    let job: AnalyseJob;
    try {
      job = this.job();
    } catch (e) {
      this.reportError('run', e);
      return;
    }
    const size = this.sizeVerdict();
    if (size.kind === 'refused') {
      this.pendingView = null;
      this.reportError('run', size.error);
      if (!this.result) this.stagePanel.setEmpty('No result yet: see the message above, change the settings and press Run.');
      return;
    }
    const seq = ++this.runSeq;
    const snapshot = cloneState(this.state);
    this.message('run', null);
    const started = performance.now();
    this.status = { kind: 'running', started, fraction: 0, stage: 'starting', showProgress: false };
    this.resultsPanel.refreshStatus();
    clearTimeout(this.progressTimer);
    this.progressTimer = window.setTimeout(() => {
      if (this.status.kind === 'running' && seq === this.runSeq) {
        this.status.showProgress = true;
        this.resultsPanel.refreshStatus();
      }
    }, 500);
    this.client
      .analyse(job, (fraction, stage) => {
        if (seq !== this.runSeq || this.status.kind !== 'running') return;
        // progress only moves forward: a stage that restarts its own count does not move it back
        if (fraction < this.status.fraction) return;
        this.status.fraction = fraction;
        this.status.stage = stage;
        if (this.status.showProgress) this.resultsPanel.refreshStatus();
      })
      .then((result) => {
        if (seq !== this.runSeq) return;
        clearTimeout(this.progressTimer);
        this.status = { kind: 'done', ms: performance.now() - started };
        this.onResult(result, snapshot);
      })
      .catch((e: unknown) => {
        if (seq !== this.runSeq) return;
        clearTimeout(this.progressTimer);
        this.status = { kind: 'idle' };
        this.pendingView = null;
        this.reportError('run', e);
        if (!this.result) this.stagePanel.setEmpty('No result yet: see the message above, change the settings and press Run.');
        this.resultsPanel.refreshStatus();
        this.resultsPanel.refreshStale();
      });
  }

  cancelRun(): void {
    void this.client.cancelAnalysis();
  }

  private onResult(result: AnalyseResult, snapshot: AppState): void {
    this.result = result;
    this.resultState = snapshot;
    this.model = buildScene(result.geometry);
    this.stage.setScene(this.model);
    this.extrasPanel.resultChanged();
    const gap = result.counts.gap;
    if (gap.ambiguous) {
      this.message('ambiguous', {
        kind: 'warning',
        title: 'The rank is ambiguous at this tolerance',
        detail: `The singular-value gap ratio is ${gap.ratio === null ? '—' : gap.ratio.toPrecision(3)}, under 10⁴: the counts depend on the tolerance. Try another tolerance and compare.`,
      });
    } else this.message('ambiguous', null);
    const warnings = result.classification?.warnings ?? [];
    this.message('classes', warnings.length ? { kind: 'warning', title: 'The flex classes may not be reliable', detail: warnings.join(' ') } : null);
    const v = this.pendingView;
    this.pendingView = null;
    if (v && this.demo) {
      // the demo opens on an edge flex: the most telling motion of a twisted kagome with free sides
      const pick = ['decaying', 'line', 'bulk'].map((c) => result.modes.findIndex((m) => m.class === c)).find((i) => i >= 0);
      if (pick !== undefined) v.flex = pick;
    }
    this.demo = false;
    if (v) {
      this.state.view = { ...v };
      this.stagePanel.refresh();
      this.applyViewToStage();
    }
    this.resultsPanel.refresh();
    this.exportPanel.refresh();
    const view = this.state.view;
    const nModes = result.modes.length;
    const nStress = result.stresses.length;
    if (view.show === 'stress' && nStress > 0) this.selectStress(Math.min(view.stress, nStress - 1), view.stress >= nStress ? `Self-stress ${view.stress} does not exist (there are ${nStress}); showing ${nStress - 1}.` : null);
    else if (nModes > 0) this.selectFlex(Math.min(view.flex, nModes - 1), view.flex >= nModes ? `Flex ${view.flex} does not exist in this list (there are ${nModes}); showing flex ${nModes - 1}.` : null);
    else this.selectNone();
  }

  selectFlex(i: number, note: string | null = null): void {
    const r = this.result;
    if (!r || !this.model || i < 0 || i >= r.modes.length) return;
    this.state.view.show = 'flex';
    this.state.view.flex = i;
    this.stage.setField(fieldOf(this.model, r.modes[i], this.state.view.amplitude));
    this.message('selection', note ? { kind: 'info', title: note } : null);
    this.resultsPanel.refreshSelection();
    this.stagePanel.refreshLegend();
    this.syncHash();
  }

  selectStress(i: number, note: string | null = null): void {
    const r = this.result;
    if (!r || !this.model || i < 0 || i >= r.stresses.length) return;
    this.state.view.show = 'stress';
    this.state.view.stress = i;
    this.stage.setStress(stressValues(r.stresses[i]));
    this.message('selection', note ? { kind: 'info', title: note } : null);
    this.resultsPanel.refreshSelection();
    this.stagePanel.refreshLegend();
    this.syncHash();
  }

  private selectNone(): void {
    this.message('selection', null);
    this.stage.setField(null);
    this.resultsPanel.refreshSelection();
    this.stagePanel.refreshLegend();
  }

  /** Move the selection by ±1 in the list being shown. */
  stepSelection(delta: number): void {
    const r = this.result;
    if (!r) return;
    const v = this.state.view;
    if (v.show === 'stress' && r.stresses.length) this.selectStress(Math.max(0, Math.min(r.stresses.length - 1, v.stress + delta)));
    else if (r.modes.length) this.selectFlex(Math.max(0, Math.min(r.modes.length - 1, v.flex + delta)));
  }

  applyViewToStage(): void {
    const v = this.state.view;
    if (!this.stage) return;
    // while playing, the stage's own phase runs ahead of the (rounded, throttled) copy in the state
    this.stage.update({ playing: v.playing, speed: v.speed, ...(v.playing ? {} : { turns: v.phase }), arrows: v.arrows, colour: v.colour, rest: v.rest, zoom: v.zoom, centre: v.centre });
    if (this.result && this.model && v.show === 'flex' && this.result.modes[v.flex]) {
      this.stage.setField(fieldOf(this.model, this.result.modes[v.flex], v.amplitude));
    }
    this.stagePanel.refreshLegend();
  }

  togglePlay(): void {
    this.state.view.playing = !this.state.view.playing;
    if (!this.state.view.playing) this.state.view.phase = roundTurns(this.stage.settings().turns);
    this.stage.update({ playing: this.state.view.playing, turns: this.state.view.phase });
    this.stagePanel.refresh();
    this.syncHash();
  }

  stepPhase(direction: number): void {
    if (this.state.view.playing) this.togglePlay();
    this.stage.step(direction);
    this.state.view.phase = roundTurns(this.stage.settings().turns);
    this.stage.update({ turns: this.state.view.phase });
    this.stagePanel.showPhase(this.state.view.phase);
    this.syncHash();
  }

  // ---- exports --------------------------------------------------------------------------------

  /** Title and caption lines of a figure. */
  figureText(): { title: string; caption: string[]; description: string } {
    const s = this.resultState ?? this.state;
    const r = this.result;
    const title = `${frameworkTitle(s.framework)}, ${s.cells[0]}×${s.cells[1]} cells`;
    let what = '';
    if (r) {
      const v = this.state.view;
      if (v.show === 'stress' && r.stresses[v.stress]) what = `self-stress ${v.stress} of ${r.stresses.length}`;
      else if (r.modes[v.flex]) {
        const m = r.modes[v.flex];
        what = `flex ${v.flex} of ${r.modes.length}${m.class ? ` (${m.class})` : ''}, amplitude ${v.amplitude} bar lengths, phase ${this.stage.settings().turns.toFixed(3)}`;
      }
    }
    let bcText = s.bc;
    try {
      bcText = describeBoundary(parseBoundary(s.bc));
    } catch {
      // keep the raw text
    }
    const caption = [`${title}; ${bcText}${what ? `; ${what}` : ''}`, `shimmy — ${CAUTION_SHORT}`];
    const description = `${caption[0]}. Drawn by shimmy. ${CAUTION_SHORT}`;
    return { title, caption, description };
  }

  figure(width: number, height: number, turns?: number): FigureSpec | null {
    if (!this.model) return null;
    const r = this.result!;
    const v = this.state.view;
    const st = this.stage.settings();
    const stress = v.show === 'stress' && r.stresses[v.stress] ? stressValues(r.stresses[v.stress]) : null;
    const mode = !stress && r.modes[v.flex] ? r.modes[v.flex] : null;
    const field = mode ? fieldOf(this.model, mode, v.amplitude) : null;
    const text = this.figureText();
    return {
      model: this.model,
      field,
      stress,
      turns: turns ?? st.turns,
      arrows: v.arrows,
      colour: v.colour,
      rest: v.rest,
      view: viewFor(this.model, width, height, st.zoom, st.centre),
      caption: wrapLines(text.caption, width - 24, 6.6),
      legend: stress ? { kind: 'stress', title: 'bar tension (self-stress)' } : field && v.colour ? { kind: 'amplitude', title: 'joint amplitude |u| / max |u|' } : null,
    };
  }

  private requireResult(what: string): boolean {
    if (this.result && this.model) return true;
    this.message('export', { kind: 'error', title: `Nothing to export as ${what} yet: run an analysis first.` });
    return false;
  }

  private baseName(): string {
    const s = this.resultState ?? this.state;
    const v = this.state.view;
    const sel = v.show === 'stress' ? `stress${v.stress}` : `flex${v.flex}`;
    return `${slug(frameworkTitle(s.framework))}-${s.cells[0]}x${s.cells[1]}-${sel}`;
  }

  exportPng(): void {
    if (!this.requireResult('PNG')) return;
    const [w, hgt] = this.stage.size;
    const f = this.figure(w, hgt)!;
    const canvas = figureCanvas(f, 2);
    canvas.toBlob((blob) => {
      if (blob) download(blob, `${this.baseName()}.png`, 'image/png');
      else this.message('export', { kind: 'error', title: 'The PNG could not be made (the browser returned no image).' });
    }, 'image/png');
    this.message('export', null);
  }

  exportSvg(): void {
    if (!this.requireResult('SVG')) return;
    const [w, hgt] = this.stage.size;
    const text = this.figureText();
    download(svgFigure(this.figure(w, hgt)!, text.title, text.description), `${this.baseName()}.svg`, 'image/svg+xml');
    this.message('export', null);
  }

  private gifAbort: AbortController | null = null;

  async exportGif(onProgress: (f: number, stage: 'drawing' | 'encoding') => void): Promise<void> {
    if (!this.requireResult('GIF')) return;
    this.gifAbort?.abort();
    const abort = new AbortController();
    this.gifAbort = abort;
    const g = this.state.gif;
    const [sw, sh] = this.stage.size;
    const width = g.width;
    const captionLines = wrapLines(this.figureText().caption, width - 24, 6.6).length;
    const drawingHeight = Math.max(32, Math.round((width * sh) / Math.max(1, sw)) - captionHeight(captionLines));
    try {
      const blob = await encodeGif((t) => this.figure(width, drawingHeight, t)!, { frames: g.frames, period: g.period, onProgress, signal: abort.signal });
      if (abort.signal.aborted) return;
      download(blob, `${this.baseName()}.gif`, 'image/gif');
      this.message('export', null);
    } catch (e) {
      if (!abort.signal.aborted) this.reportError('export', e, 'The GIF could not be made');
    } finally {
      if (this.gifAbort === abort) this.gifAbort = null;
    }
  }

  cancelGif(): void {
    this.gifAbort?.abort();
    this.gifAbort = null;
  }

  exportJson(): void {
    if (!this.requireResult('JSON')) return;
    download(modesJson(this.result!, this.resultState!), `${this.baseName()}-modes.json`, 'application/json');
    this.message('export', null);
  }

  exportCsv(): void {
    if (!this.requireResult('CSV')) return;
    download(countsCsv(this.result!, this.resultState!), `${this.baseName()}-counts.csv`, 'text/csv');
    this.message('export', null);
  }

  exportState(): void {
    if (this.state.view.playing) this.state.view.phase = roundTurns(this.stage.settings().turns);
    download(stateToFile(this.state), `${slug(frameworkTitle(this.state.framework))}-state.json`, 'application/json');
  }

  // ---- keyboard and drag-and-drop ---------------------------------------------------------------

  private bindKeys(): void {
    window.addEventListener('keydown', (e) => {
      if (e.defaultPrevented || e.altKey) return;
      const t = e.target as HTMLElement | null;
      const tag = t?.tagName;
      const editable = tag === 'INPUT' || tag === 'TEXTAREA' || tag === 'SELECT' || t?.isContentEditable;
      // Ctrl+Z (Cmd+Z) undoes a settings change; inside a text field it stays the field's own undo
      if ((e.ctrlKey || e.metaKey) && !e.shiftKey && e.key.toLowerCase() === 'z' && (!editable || tag === 'SELECT')) {
        e.preventDefault();
        this.undo();
        return;
      }
      if (editable || e.ctrlKey || e.metaKey) return;
      // Space plays/pauses everywhere except on ordinary buttons and links (where it presses
      // them); on a row of the flex list it plays/pauses too.
      const listRow = t?.getAttribute('role') === 'option';
      if (e.key === ' ' && (listRow || (tag !== 'BUTTON' && tag !== 'SUMMARY' && tag !== 'A'))) {
        e.preventDefault();
        this.togglePlay();
      } else if (e.key === 'ArrowRight' || e.key === 'ArrowDown') {
        e.preventDefault();
        this.stepSelection(1);
        this.resultsPanel.focusSelection();
      } else if (e.key === 'ArrowLeft' || e.key === 'ArrowUp') {
        e.preventDefault();
        this.stepSelection(-1);
        this.resultsPanel.focusSelection();
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
      void this.openFile(file);
    });
  }
}

/** How many settings changes of this app lie behind the current history entry. */
function undoDepth(): number {
  const d = (history.state as { shimmyDepth?: unknown } | null)?.shimmyDepth;
  return typeof d === 'number' ? d : 0;
}

/** Breaks caption lines at spaces so that each fits `width` pixels at about `charWidth` per character. */
export function wrapLines(lines: string[], width: number, charWidth: number): string[] {
  const max = Math.max(20, Math.floor(width / charWidth));
  const out: string[] = [];
  for (const line of lines) {
    let rest = line;
    while (rest.length > max) {
      let cut = rest.lastIndexOf(' ', max);
      if (cut <= 0) cut = max;
      out.push(rest.slice(0, cut));
      rest = rest.slice(cut).trimStart();
    }
    out.push(rest);
  }
  return out;
}

export function round(x: number, digits: number): number {
  const f = 10 ** digits;
  return Math.round(x * f) / f;
}

/** A phase in turns rounded to 4 digits, kept in [0, 1). */
export function roundTurns(t: number): number {
  const r = round(t, 4);
  return r >= 1 ? 0 : r;
}

export type { Problem };
