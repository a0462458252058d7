/**
 * The helper thread in Node (worker_threads): started by a shell (the CLI) and installed for the
 * core's split kernels (helper.ts). It takes work only once its script has loaded; until then,
 * and after it stops, every kernel runs on the calling thread. The thread does not keep the
 * process alive.
 */
import { existsSync } from 'node:fs';
import { createRequire } from 'node:module';
import { availableParallelism } from 'node:os';
import { fileURLToPath } from 'node:url';
import type { MessagePort, Worker } from 'node:worker_threads';
import { chunksDone, claimChunks, installHelperThread, type ChunkKernel, type HelperThread } from './helper.js';
import { KERNELS, type KernelName } from './kernels.js';
import type { KernelMessage, ThreadData } from './kernel-thread.js';

/**
 * node:worker_threads, loaded when the thread starts: loading it costs ~3 ms of every command's
 * start-up, and the CLI's lazy thread never starts in a count.
 */
function workerThreads(): typeof import('node:worker_threads') {
  return createRequire(import.meta.url)('node:worker_threads') as typeof import('node:worker_threads');
}

// Held in variables so that bundlers leave these URLs alone.
const BUILT_SCRIPT = './kernel-thread.js';
const SOURCE_SCRIPT = './source-thread.mjs';

/** How long the waiting thread sleeps between checks that the helper thread still runs (ms). */
const CHECK_MS = 50;

/**
 * A helper thread that computes no chunk for this long (ms) is taken for stuck. On Linux a thread
 * that has ended is seen at once (its /proc entry goes), so this rule matters only elsewhere; it
 * is long because one chunk of a very large kernel may legitimately take minutes.
 */
const STALL_MS = 30 * 60_000;

/** The thread's script: kernel-thread.ts through tsx from the sources, else the compiled file beside this one. */
function threadScript(): URL {
  const here = import.meta.url;
  // tsx may add a query to the URL; the path tells sources from compiled code
  if (new URL(here).pathname.endsWith('.ts')) return new URL(SOURCE_SCRIPT, here);
  const built = new URL(BUILT_SCRIPT, here);
  if (!existsSync(fileURLToPath(built))) {
    throw new Error(`the helper thread's script ${fileURLToPath(built)} is missing; rebuild with npm run build:cli (or npm run build:lib)`);
  }
  return built;
}

/** True when the thread with this Linux thread id (0: unknown) is known to have ended. */
function threadGone(tid: number): boolean {
  return tid > 0 && !existsSync(`/proc/self/task/${tid}`);
}

/** The number of threads the environment variable SHIMMY_THREADS asks for (1 or 2; default: 2 when two cores are available). */
export function threadsWanted(value: string | undefined): 1 | 2 {
  if (value === undefined || value === '') return availableParallelism() >= 2 ? 2 : 1;
  if (value === '1' || value === '2') return Number(value) as 1 | 2;
  throw new RangeError(`SHIMMY_THREADS must be 1 (compute on one thread) or 2 (split the large kernels over two), got "${value}"`);
}

export interface RunningHelper {
  thread: HelperThread;
  /** Kernels the thread has taken a share of so far. */
  readonly tasks: number;
  /** Resolves once the thread takes work (rejects if it has not within timeoutMs, or stopped). */
  ready(timeoutMs?: number): Promise<void>;
  /** Uninstall the thread (if it is the installed one) and end it. */
  stop(): Promise<void>;
}

/**
 * Install the helper thread. With `lazy` (the CLI's choice) the thread starts at the first kernel
 * large enough to split, which itself runs on the calling thread: commands that never split a
 * kernel (a sparse count) pay nothing for it. A thread that ends (or computes nothing for
 * `stallMs`) while a kernel waits for it is taken out of use: the chunks it never claimed are
 * computed here and the call goes on, unless it left a chunk unfinished (that one may be half
 * written): then the call throws, rather than wait for ever. `script` replaces the thread's
 * script (tests).
 */
export function startHelperThread(options: { lazy?: boolean; script?: URL; stallMs?: number } = {}): RunningHelper {
  const control = new Int32Array(new SharedArrayBuffer(12));
  const stallMs = options.stallMs ?? STALL_MS;
  // the thread's error messages come back on port1 (made with the thread)
  let port1: MessagePort | null = null;
  let worker: Worker | null = null;
  let stopped = false;
  let running = false;
  let tasks = 0;
  // the kernel being run by the thread: its counter tells which chunks are done
  let job: { name: KernelName; args: readonly unknown[]; counter: Int32Array; chunks: number } | null = null;
  const launch = (): Worker => {
    if (worker) return worker;
    const { MessageChannel, Worker } = workerThreads();
    const channel = new MessageChannel();
    port1 = channel.port1;
    port1.unref();
    const data: ThreadData = { control, replies: channel.port2 };
    const w = new Worker(options.script ?? threadScript(), { workerData: data, transferList: [channel.port2] });
    w.unref();
    w.on('error', () => {
      stopped = true;
    });
    w.on('exit', () => {
      stopped = true;
    });
    worker = w;
    return w;
  };
  if (!options.lazy) launch();
  const thread: HelperThread = {
    start(name: KernelName, args: readonly unknown[], counter: Int32Array, chunks: number): boolean {
      if (stopped || running) return false;
      const w = launch();
      if (Atomics.load(control, 1) !== 1) return false;
      Atomics.store(control, 0, 0);
      w.postMessage({ name, args: [...args], counter, chunks } satisfies KernelMessage);
      running = true;
      job = { name, args, counter, chunks };
      tasks++;
      return true;
    },
    prepare(): void {
      if (!stopped) launch();
    },
    finish(): void {
      if (!running) return;
      // An ended thread never sets the control word, and this thread's event loop (which would
      // hear of its exit) is blocked here: wait in short slices and look between them.
      let done = -1;
      let since = Date.now();
      while (Atomics.load(control, 0) === 0) {
        if (Atomics.wait(control, 0, 0, CHECK_MS) !== 'timed-out') continue;
        const now = chunksDone(job!.counter, job!.chunks);
        if (now !== done) [done, since] = [now, Date.now()];
        const gone = threadGone(Atomics.load(control, 2));
        if (!gone && Date.now() - since < stallMs) continue;
        // it will never report: take it out of use, compute here the chunks nobody claimed
        // (a chunk it claimed and left unfinished may be half written: that one cannot be redone)
        running = false;
        stopped = true;
        void worker?.terminate().catch(() => undefined);
        const { name, args, counter, chunks } = job!;
        claimChunks(KERNELS[name] as ChunkKernel<unknown[]>, args, counter, chunks);
        const missing = chunks - chunksDone(counter, chunks);
        const what = gone ? 'ended' : `computed nothing for ${Math.round(stallMs / 1000)} s`;
        if (missing === 0) {
          process.emitWarning(`the helper thread ${what} during kernel ${name}; every chunk was computed on this thread, and the run goes on on one thread`);
          return;
        }
        throw new Error(
          `the helper thread ${what} during kernel ${name} with ${missing} of its ${chunks} chunks not computed, so the result would be incomplete; run again, or with SHIMMY_THREADS=1 to compute on one thread`,
        );
      }
      running = false;
      if (Atomics.load(control, 0) === 2) {
        const reply = port1 ? workerThreads().receiveMessageOnPort(port1) : undefined;
        throw new Error(`the helper thread failed in a kernel: ${reply ? String(reply.message) : 'no message'}`);
      }
    },
  };
  installHelperThread(thread);
  return {
    thread,
    get tasks() {
      return tasks;
    },
    async ready(timeoutMs = 30_000): Promise<void> {
      launch();
      const t0 = Date.now();
      while (Atomics.load(control, 1) !== 1) {
        if (stopped) throw new Error('the helper thread stopped before it took work');
        if (Date.now() - t0 > timeoutMs) throw new Error(`the helper thread did not start within ${timeoutMs} ms`);
        await new Promise((r) => setTimeout(r, 10));
      }
    },
    async stop(): Promise<void> {
      stopped = true;
      installHelperThread(null);
      port1?.close();
      if (worker) await worker.terminate();
    },
  };
}
