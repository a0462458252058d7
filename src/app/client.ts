/**
 * The app's side of the worker protocol: one worker per channel (analysis, spectrum), run ids,
 * progress, and cancellation. A new run on a channel supersedes the running one at once: the
 * worker is terminated and respawned, because a dense SVD in progress cannot be interrupted.
 * An explicit cancel first asks the worker to stop at its next checkpoint and terminates it if
 * it has not stopped within CANCEL_GRACE_MS.
 */
import type {
  AnalyseJob,
  AnalyseResult,
  EdgesData,
  EdgesJob,
  PhaseMapData,
  PhaseMapJob,
  PrestressData,
  PrestressJob,
  StrainData,
  StrainJob,
  SweepData,
  SweepJob,
  WorkerError,
  WorkerFeatures,
  WorkerRequest,
  WorkerResponse,
} from '../worker/protocol.js';

export const CANCEL_GRACE_MS = 200;

export class RunError extends Error {
  readonly error: WorkerError;
  constructor(error: WorkerError) {
    super(error.message);
    this.name = 'RunError';
    this.error = error;
  }
}

export type ProgressListener = (fraction: number, stage: string) => void;

interface Pending {
  id: number;
  resolve: (v: unknown) => void;
  reject: (e: RunError) => void;
  onProgress?: ProgressListener;
}

type Job =
  | { type: 'analyse'; job: AnalyseJob }
  | { type: 'phasemap'; job: PhaseMapJob }
  | { type: 'sweep'; job: SweepJob }
  | { type: 'edges'; job: EdgesJob }
  | { type: 'strain'; job: StrainJob }
  | { type: 'prestress'; job: PrestressJob };

function spawn(): Worker {
  return new Worker(new URL('../worker/worker.ts', import.meta.url), { type: 'module', name: 'shimmy-compute' });
}

class Channel {
  private worker: Worker | null = null;
  private pending: Pending | null = null;
  private features: Promise<WorkerFeatures> | null = null;
  private resolveFeatures: ((f: WorkerFeatures) => void) | null = null;
  private static nextId = 1;

  private ensure(): Worker {
    if (this.worker) return this.worker;
    const w = spawn();
    this.features = new Promise((res) => (this.resolveFeatures = res));
    w.onmessage = (ev: MessageEvent<WorkerResponse>) => this.receive(ev.data);
    w.onerror = (ev) => {
      ev.preventDefault();
      this.fail({ kind: 'internal', message: `The compute worker failed: ${ev.message || 'it could not be started'}.` });
      this.kill();
    };
    this.worker = w;
    return w;
  }

  featureList(): Promise<WorkerFeatures> {
    this.ensure();
    return this.features!;
  }

  private receive(msg: WorkerResponse): void {
    if (msg.type === 'ready') {
      this.resolveFeatures?.(msg.features);
      return;
    }
    const p = this.pending;
    if (!p || msg.id !== p.id) return; // an answer to a run that was superseded
    if (msg.type === 'progress') {
      p.onProgress?.(msg.fraction, msg.stage);
      return;
    }
    this.pending = null;
    if (msg.type === 'error') p.reject(new RunError(msg.error));
    else p.resolve(msg.result);
  }

  private fail(error: WorkerError): void {
    const p = this.pending;
    this.pending = null;
    p?.reject(new RunError(error));
  }

  private kill(): void {
    this.worker?.terminate();
    this.worker = null;
  }

  get busy(): boolean {
    return this.pending !== null;
  }

  run<T>(job: Job, onProgress?: ProgressListener): Promise<T> {
    if (this.pending) {
      this.fail({ kind: 'cancelled', message: 'Superseded by a newer run.' });
      this.kill();
    }
    const w = this.ensure();
    const id = Channel.nextId++;
    return new Promise<T>((resolve, reject) => {
      this.pending = { id, resolve: resolve as (v: unknown) => void, reject, onProgress };
      const req = { ...job, id } as WorkerRequest;
      w.postMessage(req);
    });
  }

  /** Stops the running job (if any); resolves when the channel is idle again. */
  cancel(): Promise<void> {
    const p = this.pending;
    if (!p || !this.worker) return Promise.resolve();
    this.worker.postMessage({ type: 'cancel', id: p.id } satisfies WorkerRequest);
    return new Promise((resolve) => {
      const timer = setTimeout(() => {
        if (this.pending === p) {
          this.fail({ kind: 'cancelled', message: 'The computation was cancelled.' });
          this.kill();
        }
        resolve();
      }, CANCEL_GRACE_MS);
      const orig = p.reject;
      p.reject = (e) => {
        clearTimeout(timer);
        orig(e);
        resolve();
      };
    });
  }

  dispose(): void {
    this.fail({ kind: 'cancelled', message: 'The app was closed.' });
    this.kill();
  }
}

export class ComputeClient {
  private analysis = new Channel();
  private spectrum = new Channel();
  /** Edge physics runs beside a phase map or a sweep (its worker starts on the first request). */
  private edgeChannel = new Channel();
  /** The strain view and the prestress check each run on their own (workers start on the first request). */
  private strainChannel = new Channel();
  private prestressChannel = new Channel();

  features(): Promise<WorkerFeatures> {
    return this.analysis.featureList();
  }
  analyse(job: AnalyseJob, onProgress?: ProgressListener): Promise<AnalyseResult> {
    return this.analysis.run({ type: 'analyse', job }, onProgress);
  }
  phaseMap(job: PhaseMapJob, onProgress?: ProgressListener): Promise<PhaseMapData> {
    return this.spectrum.run({ type: 'phasemap', job }, onProgress);
  }
  sweep(job: SweepJob, onProgress?: ProgressListener): Promise<SweepData> {
    return this.spectrum.run({ type: 'sweep', job }, onProgress);
  }
  edges(job: EdgesJob, onProgress?: ProgressListener): Promise<EdgesData> {
    return this.edgeChannel.run({ type: 'edges', job }, onProgress);
  }
  cancelEdges(): Promise<void> {
    return this.edgeChannel.cancel();
  }
  strain(job: StrainJob, onProgress?: ProgressListener): Promise<StrainData> {
    return this.strainChannel.run({ type: 'strain', job }, onProgress);
  }
  cancelStrain(): Promise<void> {
    return this.strainChannel.cancel();
  }
  prestress(job: PrestressJob, onProgress?: ProgressListener): Promise<PrestressData> {
    return this.prestressChannel.run({ type: 'prestress', job }, onProgress);
  }
  cancelPrestress(): Promise<void> {
    return this.prestressChannel.cancel();
  }
  get analysing(): boolean {
    return this.analysis.busy;
  }
  cancelAnalysis(): Promise<void> {
    return this.analysis.cancel();
  }
  cancelSpectrum(): Promise<void> {
    return this.spectrum.cancel();
  }
  dispose(): void {
    this.analysis.dispose();
    this.spectrum.dispose();
    this.edgeChannel.dispose();
    this.strainChannel.dispose();
    this.prestressChannel.dispose();
  }
}
