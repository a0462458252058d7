/**
 * The app's controller: owns the state and the result on show, runs and cancels analyses,
 * guards large sizes, keeps the URL history (Back and Undo), and tells the view what changed
 * through the small `ViewPort` interface. Panels reach it through `Host` (./host.ts).
 */
import { InputError, TooLargeError } from '../errors.js';
import { checkRunSize } from '../flex/estimate.js';
import { checkFramework, parseFramework } from '../framework/validate.js';
import { parseBoundary } from '../supercell/boundary.js';
import { checkCells } from '../supercell/supercell.js';
import type { AnalyseJob, AnalyseResult } from '../worker/protocol.js';
import { ComputeClient, RunError } from './client.js';
import { download } from './export/download.js';
import { drawnMotion, PLAIN_RECIPE, type Motion, type MotionRecipe } from './export/compose.js';
import type { FigureSource, Host, RunStatus, SizeVerdict } from './host.js';
import type { Message } from './panels/messages.js';
import type { RunEstimate } from '../flex/estimate.js';
import {
  cloneState,
  defaultState,
  frameworkOf,
  frameworkSpec,
  frameworkTitle,
  looksLikeState,
  slug,
  stateFromFile,
  stateToFile,
  type AppState,
  type FrameworkSource,
} from './state.js';
import { stateFromHash, stateToHash } from './state-link.js';

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

/** What the controller asks of the view (implemented by App in app.ts). */
export interface ViewPort {
  message(source: string, m: Message | null): void;
  /** The run status changed (running, progress, done). */
  statusChanged(): void;
  /** A compute setting changed: the estimate and the stale note follow. */
  settingsShown(): void;
  /** The framework changed: its panel shows it; `other` when it is another lattice or file. */
  frameworkShown(other: boolean): void;
  /** A whole state was applied: every panel shows it. */
  stateShown(frameworkChanged: boolean): void;
  /** A new result: the stage gets its scene (before the selection is made). */
  resultShown(result: AnalyseResult): void;
  /** The counts and lists of a new result (after its messages). */
  countsShown(): void;
  /** The selection (flex or self-stress) changed. */
  selectionShown(): void;
  /** The view settings changed: the stage follows; `controls` also resets the stage panel's controls. */
  viewShown(controls?: boolean): void;
  /** Play/pause changed (state.view.playing, state.view.phase). */
  playShown(): void;
  /** Steps the stage by 1/32 period; returns its phase in turns. */
  stepStage(direction: number): number;
  /** The paused phase changed (state.view.phase). */
  phaseShown(): void;
  /** The phase the stage shows now, in turns. */
  currentTurns(): number;
  /** Text on the empty stage. */
  setEmpty(text: string): void;
  askGuard(what: string, e: RunEstimate, onConfirm: () => void, onCancel: () => void): void;
  hideGuard(): void;
  /** The URL was written: the Undo button and the link follow. */
  linkShown(): void;
  invalidFileShown(text: string, e: unknown): void;
  editorTextShown(text: string): void;
  openAbout(): void;
  figureSource(): FigureSource | null;
  /** The flex list's selected row is brought into sight (keyboard navigation). */
  focusSelection(): void;
}

export class Controller implements Host {
  state: AppState = defaultState();
  result: AnalyseResult | null = null;
  /** The settings that produced `result`. */
  resultState: AppState | null = null;
  status: RunStatus = { kind: 'idle' };
  autoRun = true;
  readonly client = new ComputeClient();
  recipe: MotionRecipe = { ...PLAIN_RECIPE };

  private view: ViewPort;
  private resultListeners = new Set<() => void>();
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

  constructor(view: ViewPort) {
    this.view = view;
  }

  /** Reads the page's link into the state; returns the problem with it, if any (the demo is used then). */
  loadInitial(): unknown {
    this.demo = location.hash.length <= 1;
    if (this.demo) return null;
    try {
      this.state = stateFromHash(location.hash);
      return null;
    } catch (e) {
      this.state = defaultState();
      return e;
    }
  }

  /** The first run: the demo at once, a link through the size guard. */
  begin(): void {
    window.addEventListener('hashchange', () => this.openHash(location.hash));
    // Back and Forward between the entries pushed by syncHash
    window.addEventListener('popstate', () => {
      this.view.linkShown();
      this.openHash(location.hash);
    });
    this.pendingView = cloneState(this.state).view;
    if (this.demo) this.run();
    else this.requestRun('link');
  }

  onResult(listener: () => void): () => void {
    this.resultListeners.add(listener);
    return () => this.resultListeners.delete(listener);
  }

  figureSource(): FigureSource | null {
    return this.view.figureSource();
  }

  openAbout(): void {
    this.view.openAbout();
  }

  // ---- messages -----------------------------------------------------------------------------

  message(source: string, m: Message | null): void {
    this.view.message(source, m);
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
    // a note about the old lattice's list (e.g. a flex that does not exist) no longer applies
    this.view.frameworkShown(changed);
    this.message('selection', null);
    this.settingsChanged();
  }

  settingsChanged(): void {
    this.view.settingsShown();
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
    this.view.askGuard(
      what,
      e,
      () => this.run(),
      () => {
        this.pendingView = null;
        this.message('run', { kind: 'info', title: `Not run: ${e.cells[0]}×${e.cells[1]} cells waits for you. Press Run when you want it.` });
        if (!this.result) this.view.setEmpty('Nothing computed yet: press Run to compute these settings.');
      },
    );
    if (!this.result) this.view.setEmpty('Waiting for your confirmation of a large run (above the stage).');
  }

  viewChanged(): void {
    this.view.viewShown();
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

  // ---- history: the URL, Back and Undo ----------------------------------------------------------

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
      this.view.linkShown();
    }, 200);
  }

  /** How many settings changes of this app lie behind the current history entry. */
  undoDepth(): number {
    return undoDepth();
  }

  /** Undo goes back through the history entries this app pushed (never out of the app). */
  undo(): void {
    if (undoDepth() > 0) history.back();
  }

  shareUrl(): string {
    return `${location.origin}${location.pathname}${location.search}${stateToHash(this.state)}`;
  }

  applyState(s: AppState, push = false): void {
    const changed = frameworkSpec(s.framework) !== frameworkSpec(this.state.framework);
    this.state = cloneState(s);
    this.view.stateShown(changed);
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
      this.view.editorTextShown(text);
      this.setFramework({ kind: 'file', framework: fw, fileName });
    } catch (e) {
      if (!looksLikeState(value)) this.view.invalidFileShown(text, e);
      this.reportError('file', e);
    }
  }

  saveFramework(): void {
    const fw = frameworkOf(this.state.framework);
    download(JSON.stringify(fw, null, 2) + '\n', `${slug(fw.name ?? 'framework')}.json`, 'application/json');
  }

  exportState(): void {
    if (this.state.view.playing) this.state.view.phase = roundTurns(this.view.currentTurns());
    download(stateToFile(this.state), `${slug(frameworkTitle(this.state.framework))}-state.json`, 'application/json');
  }

  // ---- running --------------------------------------------------------------------------------

  job(): AnalyseJob {
    const s = this.state;
    const framework = checkFramework(frameworkOf(s.framework));
    checkCells(s.cells);
    parseBoundary(s.bc);
    // with classes on, the self-stresses come localised and classified too
    return { framework, cells: [s.cells[0], s.cells[1]], bc: s.bc, tolerance: s.tolerance, solver: s.solver, window: s.window, strip: s.strip, stresses: s.stresses, classify: s.classify, classifyStresses: s.classify };
  }

  run(): void {
    clearTimeout(this.autoTimer);
    this.autoPending = false;
    this.view.hideGuard();
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
      if (!this.result) this.view.setEmpty('No result yet: see the message above, change the settings and press Run.');
      return;
    }
    const seq = ++this.runSeq;
    const snapshot = cloneState(this.state);
    this.message('run', null);
    const started = performance.now();
    this.status = { kind: 'running', started, fraction: 0, stage: 'starting', showProgress: false };
    this.view.statusChanged();
    clearTimeout(this.progressTimer);
    this.progressTimer = window.setTimeout(() => {
      if (this.status.kind === 'running' && seq === this.runSeq) {
        this.status.showProgress = true;
        this.view.statusChanged();
      }
    }, 500);
    this.client
      .analyse(job, (fraction, stage) => {
        if (seq !== this.runSeq || this.status.kind !== 'running') return;
        // progress only moves forward: a stage that restarts its own count does not move it back
        if (fraction < this.status.fraction) return;
        this.status.fraction = fraction;
        this.status.stage = stage;
        if (this.status.showProgress) this.view.statusChanged();
      })
      .then((result) => {
        if (seq !== this.runSeq) return;
        clearTimeout(this.progressTimer);
        this.status = { kind: 'done', ms: performance.now() - started };
        this.onResultArrived(result, snapshot);
      })
      .catch((e: unknown) => {
        if (seq !== this.runSeq) return;
        clearTimeout(this.progressTimer);
        this.status = { kind: 'idle' };
        this.pendingView = null;
        this.reportError('run', e);
        if (!this.result) this.view.setEmpty('No result yet: see the message above, change the settings and press Run.');
        this.view.statusChanged();
        this.view.settingsShown();
      });
  }

  cancelRun(): void {
    void this.client.cancelAnalysis();
  }

  private onResultArrived(result: AnalyseResult, snapshot: AppState): void {
    this.result = result;
    this.resultState = snapshot;
    this.view.resultShown(result);
    for (const f of this.resultListeners) f();
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
      this.view.viewShown(true);
    }
    this.view.countsShown();
    const view = this.state.view;
    const nModes = result.modes.length;
    const nStress = result.stresses.length;
    if (view.show === 'stress' && nStress > 0) this.selectStress(Math.min(view.stress, nStress - 1), view.stress >= nStress ? `Self-stress ${view.stress} does not exist (there are ${nStress}); showing ${nStress - 1}.` : null);
    else if (nModes > 0) this.selectFlex(Math.min(view.flex, nModes - 1), view.flex >= nModes ? `Flex ${view.flex} does not exist in this list (there are ${nModes}); showing flex ${nModes - 1}.` : null);
    else this.selectNone();
  }

  // ---- selection and animation ------------------------------------------------------------------

  selectFlex(i: number, note: string | null = null): void {
    const r = this.result;
    if (!r || i < 0 || i >= r.modes.length) return;
    this.state.view.show = 'flex';
    this.state.view.flex = i;
    this.message('selection', note ? { kind: 'info', title: note } : null);
    this.view.selectionShown();
    this.syncHash();
  }

  selectStress(i: number, note: string | null = null): void {
    const r = this.result;
    if (!r || i < 0 || i >= r.stresses.length) return;
    this.state.view.show = 'stress';
    this.state.view.stress = i;
    this.message('selection', note ? { kind: 'info', title: note } : null);
    this.view.selectionShown();
    this.syncHash();
  }

  private selectNone(): void {
    this.message('selection', null);
    this.view.selectionShown();
  }

  /** Move the selection by ±1 in the list being shown. */
  stepSelection(delta: number): void {
    const r = this.result;
    if (!r) return;
    const v = this.state.view;
    if (v.show === 'stress' && r.stresses.length) this.selectStress(Math.max(0, Math.min(r.stresses.length - 1, v.stress + delta)));
    else if (r.modes.length) this.selectFlex(Math.max(0, Math.min(r.modes.length - 1, v.flex + delta)));
    this.view.focusSelection();
  }

  togglePlay(): void {
    this.state.view.playing = !this.state.view.playing;
    if (!this.state.view.playing) this.state.view.phase = roundTurns(this.view.currentTurns());
    this.view.playShown();
    this.syncHash();
  }

  stepPhase(direction: number): void {
    if (this.state.view.playing) this.togglePlay();
    this.state.view.phase = roundTurns(this.view.stepStage(direction));
    this.view.phaseShown();
    this.syncHash();
  }

  setRecipe(r: MotionRecipe): void {
    this.recipe = { ...r };
    this.view.selectionShown();
  }

  drawnMotion(): Motion | null {
    const r = this.result;
    const v = this.state.view;
    if (!r || v.show === 'stress' || !r.modes[v.flex]) return null;
    return drawnMotion(r, v.flex, this.recipe) ?? { re: r.modes[v.flex].re, im: r.modes[v.flex].im };
  }

  /** The stage reports its phase while playing. */
  phaseReported(turns: number): void {
    this.state.view.phase = roundTurns(turns);
  }

  /** The stage was panned or zoomed. */
  viewMoved(zoom: number, centre: [number, number] | null): void {
    this.state.view.zoom = round(zoom, 4);
    this.state.view.centre = centre ? [round(centre[0], 4), round(centre[1], 4)] : null;
    this.syncHash();
  }
}

/** How many settings changes of this app lie behind the current history entry. */
function undoDepth(): number {
  const d = (history.state as { shimmyDepth?: unknown } | null)?.shimmyDepth;
  return typeof d === 'number' ? d : 0;
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
