/**
 * A second thread for the large kernels (Gram matrices, block products, block solves), behind an
 * interface the core can use from any environment.
 *
 * The core never starts a thread itself: a shell installs one (the CLI does, in Node, through
 * node-thread.ts), and without one every kernel runs here. A kernel is cut into chunks that write
 * disjoint parts of its output; each output entry is computed within one chunk, in the order of
 * operations of the single-thread code, so results are bit for bit the same whichever thread runs
 * which chunk, and with one thread or two.
 *
 * The other thread reads and writes the caller's arrays in place, so every typed array it is given
 * must live on a SharedArrayBuffer: `sharedFloats` allocates one when a thread is installed. A
 * kernel whose arrays are not all shared simply runs here.
 */
import type { KernelName } from './kernels.js';

/** The other thread, as the shell provides it. */
export interface HelperThread {
  /**
   * Start claiming chunks of kernel `name` on `args` on the other thread (claimChunks with this
   * counter, made by chunkCounter). False when it cannot take work now (not started yet, or
   * stopped); then nothing was started.
   */
  start(name: KernelName, args: readonly unknown[], counter: Int32Array, chunks: number): boolean;
  /**
   * Block until the started kernel has finished; rethrows its error. Throws as well when the
   * other thread ended before it finished its chunks (they would be missing from the output).
   */
  finish(): void;
  /** Get ready to take work soon (a thread started lazily starts now). */
  prepare?(): void;
}

let installed: HelperThread | null = null;

/** Install (or, with null, remove) the thread the kernels may use. */
export function installHelperThread(h: HelperThread | null): void {
  installed = h;
}

export function helperThreadInstalled(): boolean {
  return installed !== null;
}

/** Large kernels are coming (e.g. a classification at scale): a lazily started thread starts now, so that it is ready for them. */
export function prepareHelperThread(): void {
  installed?.prepare?.();
}

/** Vectors shorter than this are not worth sharing (their kernels are too small to split). */
export const SHARE_MIN = 4096;

/**
 * A zeroed Float64Array of length n, on a SharedArrayBuffer when a thread is installed and the
 * array is at least `min` long (small outputs of large kernels, such as k×k Gram matrices, pass 0).
 */
export function sharedFloats(n: number, min = SHARE_MIN): Float64Array {
  return installed !== null && n >= min ? new Float64Array(new SharedArrayBuffer(8 * n)) : new Float64Array(n);
}

/**
 * `count` zeroed columns of length n as views of one buffer (shared when `shared` and a thread is
 * installed). One large allocation is mapped fresh and zero-filled lazily: a page is faulted in by
 * the thread that first touches it (a kernel's chunks, on both threads), where columns allocated
 * one by one came from recycled heap memory that the allocator cleared on the calling thread. The
 * columns never overlap; they share only the buffer, which stays alive while any column does.
 */
export function floatColumns(count: number, n: number, shared: boolean): Float64Array[] {
  const words = count * n;
  const buffer = shared && installed !== null && n >= SHARE_MIN ? new SharedArrayBuffer(8 * words) : new ArrayBuffer(8 * words);
  return Array.from({ length: count }, (_, j) => new Float64Array(buffer, 8 * j * n, n));
}

/** `a` itself when it is shared or no thread is installed; else a shared copy (for small inputs such as k×k weights). */
export function shareable<T extends Float64Array | Int32Array>(a: T): T {
  if (!installed || a.buffer instanceof SharedArrayBuffer) return a;
  const c = (a instanceof Float64Array ? new Float64Array(new SharedArrayBuffer(8 * a.length)) : new Int32Array(new SharedArrayBuffer(4 * a.length))) as T;
  c.set(a);
  return c;
}

/**
 * Kernels of fewer multiply-adds than this run whole on the calling thread: below it, handing
 * work to the helper thread (about 0.1 ms) gains little.
 */
export const SPLIT_WORK = 2e7;

/**
 * Passes over memory (scaling columns, residual norms, first touches) of fewer entries than this
 * run whole on the calling thread: one multiply-add per entry, so the threshold is lower.
 */
export const SPLIT_ENTRIES = 2e6;

/** Chunks of a split kernel: enough that the faster thread can take more, each still long. */
export const CHUNKS = 8;

/**
 * True when every typed array in the arguments (looking into plain arrays and plain objects, two
 * levels deep) is on a SharedArrayBuffer: anything else would reach the other thread as a copy.
 */
function allShared(x: unknown, depth = 0): boolean {
  if (ArrayBuffer.isView(x)) return x.buffer instanceof SharedArrayBuffer;
  if (x === null || typeof x !== 'object') return true;
  if (depth > 2) return false;
  const values = Array.isArray(x) ? x : Object.values(x);
  for (const v of values) if (!allShared(v, depth + 1)) return false;
  return true;
}

/** A kernel that computes chunk `chunk` of `chunks` of its outputs (each output entry in one chunk). */
export type ChunkKernel<A extends unknown[]> = (...args: [...A, number, number]) => void;

/**
 * kernel(...args, c, chunks) for every chunk c. With a thread installed and every array in args
 * shared, both threads claim chunks in turn from a shared counter until none is left, so the
 * faster one takes more; otherwise chunk after chunk here. The chunks must write disjoint outputs
 * and read nothing another chunk writes. `name` is the kernel's key in kernels.ts.
 */
export function inChunks<A extends unknown[]>(name: KernelName, kernel: ChunkKernel<A>, args: A, chunks: number): void {
  const h = installed;
  if (chunks > 1 && h && allShared(args)) {
    const counter = chunkCounter(chunks);
    if (h.start(name, args, counter, chunks)) {
      try {
        claimChunks(kernel as ChunkKernel<unknown[]>, args, counter, chunks);
      } finally {
        // wait for the other thread even when this one failed: it writes into the same arrays
        h.finish();
      }
      return;
    }
  }
  for (let c = 0; c < chunks; c++) kernel(...args, c, chunks);
}

/**
 * The shared counter of a split kernel: [0] the next chunk to claim, then one word per chunk, set
 * to 1 once that chunk is computed (whichever thread computed it).
 */
export function chunkCounter(chunks: number): Int32Array {
  return new Int32Array(new SharedArrayBuffer(4 * (chunks + 1)));
}

/** Run the chunks not yet claimed from `counter`, one at a time, marking each when done (both threads run this). */
export function claimChunks(kernel: ChunkKernel<unknown[]>, args: readonly unknown[], counter: Int32Array, chunks: number): void {
  for (let c = Atomics.add(counter, 0, 1); c < chunks; c = Atomics.add(counter, 0, 1)) {
    kernel(...args, c, chunks);
    Atomics.store(counter, 1 + c, 1);
  }
}

/** How many chunks of the counter's kernel are computed. */
export function chunksDone(counter: Int32Array, chunks: number): number {
  let done = 0;
  for (let c = 0; c < chunks; c++) done += Atomics.load(counter, 1 + c);
  return done;
}

/** The first index of chunk c of `chunks` over 0 … n−1 (a multiple of `align` except at n): equal lengths. */
export function chunkStart(n: number, c: number, chunks: number, align: number): number {
  if (c >= chunks) return n;
  return Math.min(n, align * Math.round((n * c) / chunks / align));
}

/**
 * The first row of chunk c of `chunks` over the rows of the upper triangle of a k×k matrix (a
 * multiple of `align` except at k), so that each chunk holds about the same number of entries:
 * rows a < t hold Σ (k − a) = t(2k + 1 − t)/2 of the k(k + 1)/2.
 */
export function triangleChunkStart(k: number, c: number, chunks: number, align: number): number {
  if (c >= chunks) return k;
  const f = c / chunks;
  const b = 2 * k + 1;
  const t = (b - Math.sqrt(b * b - 4 * f * k * (k + 1))) / 2;
  return Math.min(k, align * Math.round(t / align));
}

/**
 * kernel(...args, 0, 1) on the other thread while `mine()` runs here, when a thread is installed
 * and every array in args is shared; otherwise kernel first, then mine, both here. The two must
 * write disjoint memory and read nothing the other writes.
 */
export function runBeside<A extends unknown[]>(name: KernelName, kernel: ChunkKernel<A>, args: A, mine: () => void): void {
  const h = installed;
  if (h && allShared(args)) {
    // the other thread claims the one chunk; this one never does
    const counter = chunkCounter(1);
    if (h.start(name, args, counter, 1)) {
      try {
        mine();
      } finally {
        h.finish();
      }
      return;
    }
  }
  kernel(...args, 0, 1);
  mine();
}

/**
 * Write a zero to every 4 kB page of the columns (which must hold zeros): the page faults of fresh
 * memory, taken on this thread so that another one can write the columns without them.
 */
export function touchPages(cols: Float64Array[], _chunk: number, _chunks: number): void {
  for (const x of cols) for (let i = 0; i < x.length; i += 512) x[i] = 0;
}
