/**
 * The helper thread's script (started by node-thread.ts): claims chunks of each kernel it is sent
 * on the shared arrays it is given, then sets the control word (1 done, 2 failed, with the error on the
 * reply port) and wakes the waiting thread.
 */
import { readlinkSync } from 'node:fs';
import { parentPort, workerData, type MessagePort } from 'node:worker_threads';
import { claimChunks, type ChunkKernel } from './helper.js';
import { KERNELS, type KernelName } from './kernels.js';

export interface KernelMessage {
  name: KernelName;
  args: unknown[];
  /** Chunks are claimed from counter[0] and marked done in counter[1 + c] (helper.ts, claimChunks). */
  counter: Int32Array;
  chunks: number;
}

export interface ThreadData {
  /**
   * [0]: 0 running, 1 done, 2 failed; [1]: 1 once this thread takes work; [2]: this thread's id in
   * the operating system where it can be read (Linux), else 0.
   */
  control: Int32Array;
  replies: MessagePort;
}

if (!parentPort) throw new Error('src/linalg/parallel/kernel-thread.ts runs only as a worker thread');
const { control, replies } = workerData as ThreadData;
parentPort.on('message', (m: KernelMessage) => {
  let state = 1;
  try {
    claimChunks(KERNELS[m.name] as ChunkKernel<unknown[]>, m.args, m.counter, m.chunks);
  } catch (e) {
    state = 2;
    replies.postMessage(e instanceof Error ? `${e.message}\n${e.stack ?? ''}` : String(e));
  }
  Atomics.store(control, 0, state);
  Atomics.notify(control, 0);
});
Atomics.store(control, 2, osThreadId());
Atomics.store(control, 1, 1);

/**
 * This thread's id on Linux (/proc/thread-self names pid/task/tid), 0 elsewhere: the waiting
 * thread looks for /proc/self/task/<tid> to tell whether this one still runs (node-thread.ts).
 */
function osThreadId(): number {
  try {
    const tid = Number(readlinkSync('/proc/thread-self').split('/').pop());
    return Number.isInteger(tid) && tid > 0 ? tid : 0;
  } catch {
    return 0;
  }
}
