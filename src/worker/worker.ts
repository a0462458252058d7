/**
 * The compute worker: receives WorkerRequest messages, runs the core, answers with
 * WorkerResponse messages. Between stages it yields to the event loop so that a `cancel`
 * message can abort the run; inside one long core call (a dense SVD) it cannot, and the app
 * terminates and respawns the worker instead.
 */
import { analyse, features, runEdges, runPhaseMap, runPrestress, runStrain, runSweep, toWorkerError, type Hooks } from './compute.js';
import { transferablesOf, type WorkerRequest, type WorkerResponse } from './protocol.js';

interface Port {
  postMessage(message: WorkerResponse, transfer?: Transferable[]): void;
  onmessage: ((ev: MessageEvent<WorkerRequest>) => void) | null;
}
const port = self as unknown as Port;
const running = new Map<number, AbortController>();

const yieldNow = () => new Promise<void>((resolve) => setTimeout(resolve, 0));

function hooksFor(id: number, controller: AbortController): Hooks {
  let last = 0;
  return {
    signal: controller.signal,
    checkpoint: yieldNow,
    onProgress(fraction, stage) {
      const now = performance.now();
      // at most ~20 progress messages a second, but always the first and the last
      if (fraction > 0 && fraction < 1 && now - last < 50) return;
      last = now;
      port.postMessage({ type: 'progress', id, fraction, stage });
    },
  };
}

port.onmessage = (ev) => {
  const req = ev.data;
  if (req.type === 'cancel') {
    running.get(req.id)?.abort();
    return;
  }
  const controller = new AbortController();
  running.set(req.id, controller);
  const hooks = hooksFor(req.id, controller);
  const work = async () => {
    try {
      if (req.type === 'analyse') {
        const result = await analyse(req.job, hooks);
        port.postMessage({ type: 'result', id: req.id, result }, transferablesOf(result));
      } else if (req.type === 'phasemap') {
        const result = await runPhaseMap(req.job, hooks);
        port.postMessage({ type: 'phasemap-result', id: req.id, result }, [result.sigma1.buffer as ArrayBuffer, result.kernel.buffer as ArrayBuffer]);
      } else if (req.type === 'sweep') {
        const result = await runSweep(req.job, hooks);
        port.postMessage({ type: 'sweep-result', id: req.id, result });
      } else if (req.type === 'edges') {
        port.postMessage({ type: 'edges-result', id: req.id, result: await runEdges(req.job, hooks) });
      } else if (req.type === 'strain') {
        const result = await runStrain(req.job, hooks);
        port.postMessage({ type: 'strain-result', id: req.id, result }, transferablesOf({ geometry: result.geometry, modes: [], rigid: [], stresses: [] }));
      } else if (req.type === 'prestress') {
        port.postMessage({ type: 'prestress-result', id: req.id, result: await runPrestress(req.job, hooks) });
      }
    } catch (e) {
      port.postMessage({ type: 'error', id: req.id, error: toWorkerError(e) });
    } finally {
      running.delete(req.id);
    }
  };
  void work();
};

port.postMessage({ type: 'ready', features: features() });
