/**
 * What a panel may use of the app: read the state and the result, propose a change, run or
 * cancel, report a message or an error, and subscribe to new results. Panels import this
 * interface (as a type) and never app.ts or controller.ts; the controller implements it.
 */
import type { TooLargeError } from '../errors.js';
import type { RunEstimate } from '../flex/estimate.js';
import type { AnalyseResult } from '../worker/protocol.js';
import type { ComputeClient } from './client.js';
import type { Motion, MotionRecipe } from './export/compose.js';
import type { Message } from './panels/messages.js';
import type { SceneModel, Vec } from './stage/scene.js';
import type { AppState, FrameworkSource } from './state.js';

/** What the size check says about the current settings. */
export type SizeVerdict = { kind: 'ok'; estimate: RunEstimate } | { kind: 'refused'; error: TooLargeError } | { kind: 'invalid' };

export type RunStatus =
  | { kind: 'idle' }
  | { kind: 'running'; started: number; fraction: number; stage: string; showProgress: boolean }
  | { kind: 'done'; ms: number };

/** Everything a figure export needs: the result on show, its drawing model and the stage's view. */
export interface FigureSource {
  result: AnalyseResult;
  /** The settings that produced `result`. */
  resultState: AppState;
  /** The current settings (the view: selection, amplitude, arrows …). */
  state: AppState;
  model: SceneModel;
  /** Phase in turns, zoom and centre as on the stage now. */
  turns: number;
  zoom: number;
  centre: Vec | null;
  /** Stage size in css px. */
  size: [number, number];
}

export interface Host {
  // ---- read
  readonly state: AppState;
  readonly result: AnalyseResult | null;
  readonly resultState: AppState | null;
  readonly status: RunStatus;
  /** Run automatically after a settings change (small problems). */
  autoRun: boolean;
  /** The worker channels (phase map, sweep and edges run on their own). */
  readonly client: ComputeClient;
  sizeVerdict(): SizeVerdict;
  estimateDof(): number;
  /** The settings differ from those of the result on show. */
  isStale(): boolean;
  shareUrl(): string;
  figureSource(): FigureSource | null;
  /** How the drawn flex is made (superposition, rigid motions removed); not part of the state file. */
  readonly recipe: MotionRecipe;
  /** The flex as drawn now (after the recipe), or null when a self-stress or nothing is shown. */
  drawnMotion(): Motion | null;

  // ---- propose a change (panels change `state` in place, then say which kind)
  /** A compute setting changed: estimate, stale note, history, automatic run. */
  settingsChanged(): void;
  /** A view setting changed (state.view): the stage follows, the link too. */
  viewChanged(): void;
  /** An edit held by `[data-hold-run]` (N1 and N2) is finished. */
  commitSettings(): void;
  setFramework(src: FrameworkSource): void;
  /** Apply a whole state and run it; `push` adds a history entry. */
  applyState(s: AppState, push?: boolean): void;
  /** Write the state into the URL (a view change, no history entry). */
  syncHash(push?: boolean): void;
  selectFlex(i: number, note?: string | null): void;
  selectStress(i: number, note?: string | null): void;
  togglePlay(): void;
  stepPhase(direction: number): void;
  setRecipe(r: MotionRecipe): void;

  // ---- run and cancel
  run(): void;
  cancelRun(): void;

  // ---- messages
  message(source: string, m: Message | null): void;
  reportError(source: string, e: unknown, context?: string): void;

  // ---- files and dialogs
  openFile(file: File): Promise<void>;
  openText(text: string, fileName: string): void;
  saveFramework(): void;
  exportState(): void;
  openAbout(): void;

  // ---- subscribe
  /** Called after each new result is on show; returns the unsubscribe function. */
  onResult(listener: () => void): () => void;
}
